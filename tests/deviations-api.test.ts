/**
 * GET /v1/deviations (filters, paging, total), GET /v1/deviations/:id (audit trail), and the people's
 * actions: acknowledge, disposition, close — wrong role 403, illegal transition 409 naming the current
 * status, every change in the append-only audit trail.
 */
import { describe, expect, it } from 'vitest';
import { DeviationRepository } from '@ausline/db';
import { createBatch, seedPlant } from './fixtures/austempering-plant.js';
import { startIngestWorld } from './ingest-fixtures.js';

const world = await startIngestWorld('deviations-api');
const { http, metallurgist, quality, admin } = world;
const prisma = world.db.prisma;
const repository = new DeviationRepository(prisma);

// Two lines, two specs; deviations opened by the worker's repository, then dated for the time filters.
const plantA = world.plant;
const plantB = await seedPlant(prisma);
const batchA1 = await createBatch(prisma, plantA);
const batchA2 = await createBatch(prisma, plantA);
const batchB1 = await createBatch(prisma, plantB);

const day = (d: number, h = 0) => new Date(Date.UTC(2026, 10, d, h));
interface Seed {
  batch: { id: string; lineId: string };
  specId: string;
  rule: string;
  severity: 'MINOR' | 'MAJOR' | 'CRITICAL';
  openedAt: Date;
}
const seeds: Seed[] = [
  { batch: batchA1, specId: plantA.specId, rule: 'bath-band-excursion', severity: 'MAJOR', openedAt: day(2, 8) },
  { batch: batchA1, specId: plantA.specId, rule: 'transfer-time', severity: 'CRITICAL', openedAt: day(2, 9) },
  { batch: batchA2, specId: plantA.specId, rule: 'channel-gap', severity: 'MINOR', openedAt: day(3, 8) },
  { batch: batchA2, specId: plantA.specId, rule: 'bath-band-excursion', severity: 'MAJOR', openedAt: day(4, 8) },
  { batch: batchB1, specId: plantB.specId, rule: 'bath-band-excursion', severity: 'CRITICAL', openedAt: day(5, 8) },
  { batch: batchB1, specId: plantB.specId, rule: 'hold-min', severity: 'MAJOR', openedAt: day(6, 8) },
];
const ids: string[] = [];
for (const s of seeds) {
  const change = await repository.openOrRefresh(
    { rule: s.rule, severity: s.severity, dedupKey: `${s.batch.id}:${s.rule}`, channelId: null, message: `${s.rule} on ${s.batch.id}`, details: { limit: 1 } },
    { batchId: s.batch.id, lineId: s.batch.lineId, productSpecId: s.specId },
  );
  ids.push(change!.deviationId);
  await prisma.deviation.update({ where: { id: change!.deviationId }, data: { openedAt: s.openedAt } });
}

async function listIds(query: string): Promise<{ ids: string[]; total: number }> {
  const reply = await http.get(`/v1/deviations${query}`, metallurgist.headers);
  expect(reply.status).toBe(200);
  return { ids: reply.body.items.map((d: { id: string }) => d.id), total: reply.body.total };
}

