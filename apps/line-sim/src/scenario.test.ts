import { describe, expect, it } from 'vitest';
import { ProductSpecVersionInput } from '@ausline/contracts';
import { evaluateProcessWindow, type TemperatureChannelSeries } from '@ausline/compliance';
import { LinePhysics } from './physics.js';
import { ALL_HEATS, PRODUCTS, heatByNumber, productByCode, specInForce } from './plant.js';
import { DEMO_DAY, PLANTED_PROBLEMS, PROCESS_WINDOW_EXPECTATIONS, ROUTINE } from './scenario.js';
import { checkSchedule } from './scenario-check.js';
import { buildSchedule, type ScheduledLoad } from './schedule.js';
import { channelSamples, lineChannels } from './signals.js';

/*
 * The demo day is data; these tests hold it to what it claims. All numbers are the scenario's own
 * (invented); the process-window rules are libs/compliance's.
 */

const START = Date.UTC(2025, 2, 4, 6, 0, 0);
const schedule = buildSchedule(DEMO_DAY, ROUTINE, { startMs: START, routine: false });
const allLoads = schedule.lines.flatMap((l) => l.loads);
const DAY_MS = DEMO_DAY.durationMin * 60_000;

describe('demo day schedule', () => {
  it('uses only products and heats of the plant, with the material of the product', () => {
    for (const load of allLoads) {
      const product = productByCode(load.plan.product);
      expect(heatByNumber(load.plan.heat).material).toBe(product.material);
      expect(product.line).toBe(load.line);
    }
  });

  it('plants each problem at least once and every load finishes inside the day', () => {
    for (const problem of PLANTED_PROBLEMS) expect(allLoads.some((l) => l.plan.planted === problem)).toBe(true);
    for (const load of allLoads) expect(load.outOfBathMs).toBeLessThan(DAY_MS);
  });

  it('holds one load at a time in each furnace and each bath, events in order', () => {
    for (const line of schedule.lines) {
      line.loads.forEach((load, i) => {
        expect(load.chargedMs).toBeLessThan(load.outOfFurnaceMs);
        expect(load.outOfFurnaceMs).toBeLessThan(load.intoBathMs);
        expect(load.intoBathMs).toBeLessThan(load.outOfBathMs);
        expect(load.createdMs).toBeLessThan(load.chargedMs);
        const next = line.loads[i + 1];
        if (next) {
          expect(next.chargedMs).toBeGreaterThan(load.outOfFurnaceMs);
          expect(next.intoBathMs).toBeGreaterThan(load.outOfBathMs);
        }
      });
    }
  });

  it('gives unique batch codes', () => {
    expect(new Set(allLoads.map((l) => l.code)).size).toBe(allLoads.length);
  });

  it('keeps the spec versions valid against the contract schemas', () => {
    for (const product of PRODUCTS) for (const v of product.versions) expect(() => ProductSpecVersionInput.parse(v)).not.toThrow();
  });
});

describe('planted problems are clear of the noise (margin check)', () => {
  const checks = checkSchedule(schedule, DEMO_DAY.seed);

  it('no load is ambiguous on the bath band or the thermocouple pair', () => {
    const ambiguous = checks.filter((c) => c.twin === 'ambiguous' || Object.values(c.bathBand).includes('ambiguous'));
    expect(ambiguous.map((c) => c.code)).toEqual([]);
  });

  it('each load breaks exactly the rules of its planted problem', () => {
    for (const c of checks) {
      const broken: string[] = [];
      for (const [tc, v] of Object.entries(c.bathBand)) if (v === 'breaks') broken.push(`bath-band-excursion@${tc}`);
      if (c.twin === 'breaks') broken.push('thermocouple-disagreement');
      if (c.holdMinBroken) broken.push('hold-min');
      if (c.holdMaxBroken) broken.push('hold-max');
      if (c.transferBroken) broken.push('transfer-time');
      if (c.soakShort) broken.push('austenitize-time');
      const expected = (c.planted ? PROCESS_WINDOW_EXPECTATIONS[c.planted] : []).map((e) => (e.channel ? `${e.rule}@${e.channel}` : e.rule));
      expect({ code: c.code, broken: broken.sort() }).toEqual({ code: c.code, broken: expected.sort() });
    }
  });
});

