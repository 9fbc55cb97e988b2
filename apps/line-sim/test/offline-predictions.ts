/**
 * The worker's live prediction (libs/compliance predictBatch) of every load of the demo day, computed offline
 * from the simulator's own readings: no API, no database. The records are what the controllers would post
 * (furnace zones every 10 s, bath thermocouples every 2 s, agitator every 30 s, the four load events), so the
 * verdicts are those the worker raises, up to the order the readings arrive in. Used to tune the demo
 * specs against the models, and by tests that want the predictions without running the service.
 *
 *   npx tsx --conditions=source apps/line-sim/test/offline-predictions.ts [product|load-code ...]
 */
import { predictBatch, type BatchPredictionInput, type TemperatureChannelSeries } from '@ausline/compliance';
import type { PredictionResult } from '@ausline/contracts';
import { LinePhysics } from '../src/physics.js';
import { heatByNumber, productByCode, specInForce } from '../src/plant.js';
import { DEMO_DAY, ROUTINE } from '../src/scenario.js';
import { buildSchedule, type LineSchedule, type ScheduledLoad } from '../src/schedule.js';
import { lineChannels } from '../src/signals.js';
import { channelSamples } from '../src/signals.js';

export interface OfflinePrediction {
  load: ScheduledLoad;
  result: PredictionResult;
  findings: Array<{ rule: string; severity: string; message: string }>;
}

const CHANNEL_ID = (equipment: string, code: string) => `${equipment}/${code}`;

export function offlineInput(line: LineSchedule, load: ScheduledLoad, physics: LinePhysics, startMs: number, samples: number): BatchPredictionInput {
  const spec = specInForce(productByCode(load.plan.product));
  const override = (JSON.parse(process.env.OFFLINE_OVERRIDE ?? '{}') as Record<string, Record<string, unknown>>)[load.plan.product];
  const criteria = override ? { ...spec.acceptanceCriteria, ...override } : spec.acceptanceCriteria;
  const heat = heatByNumber(load.plan.heat);
  const channels: TemperatureChannelSeries[] = [];
  let agitatorRpm: Array<{ tMs: number; value: number }> = [];
  for (const channel of lineChannels(line.line)) {
    const furnace = channel.equipment === 'FURNACE';
    const fromMs = furnace ? load.chargedMs - 600_000 : load.intoBathMs - 60_000;
    const toMs = furnace ? load.outOfFurnaceMs : load.outOfBathMs;
    const rows = channelSamples(physics, channel, fromMs, toMs).map((s) => ({ tMs: startMs + s.tMs, valueC: s.value }));
    if (channel.def.role === 'BATH_AGITATION') agitatorRpm = rows.map((r) => ({ tMs: r.tMs, value: r.valueC }));
    if (channel.def.quantity !== 'TEMPERATURE_C') continue;
    channels.push({ channelId: CHANNEL_ID(channel.equipmentCode, channel.def.code), code: channel.def.code, role: furnace ? 'furnace-zone' : 'bath-tc', samples: rows });
  }
  return {
    batchId: load.code,
    heatId: heat.heatNumber,
    heatRevision: 1,
    specVersionId: `${load.plan.product}@${productByCode(load.plan.product).versions.length}`,
    scheduledHoldMin: load.scheduledHoldMin,
    heat: { material: heat.material, chemistryWtPct: heat.chemistryWtPct as Record<string, number> },
    section: { shape: load.sectionShape, sizeMm: load.sectionSizeMm },
    window: spec.processWindow,
    criteria: criteria as typeof spec.acceptanceCriteria,
    events: { chargedMs: startMs + load.chargedMs, outOfFurnaceMs: startMs + load.outOfFurnaceMs, intoBathMs: startMs + load.intoBathMs, outOfBathMs: startMs + load.outOfBathMs },
    channels,
    agitatorRpm,
    lineHeatTransfer: line.line.hCoefficientByAgitation,
    uncertainty: { samples, seed: 1 },
  };
}

/** Predictions of the loads `select` keeps (all by default), at the worker's 1,000 members unless told. */
export function offlinePredictions(select: (load: ScheduledLoad) => boolean = () => true, samples = 1000): OfflinePrediction[] {
  const startMs = Date.UTC(2025, 2, 4, 6);
  const schedule = buildSchedule(DEMO_DAY, ROUTINE, { startMs, routine: false });
  const out: OfflinePrediction[] = [];
  for (const line of schedule.lines) {
    const physics = new LinePhysics(line.line, line.loads, schedule.faults, DEMO_DAY.seed);
    for (const load of line.loads) {
      if (!select(load)) continue;
      const outcome = predictBatch(offlineInput(line, load, physics, startMs, samples), null);
      if (outcome.kind !== 'predicted') throw new Error(`${load.code}: ${outcome.reason}`);
      out.push({ load, result: outcome.result, findings: outcome.findings.map((f) => ({ rule: f.rule, severity: f.severity, message: f.message })) });
    }
  }
  return out;
}

const fmt = (v: unknown) => (typeof v === 'number' ? Number(v.toPrecision(4)) : v);

if (process.argv[1]?.endsWith('offline-predictions.ts')) {
  const wanted = process.argv.slice(2);
  const samples = Number(process.env.SAMPLES ?? 1000);
  const preds = offlinePredictions((l) => wanted.length === 0 || wanted.includes(l.plan.product) || wanted.includes(l.code) || wanted.includes(String(l.seq)), samples);
  for (const p of preds) {
    const r = p.result as PredictionResult & Record<string, any>;
    const b = r.bands ?? {};
    const band = (k: string) => (b[k] ? `${fmt(b[k].p05)}/${fmt(b[k].p50)}/${fmt(b[k].p95)}` : '-');
    console.log(`${p.load.line} #${p.load.seq} ${p.load.code} ${p.load.plan.product} ${p.load.plan.heat} ${p.load.plan.planted ?? ''}`);
    console.log(
      `  bainite ${band('bainiticFerrite')} ceil ${band('ceilingFraction')} t95 ${band('timeTo95PctS')} upper ${band('upperProductsFraction')} freshM ${band('freshMartensite')} blocky ${band('blockyAustenite')} film/blk ${band('filmToBlockyRatio')} HV ${band('hardnessHV')}`,
    );
    console.log(`  point: bainite ${fmt(r.bainite?.fractionAtEnd)} t95 ${fmt(r.bainite?.timeTo95PctS)} upper ${fmt(r.quench?.upperProductsFraction)} core ${fmt(r.quench?.coreReachesBathS)} final ${JSON.stringify(r.final, (_k, v) => fmt(v))}`);
    for (const v of r.verdicts ?? []) {
      if (v.verdict !== 'conforming') console.log(`  ${v.criterion}: ${v.verdict} p05 ${fmt(v.p05)} p50 ${fmt(v.p50)} p95 ${fmt(v.p95)} limit ${fmt(v.limit ?? v.limitMin)}`);
    }
    console.log(`  findings: ${p.findings.map((f) => f.rule).join(', ') || 'none'}`);
  }
}
