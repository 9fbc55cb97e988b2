/**
 * The demo day (apps/line-sim DEMO_DAY) at full speed against the real service: API and worker in-process
 * on a private database, the plant set up through the public API, every controller posting with its own
 * key. Afterwards:
 *  - every sample a controller had acknowledged is stored exactly once, with the value sent;
 *  - every batch, load event and lab result of the day is there;
 *  - the process-window planted problems (bath creeping out of band, thermocouple drifting from its twin,
 *    short hold) raised exactly their process-window deviations, and no other batch raised any.
 * The metallurgical planted problems are checked in demo-metallurgy.test.ts (issue 4).
 * All plant data are invented (apps/line-sim/src/plant.ts).
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { PROCESS_WINDOW_RULES } from '@ausline/compliance';
import { DEMO_DAY, PROCESS_WINDOW_EXPECTATIONS } from '../apps/line-sim/src/scenario.js';
import type { ScheduledLoad } from '../apps/line-sim/src/schedule.js';
import type { SimReport } from '../apps/line-sim/src/simulator.js';
import { runDemoDay } from '../apps/line-sim/test/run-demo-day.js';
import { startService } from '../apps/line-sim/test/service-harness.js';

const service = await startService('demo-day');
const prisma = service.db.prisma;
const DAY_MS = DEMO_DAY.durationMin * 60_000;

let report: SimReport;
let startMs = 0;
let loads: ScheduledLoad[] = [];
let wallS = 0;

beforeAll(async () => {
  const run = await runDemoDay(service);
  ({ report, startMs, wallS } = run);
  loads = run.schedule.lines.flatMap((l) => l.loads);
}, 2_400_000);

describe('the demo day against the real service', () => {
  it('sends everything and loses nothing', () => {
    const sent = report.channels.reduce((a, c) => a + c.generated, 0);
    const acked = report.controllers.reduce((a, c) => a + c.samplesAcked, 0);
    // Figures for the log: how much a plant day is, and how fast it went through.
    console.log(`demo day: ${sent} samples, ${loads.length} batches, ${report.eventsAcked} events, ${report.labResultsAcked} lab results in ${wallS.toFixed(1)} s`);
    expect(report.plantReachedMs).toBe(startMs + DAY_MS);
    expect(report.controllers.map((c) => ({ name: c.name, pending: c.pending, rejected: c.rejected }))).toEqual(
      report.controllers.map((c) => ({ name: c.name, pending: 0, rejected: 0 })),
    );
    expect(acked).toBe(sent);
  });

  it('stores every acknowledged sample exactly once, with the value sent', async () => {
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
    expect(rows.length).toBe(report.channels.length);
    // The API's own replies agree: stored + duplicates = sent, and stored = rows.
    const storedByReplies = report.controllers.reduce((a, c) => a + c.samplesStored, 0);
    const rowCount = rows.reduce((a, r) => a + r.n, 0);
    expect(storedByReplies).toBe(rowCount);
    expect(report.controllers.reduce((a, c) => a + c.samplesConflict, 0)).toBe(0);
  });

  it('records every batch with its four events, and the lab results due within the day', async () => {
    const batches = await prisma.batch.findMany({ include: { loadEvents: true, labResults: true } });
    expect(batches.map((b) => b.code).sort()).toEqual(loads.map((l) => l.code).sort());
    for (const load of loads) {
      const batch = batches.find((b) => b.code === load.code)!;
      expect(batch.status).toBe('DONE');
      const at = Object.fromEntries(batch.loadEvents.map((e) => [e.kind, e.at.getTime()]));
      expect(at).toEqual({
        CHARGED: startMs + load.chargedMs,
        OUT_OF_FURNACE: startMs + load.outOfFurnaceMs,
        INTO_BATH: startMs + load.intoBathMs,
        OUT_OF_BATH: startMs + load.outOfBathMs,
      });
      const labDue = load.labMs <= DAY_MS;
      const expectedResults = labDue ? 1 + (load.plan.lab.coreHardness !== undefined ? 1 : 0) + (load.plan.lab.retainedAusteniteVolPct !== undefined ? 1 : 0) : 0;
      expect({ code: load.code, labResults: batch.labResults.length }).toEqual({ code: load.code, labResults: expectedResults });
      expect(batch.scheduledHoldMin).toBe(load.scheduledHoldMin);
    }
  });

  it('raises exactly the planted process-window deviations, and none on conforming batches', async () => {
    // Process-window rules only: the metallurgical verdicts of issue 4 are demo-metallurgy.test.ts's business.
    const deviations = await prisma.deviation.findMany({
      where: { rule: { in: [...PROCESS_WINDOW_RULES] } },
      include: { batch: { select: { code: true } }, channel: { select: { code: true } } },
    });
    const found = deviations
      .filter((d) => d.status !== 'CLEARED')
      .map((d) => `${d.batch?.code} ${d.rule}${d.channel ? `@${d.channel.code}` : ''}`)
      .sort();
    const expected = loads
      .flatMap((l) => (l.plan.planted ? PROCESS_WINDOW_EXPECTATIONS[l.plan.planted] : []).map((e) => `${l.code} ${e.rule}${e.channel ? `@${e.channel}` : ''}`))
      .sort();
    console.log(`deviations raised: ${found.length} (planted ${expected.length})`);
    expect(found).toEqual(expected);
    // Each planted process-window problem shows at least once.
    for (const problem of ['bath-creep', 'thermocouple-drift', 'short-hold'] as const) {
      expect(loads.some((l) => l.plan.planted === problem && found.some((f) => f.startsWith(`${l.code} `)))).toBe(true);
    }
  });

  it('leaves nothing of a transient deviation open (a half-recorded load seen by the worker is cleared once whole)', async () => {
    // While catching up, a load's four events are sent together; if one takes longer than the worker's
    // debounce, the worker may judge the load half recorded and clear that later (requests.md S: 3b, 4).
    const cleared = await prisma.deviation.findMany({ where: { status: 'CLEARED', rule: { in: [...PROCESS_WINDOW_RULES] } }, include: { batch: { select: { code: true } } } });
    console.log(`transient process-window deviations (opened, then cleared): ${cleared.length}`);
    const open = await prisma.deviation.count({ where: { status: { not: 'CLEARED' }, rule: { in: [...PROCESS_WINDOW_RULES] } } });
    const planted = loads.reduce((a, l) => a + (l.plan.planted ? PROCESS_WINDOW_EXPECTATIONS[l.plan.planted].length : 0), 0);
    expect(open).toBe(planted);
  });
});