describe('the generated readings, judged by the process-window rules', () => {
  /**
   * The exact noisy signal the simulator posts, fed to libs/compliance evaluateProcessWindow per load:
   * findings must be exactly the planted ones. This is the same evaluation the worker runs.
   */
  const findingsByLoad = new Map<string, string[]>();
  for (const line of schedule.lines) {
    const physics = new LinePhysics(line.line, line.loads, schedule.faults, DEMO_DAY.seed);
    const temperatureChannels = lineChannels(line.line).filter((c) => c.def.quantity === 'TEMPERATURE_C');
    const series = temperatureChannels.map((c) => ({ channel: c, samples: channelSamples(physics, c, -60_000, DAY_MS) }));
    for (const load of line.loads) {
      const window = specInForce(productByCode(load.plan.product)).processWindow;
      const fromMs = load.chargedMs - 120_000;
      const toMs = load.outOfBathMs + 120_000;
      const channels: TemperatureChannelSeries[] = series.map(({ channel, samples }) => ({
        channelId: channel.def.code,
        code: channel.def.code,
        role: channel.def.role === 'FURNACE_ZONE' ? 'furnace-zone' : 'bath-tc',
        samples: samples.filter((s) => s.tMs >= fromMs && s.tMs <= toMs).map((s) => ({ tMs: s.tMs, valueC: s.value })),
      }));
      const result = evaluateProcessWindow({
        batchId: load.code,
        window,
        events: { chargedMs: load.chargedMs, outOfFurnaceMs: load.outOfFurnaceMs, intoBathMs: load.intoBathMs, outOfBathMs: load.outOfBathMs },
        channels,
        nowMs: DAY_MS + 3_600_000,
      });
      findingsByLoad.set(load.code, result.findings.map((f) => (f.channelId ? `${f.rule}@${f.channelId}` : f.rule)).sort());
    }
  }

  it('raises exactly the planted deviations and none on the conforming loads', () => {
    const expected = (load: ScheduledLoad) =>
      (load.plan.planted ? PROCESS_WINDOW_EXPECTATIONS[load.plan.planted] : []).map((e) => (e.channel ? `${e.rule}@${e.channel}` : e.rule)).sort();
    const mismatches = allLoads
      .filter((load) => JSON.stringify(findingsByLoad.get(load.code)) !== JSON.stringify(expected(load)))
      .map((load) => ({ code: load.code, planted: load.plan.planted ?? null, found: findingsByLoad.get(load.code), expected: expected(load) }));
    expect(mismatches).toEqual([]);
  });

  it('finds something on at least one load of every process-window planted problem', () => {
    const withFindings = allLoads.filter((l) => l.plan.planted && (findingsByLoad.get(l.code) ?? []).length > 0).map((l) => l.plan.planted);
    expect(new Set(withFindings)).toEqual(new Set(['bath-creep', 'thermocouple-drift', 'short-hold']));
  });
});

describe('readings are a function of the scenario time only', () => {
  it('are the same whichever day the scenario is played and however the time is chunked', () => {
    const other = buildSchedule(DEMO_DAY, ROUTINE, { startMs: START + 37 * 86_400_000 + 4_321_000, routine: false });
    const line = schedule.lines[1]!;
    const lineOther = other.lines[1]!;
    const a = new LinePhysics(line.line, line.loads, schedule.faults, DEMO_DAY.seed);
    const b = new LinePhysics(lineOther.line, lineOther.loads, other.faults, DEMO_DAY.seed);
    const tc = lineChannels(line.line).find((c) => c.def.code === 'tc1')!;
    const whole = channelSamples(a, tc, 600 * 60_000, 700 * 60_000);
    const pieces = [
      ...channelSamples(b, tc, 600 * 60_000, 633 * 60_000 + 1),
      ...channelSamples(b, tc, 633 * 60_000 + 1, 700 * 60_000),
    ];
    expect(pieces).toEqual(whole);
  });

  it('never round below the recorder resolution (0.1 °C)', () => {
    const line = schedule.lines[0]!;
    const physics = new LinePhysics(line.line, line.loads, schedule.faults, DEMO_DAY.seed);
    const zone = lineChannels(line.line).find((c) => c.def.code === 'zone1')!;
    for (const s of channelSamples(physics, zone, 0, 3_600_000)) expect(Math.round(s.value * 10) / 10).toBe(s.value);
  });
});

describe('heats', () => {
  it('have unique heat numbers', () => {
    expect(new Set(ALL_HEATS.map((h) => h.heatNumber)).size).toBe(ALL_HEATS.length);
  });
});
