/**
 * Store-and-forward against the real service: the first eight hours of the demo day at 1800× while the API
 * is stopped for a few seconds (connections refused; requests cut off mid-way) and started again on the
 * same port. The line controllers keep their readings and events, retry with backoff and the same
 * Idempotency-Key, and once the API is back everything arrives: nothing lost, nothing stored twice, the
 * batches and their events complete, and no deviation raised (no process-window problem is planted in
 * these hours). All plant data are invented.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { PROCESS_WINDOW_RULES } from '@ausline/compliance';
import { ALL_HEATS } from '../apps/line-sim/src/plant.js';
import { DEMO_DAY, ROUTINE } from '../apps/line-sim/src/scenario.js';
import { buildSchedule } from '../apps/line-sim/src/schedule.js';
import { setupDemoPlant } from '../apps/line-sim/src/setup.js';
import { Simulator, type SimReport } from '../apps/line-sim/src/simulator.js';
import { startService } from '../apps/line-sim/test/service-harness.js';

const service = await startService('demo-outage');
const prisma = service.db.prisma;

const HOUR = 3_600_000;
const RUN_MS = 8 * HOUR;
const startMs = Math.floor(Date.now() / 60_000) * 60_000 - RUN_MS;
const schedule = buildSchedule(DEMO_DAY, ROUTINE, { startMs, routine: false });
const OUTAGE_AT_MS = startMs + 2 * HOUR;
const OUTAGE_WALL_MS = 4_000;

let report: SimReport;
let outage: { fromPlantMs: number; toPlantMs: number } | null = null;

beforeAll(async () => {
  const setup = await setupDemoPlant({ apiUrl: service.url, adminToken: service.adminToken });
  let outageDone: Promise<void> | null = null;
  const simulator = new Simulator({
    apiUrl: service.url,
    plant: setup.plant,
    schedule,
    seed: DEMO_DAY.seed,
    speed: 1800,
    stopAtMs: startMs + RUN_MS,
    heats: ALL_HEATS,
    runId: `outage-${Date.now().toString(36)}`,
    // Short backoff so the test does not wait long once the API is back; the shape is the same.
    backoffBaseMs: 100,
    backoffCapMs: 2_000,
    onTick: (plantNowMs) => {
      if (outageDone || plantNowMs < OUTAGE_AT_MS) return;
      outageDone = (async () => {
        const from = plantNowMs;
        await service.stopApi();
        await new Promise((r) => setTimeout(r, OUTAGE_WALL_MS));
        outage = { fromPlantMs: from, toPlantMs: simulator.plantNow };
        await service.startApi();
      })();
    },
  });
  report = await simulator.run(600_000);
  await outageDone;
  await service.settle(600_000);
}, 1_800_000);

describe('the API down for a while', () => {
  it('happened in the middle of the run, and the controllers kept on buffering through it', () => {
    expect(outage).not.toBeNull();
    const o = outage as unknown as { fromPlantMs: number; toPlantMs: number };
    // At 1800x, four seconds of outage are two hours of plant time buffered in the outboxes.
    console.log(`outage: ${((o.toPlantMs - o.fromPlantMs) / 60_000).toFixed(0)} min of plant time buffered; retries ${report.controllers.map((c) => `${c.name}=${c.retries}`).join(' ')}`);
    expect(o.toPlantMs - o.fromPlantMs).toBeGreaterThan(30 * 60_000);
    // The controllers saw it: posts failed and were kept and retried (a controller whose only request in those
    // seconds was held over by the closing server may see none, so the sum is checked).
    expect(report.controllers.reduce((a, c) => a + c.retries, 0)).toBeGreaterThan(0);
  });

  it('loses nothing and refuses nothing once the API is back', () => {
    expect(report.plantReachedMs).toBe(startMs + RUN_MS);
    for (const c of report.controllers) expect({ name: c.name, pending: c.pending, rejected: c.rejected, dropped: c.droppedOverflow }).toEqual({ name: c.name, pending: 0, rejected: 0, dropped: 0 });
    const sent = report.channels.reduce((a, c) => a + c.generated, 0);
    expect(report.controllers.reduce((a, c) => a + c.samplesAcked, 0)).toBe(sent);
  });

  it('stores every sample exactly once, with the value sent, despite retried requests', async () => {
    const rows = await prisma.$queryRaw<Array<{ equipment: string; channel: string; n: number; sum: number }>>`
      SELECT e."code" AS equipment, c."code" AS channel, count(*)::int AS n, sum(s."value")::float8 AS sum
      FROM "Sample" s JOIN "Channel" c ON c."id" = s."channelId" JOIN "Equipment" e ON e."id" = c."equipmentId"
      GROUP BY e."code", c."code"`;
    const stored = new Map(rows.map((r) => [`${r.equipment}/${r.channel}`, r]));
    for (const tally of report.channels) {
      const row = stored.get(`${tally.equipment}/${tally.channel}`);
      expect({ channel: `${tally.equipment}/${tally.channel}`, n: row?.n }).toEqual({ channel: `${tally.equipment}/${tally.channel}`, n: tally.generated });
      expect(row!.sum).toBeCloseTo(tally.sum, 3);
    }
    // Every reply accounts for its samples: newly stored, or already there from a try whose reply was lost.
    const acked = report.controllers.reduce((a, c) => a + c.samplesAcked, 0);
    const replied = report.controllers.reduce((a, c) => a + c.samplesStored + c.samplesDuplicate, 0);
    expect(replied).toBe(acked);
    expect(report.controllers.reduce((a, c) => a + c.samplesConflict, 0)).toBe(0);
  });

  it('records each batch created in the window once, with every event of the loads finished in it', async () => {
    const offsetEnd = RUN_MS;
    const created = schedule.lines.flatMap((l) => l.loads).filter((l) => l.createdMs <= offsetEnd);
    const batches = await prisma.batch.findMany({ include: { loadEvents: true } });
    expect(batches.map((b) => b.code).sort()).toEqual(created.map((l) => l.code).sort());
    for (const load of created) {
      const batch = batches.find((b) => b.code === load.code)!;
      const finished = load.outOfBathMs <= offsetEnd;
      // A finished load has all four events. A load still in progress has the steps it has reached, in order
      // and never its end: none while the simulator was still catching up (it releases a load's events when
      // the load finishes), or those already due once it had caught up with the wall clock and posts live.
      const order = ['CHARGED', 'OUT_OF_FURNACE', 'INTO_BATH', 'OUT_OF_BATH'];
      const kinds = batch.loadEvents.map((e) => e.kind as string).sort((a, b) => order.indexOf(a) - order.indexOf(b));
      const expected = finished ? order : order.slice(0, Math.min(kinds.length, order.length - 1));
      expect({ code: load.code, kinds }).toEqual({ code: load.code, kinds: expected });
    }
  });

  it('raises no process-window deviation: nothing in these hours breaks a window, and the outage left no hole', async () => {
    const deviations = await prisma.deviation.findMany({ where: { rule: { in: [...PROCESS_WINDOW_RULES] } }, include: { batch: { select: { code: true } } } });
    // Once the API is back, parts of a load's event group may land a backoff apart: the worker can then judge
    // the load half recorded for a moment and clears that when the rest arrives (requests.md S: 3b, 4).
    const cleared = deviations.filter((d) => d.status === 'CLEARED');
    console.log(`transient process-window deviations after the outage (opened, then cleared): ${cleared.length}`);
    expect(deviations.filter((d) => d.status !== 'CLEARED').map((d) => `${d.batch?.code} ${d.rule} ${d.status}`)).toEqual([]);
  });
});
