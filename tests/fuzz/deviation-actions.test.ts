/**
 * Fuzzing the deviation actions (acknowledge, disposition, close; FUZZ_RUNS cases each, default
 * 1,000) and the query strings of the list endpoints (deviations, batches, heats; QUERY_RUNS cases
 * each, default 300: every parameter meets every kind of bad value many times over), with the checks
 * of tests/fuzz/ingest-payloads.test.ts.
 */
import fc from 'fast-check';
import { afterAll, describe, expect, it } from 'vitest';
import { BatchQuery, DeviationAcknowledge, DeviationClose, DeviationDisposition, DeviationQuery, HeatQuery } from '@ausline/contracts';
import { DeviationRepository } from '@ausline/db';
import { createBatch } from '../fixtures/austempering-plant.js';
import { startIngestWorld } from '../ingest-fixtures.js';
import { FUZZ_RUNS, FuzzClient, fuzzCases, judgeJson, judgeQuery, queryCases, runFuzz, WriteLog, type FuzzStats } from './support.js';

const QUERY_RUNS = Number(process.env.FUZZ_QUERY_RUNS ?? Math.min(FUZZ_RUNS, 300));
const world = await startIngestWorld('fuzz-deviations', { RATE_LIMIT_IP_PER_S: 0, RATE_LIMIT_KEY_PER_S: 0 } as object);
const client = new FuzzClient(world.api.url);
afterAll(() => client.close());
const prisma = world.db.prisma;

// Deviations to act on: one per action, opened the way the worker opens them.
const repository = new DeviationRepository(prisma);
async function openDeviation(rule: string): Promise<string> {
  const batch = await createBatch(prisma, world.plant);
  const change = await repository.openOrRefresh(
    { rule, severity: 'MAJOR', dedupKey: `${batch.id}:${rule}`, channelId: null, message: `${rule} on ${batch.code}`, details: {} },
    { batchId: batch.id, lineId: batch.lineId, productSpecId: world.plant.specId },
  );
  return change!.deviationId;
}
const toAcknowledge = await openDeviation('bath-band-excursion');
const toDisposition = await openDeviation('transfer-time');
const toClose = await openDeviation('hold-min');
const writes = await WriteLog.install(world.db.pool);

const TIMEOUT_MS = 600_000;

function report(name: string, stats: FuzzStats, runs = FUZZ_RUNS): void {
  console.log(`${name}: ${stats.cases} cases in ${Math.round(stats.ms)} ms (generating ${Math.round(stats.generateMs)} ms), replies ${JSON.stringify(stats.byStatus)}`);
  if (process.env.FUZZ_ONLY) return;
  expect(stats.cases).toBeGreaterThanOrEqual(runs);
}

describe('fuzzing deviation actions', () => {
  it('POST /v1/deviations/:id/acknowledge', { timeout: TIMEOUT_MS }, async () => {
    const valid = fc.record({ reason: fc.constantFrom('seen on the board', 'checking the thermocouple') }, { requiredKeys: [] });
    report('acknowledge', await runFuzz({ name: 'POST /v1/deviations/:id/acknowledge', client, writes, method: 'POST', path: `/v1/deviations/${toAcknowledge}/acknowledge`, headers: world.metallurgist.headers, cases: fuzzCases(valid), judge: (c) => judgeJson(DeviationAcknowledge, c.body) }));
  });

  it('POST /v1/deviations/:id/disposition', { timeout: TIMEOUT_MS }, async () => {
    const valid = fc.oneof(
      fc.record({ disposition: fc.constantFrom('USE_AS_IS', 'RETREAT', 'SCRAP'), reason: fc.constantFrom('hardness checked on 5 parts', 'retreat the load') }),
      fc.record({ disposition: fc.constant('CONCESSION'), reason: fc.constant('customer accepted'), dispositionRef: fc.constantFrom('PERMIT-2026-17', 'C-88') }),
    );
    report('disposition', await runFuzz({ name: 'POST /v1/deviations/:id/disposition', client, writes, method: 'POST', path: `/v1/deviations/${toDisposition}/disposition`, headers: world.quality.headers, cases: fuzzCases(valid), judge: (c) => judgeJson(DeviationDisposition, c.body) }));
  });

  it('POST /v1/deviations/:id/close', { timeout: TIMEOUT_MS }, async () => {
    const valid = fc.record({ reason: fc.constantFrom('parts retested, conforming', 'closed after review') });
    report('close', await runFuzz({ name: 'POST /v1/deviations/:id/close', client, writes, method: 'POST', path: `/v1/deviations/${toClose}/close`, headers: world.quality.headers, cases: fuzzCases(valid), judge: (c) => judgeJson(DeviationClose, c.body) }));
  });
});

describe('fuzzing list query strings', () => {
  const recent = fc.integer({ min: 1, max: 30 }).map((d) => new Date(Date.now() - d * 86_400_000).toISOString());
  const lists = [
    {
      name: 'GET /v1/deviations',
      path: '/v1/deviations',
      schema: DeviationQuery,
      valid: fc.record({ from: recent, status: fc.constantFrom('OPEN', 'OPEN,ACKNOWLEDGED'), severity: fc.constantFrom('MAJOR', 'MINOR,CRITICAL'), limit: fc.constantFrom('10', '500'), lineId: fc.constant(world.plant.lineId) }, { requiredKeys: [] }),
    },
    {
      name: 'GET /v1/batches',
      path: '/v1/batches',
      schema: BatchQuery,
      valid: fc.record({ status: fc.constantFrom('PLANNED', 'IN_BATH,DONE'), code: fc.constantFrom('LOAD-1', 'X'), stale: fc.constantFrom('true', 'false'), to: recent, limit: fc.constantFrom('1', '50') }, { requiredKeys: [] }),
    },
    {
      name: 'GET /v1/heats',
      path: '/v1/heats',
      schema: HeatQuery,
      valid: fc.record({ heatNumber: fc.constantFrom('H-1', 'H-24-0117'), material: fc.constantFrom('STEEL', 'DUCTILE_IRON'), limit: fc.constantFrom('5', '100') }, { requiredKeys: [] }),
    },
  ];
  for (const list of lists) {
    it(list.name, { timeout: TIMEOUT_MS }, async () => {
      const stats = await runFuzz({
        name: list.name,
        client,
        writes,
        method: 'GET',
        path: list.path,
        headers: world.metallurgist.headers,
        cases: queryCases(list.path, list.valid as fc.Arbitrary<Record<string, string>>),
        judge: (c) => judgeQuery(list.schema, c.path!),
        numRuns: QUERY_RUNS,
      });
      report(list.name, stats, QUERY_RUNS);
    });
  }
});