describe('GET /v1/deviations', () => {
  it('lists newest first with the total', async () => {
    const all = await listIds('');
    expect(all.ids).toEqual([...ids].reverse());
    expect(all.total).toBe(6);
  });

  it('filters by time range (from inclusive, to exclusive), line, batch, spec, severity, status and rule', async () => {
    expect(await listIds(`?from=${day(3, 8).toISOString()}&to=${day(5, 8).toISOString()}`)).toEqual({ ids: [ids[3], ids[2]], total: 2 });
    expect((await listIds(`?lineId=${plantB.lineId}`)).ids).toEqual([ids[5], ids[4]]);
    expect((await listIds(`?batchId=${batchA1.id}`)).ids).toEqual([ids[1], ids[0]]);
    expect((await listIds(`?productSpecId=${plantA.specId}`)).total).toBe(4);
    expect((await listIds('?severity=CRITICAL')).ids).toEqual([ids[4], ids[1]]);
    expect((await listIds('?severity=MINOR,CRITICAL')).total).toBe(3);
    expect((await listIds('?rule=bath-band-excursion')).ids).toEqual([ids[4], ids[3], ids[0]]);
    expect((await listIds(`?rule=bath-band-excursion&lineId=${plantA.lineId}&severity=MAJOR`)).ids).toEqual([ids[3], ids[0]]);
    expect((await listIds('?status=OPEN')).total).toBe(6);
    expect((await listIds('?status=CLOSED')).total).toBe(0);
  });

  it('pages with limit and cursor: every row once, in order, with the same total on every page', async () => {
    const seen: string[] = [];
    let cursor: string | null = null;
    do {
      const reply: { status: number; body: { items: Array<{ id: string }>; total: number; nextCursor: string | null } } = await http.get(
        `/v1/deviations?limit=4${cursor ? `&cursor=${cursor}` : ''}`,
        metallurgist.headers,
      );
      expect(reply.body.total).toBe(6);
      expect(reply.body.items.length).toBeLessThanOrEqual(4);
      seen.push(...reply.body.items.map((d) => d.id));
      cursor = reply.body.nextCursor;
    } while (cursor);
    expect(seen).toEqual([...ids].reverse());
  });

  it('rejects bad filters with 400 naming the query field', async () => {
    const cases: Array<[string, string]> = [
      ['?severity=HUGE', 'query.severity.0'],
      ['?status=OPEN,DONE', 'query.status.1'],
      ['?from=yesterday', 'query.from'],
      [`?from=${day(5).toISOString()}&to=${day(4).toISOString()}`, 'query.to'],
      ['?lineId=42', 'query.lineId'],
      ['?limit=501', 'query.limit'],
      ['?colour=red', 'query.colour'],
      ['?cursor=bm90LWEtY3Vyc29y', 'query.cursor'],
    ];
    for (const [query, path] of cases) {
      const reply = await http.get(`/v1/deviations${query}`, metallurgist.headers);
      expect(reply.status, query).toBe(400);
      expect(reply.body.issues[0].path, query).toBe(path);
    }
  });
});

describe('deviation actions', () => {
  it('acknowledge (METALLURGIST) -> disposition (QUALITY) -> close (QUALITY), all in the audit trail', async () => {
    const id = ids[0]!;
    const ack = await http.post(`/v1/deviations/${id}/acknowledge`, { reason: 'looking at the bath log' }, metallurgist.headers);
    expect(ack.status).toBe(200);
    expect(ack.body).toMatchObject({ status: 'ACKNOWLEDGED', acknowledgedById: metallurgist.id });

    // Acknowledging twice is not a no-op: the status says it has been done.
    const again = await http.post(`/v1/deviations/${id}/acknowledge`, {}, quality.headers);
    expect(again.status).toBe(409);
    expect(again.body.message).toMatch(/current status ACKNOWLEDGED/);

    // A metallurgist may not disposition; an admin may not act at all.
    expect((await http.post(`/v1/deviations/${id}/disposition`, { disposition: 'USE_AS_IS', reason: 'within drawing tolerance' }, metallurgist.headers)).status).toBe(403);
    expect((await http.post(`/v1/deviations/${id}/acknowledge`, {}, admin.headers)).status).toBe(403);

    // Close before disposition: illegal from ACKNOWLEDGED.
    const earlyClose = await http.post(`/v1/deviations/${id}/close`, { reason: 'done' }, quality.headers);
    expect(earlyClose.status).toBe(409);
    expect(earlyClose.body.message).toMatch(/current status ACKNOWLEDGED/);

    const disposition = await http.post(`/v1/deviations/${id}/disposition`, { disposition: 'RETREAT', reason: 'bath 12 K over band for 4 min; re-austemper' }, quality.headers);
    expect(disposition.status).toBe(200);
    expect(disposition.body).toMatchObject({ status: 'DISPOSITIONED', disposition: 'RETREAT', dispositionedById: quality.id, signer: 'Dana Whitcombe (Quality)' });

    const close = await http.post(`/v1/deviations/${id}/close`, { reason: 're-treated as load 119, hardness in spec' }, quality.headers);
    expect(close.status).toBe(200);
    expect(close.body.status).toBe('CLOSED');
    const closeAgain = await http.post(`/v1/deviations/${id}/close`, { reason: 'again' }, quality.headers);
    expect(closeAgain.status).toBe(409);
    expect(closeAgain.body.issues[0]).toEqual({ path: 'status', message: 'current status is CLOSED' });

    const detail = await http.get(`/v1/deviations/${id}`, metallurgist.headers);
    expect(detail.status).toBe(200);
    expect(
      detail.body.audits.map((a: { action: string; fromStatus: string | null; toStatus: string; actor: string; reason: string | null }) => [a.action, a.fromStatus, a.toStatus, a.actor, a.reason]),
    ).toEqual([
      ['OPEN', null, 'OPEN', 'worker', seeds[0]!.rule + ` on ${batchA1.id}`],
      ['ACKNOWLEDGE', 'OPEN', 'ACKNOWLEDGED', metallurgist.email, 'looking at the bath log'],
      ['DISPOSITION', 'ACKNOWLEDGED', 'DISPOSITIONED', quality.email, 'bath 12 K over band for 4 min; re-austemper'],
      ['CLOSE', 'DISPOSITIONED', 'CLOSED', quality.email, 're-treated as load 119, hardness in spec'],
    ]);
    expect(detail.body.audits[2].disposition).toBe('RETREAT');

    expect((await listIds('?status=CLOSED')).ids).toEqual([id]);
  });

  it('lets QUALITY disposition straight from OPEN; a concession needs the permit number', async () => {
    const id = ids[1]!;
    const noRef = await http.post(`/v1/deviations/${id}/disposition`, { disposition: 'CONCESSION', reason: 'customer accepts the transfer time' }, quality.headers);
    expect(noRef.status).toBe(400);
    expect(noRef.body.issues[0].path).toBe('dispositionRef');
    const shortReason = await http.post(`/v1/deviations/${id}/disposition`, { disposition: 'SCRAP', reason: 'no' }, quality.headers);
    expect(shortReason.status).toBe(400);
    expect(shortReason.body.issues[0].path).toBe('reason');
    const badValue = await http.post(`/v1/deviations/${id}/disposition`, { disposition: 'SELL', reason: 'somebody will buy it' }, quality.headers);
    expect(badValue.body.issues[0].path).toBe('disposition');
    expect((await prisma.deviation.findUniqueOrThrow({ where: { id } })).status).toBe('OPEN');

    const ok = await http.post(`/v1/deviations/${id}/disposition`, { disposition: 'CONCESSION', reason: 'customer accepts the transfer time', dispositionRef: 'CP-2026-0413' }, quality.headers);
    expect(ok.status).toBe(200);
    expect(ok.body).toMatchObject({ status: 'DISPOSITIONED', disposition: 'CONCESSION', dispositionRef: 'CP-2026-0413' });
  });

  it('answers 404 for an unknown deviation and 400 for a malformed id', async () => {
    expect((await http.post(`/v1/deviations/${crypto.randomUUID()}/acknowledge`, {}, metallurgist.headers)).status).toBe(404);
    expect((await http.get(`/v1/deviations/${crypto.randomUUID()}`, metallurgist.headers)).status).toBe(404);
    const malformed = await http.get('/v1/deviations/123', metallurgist.headers);
    expect(malformed.status).toBe(400);
    expect(malformed.body.issues[0].path).toBe('params.id');
  });

  it('shows the deviations in the batch detail', async () => {
    const detail = await http.get(`/v1/batches/${batchB1.id}`, metallurgist.headers);
    expect(detail.body.deviations.map((d: { id: string }) => d.id)).toEqual([ids[5], ids[4]]);
  });
});
