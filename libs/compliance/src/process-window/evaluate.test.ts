import type { ProcessWindow } from '@ausline/contracts';
import { describe, expect, it } from 'vitest';
import { evaluateProcessWindow } from './evaluate.js';
import type { LoadEventTimes, ProcessWindowInput, ProcessWindowRule, TemperatureChannelSeries, TemperatureSample } from './types.js';

/*
 * Fixture: an ADI load. The recipe sits inside the typical windows of practice.md §2.2 (ADI austenitize
 * 850–950 °C for 15–120 min, salt 230–400 °C for 30–240 min [S33]); the 20 s transfer limit is inside
 * the 15–30 s range quoted for batch transfers in §2.4 [M]. Signal limits are common practice.
 * All readings are invented.
 */
const window: ProcessWindow = {
  austenitize: { minTempC: 890, maxTempC: 910, minMinutes: 60, maxMinutes: 120 },
  maxTransferS: 20,
  bath: { minTempC: 360, maxTempC: 380, maxExcursionS: 120, minHoldMin: 60, maxHoldMin: 120 },
  maxChannelGapS: 30,
  flatline: { minDurationS: 600, epsilonC: 0.05 },
  plausible: { minTempC: 0, maxTempC: 1200, maxRateCPerS: 50 },
  twinTolerance: { maxDiffC: 8, minDurationS: 60 },
};

const MIN = 60_000;
const T0 = Date.UTC(2025, 2, 4, 6, 0, 0);
const CHARGED = T0;
const OUT_OF_FURNACE = T0 + 90 * MIN;
const INTO_BATH = OUT_OF_FURNACE + 12_000;
const OUT_OF_BATH = INTO_BATH + 90 * MIN;
const events: LoadEventTimes = { chargedMs: CHARGED, outOfFurnaceMs: OUT_OF_FURNACE, intoBathMs: INTO_BATH, outOfBathMs: OUT_OF_BATH };

/** A live signal never sits still: a small deterministic wiggle (±0.3 °C). */
const wiggle = (i: number, phase: number) => 0.3 * Math.sin(i * 0.7 + phase);

/** Furnace zone: charging a cold load drops it to 700 °C, it recovers to 900 °C over 20 min, then holds. */
function furnaceZone(phase: number, fromMs = CHARGED - 5 * MIN, toMs = OUT_OF_FURNACE + 5 * MIN, everyMs = 10_000): TemperatureSample[] {
  const out: TemperatureSample[] = [];
  for (let t = fromMs, i = 0; t <= toMs; t += everyMs, i++) {
    const sinceCharge = t - CHARGED;
    const base = sinceCharge < 0 ? 900 : sinceCharge < 20 * MIN ? 700 + (200 * sinceCharge) / (20 * MIN) : 900;
    out.push({ tMs: t, valueC: base + wiggle(i, phase) });
  }
  return out;
}

/** Bath thermocouple: 370 °C, rising to 376 °C for two minutes after immersion (inside the band). */
function bathTc(phase: number, fromMs = INTO_BATH - 5 * MIN, toMs = OUT_OF_BATH + 5 * MIN, everyMs = 5_000): TemperatureSample[] {
  const out: TemperatureSample[] = [];
  for (let t = fromMs, i = 0; t <= toMs; t += everyMs, i++) {
    const since = t - INTO_BATH;
    const base = since >= 0 && since < 2 * MIN ? 376 : 370;
    out.push({ tMs: t, valueC: base + wiggle(i, phase) });
  }
  return out;
}

const ch = (channelId: string, code: string, role: TemperatureChannelSeries['role'], samples: TemperatureSample[]): TemperatureChannelSeries => ({
  channelId,
  code,
  role,
  samples,
});

function baseChannels() {
  return {
    z1: furnaceZone(0),
    z2: furnaceZone(1.3),
    tc1: bathTc(0.4),
    tc2: bathTc(2.1),
  };
}
type Series = ReturnType<typeof baseChannels>;

function input(series: Series, overrides: Partial<ProcessWindowInput> = {}): ProcessWindowInput {
  return {
    batchId: 'b-118',
    window,
    events,
    nowMs: OUT_OF_BATH + 10 * MIN,
    channels: [
      ch('c-z1', 'zone1', 'furnace-zone', series.z1),
      ch('c-z2', 'zone2', 'furnace-zone', series.z2),
      ch('c-tc1', 'tc1', 'bath-tc', series.tc1),
      ch('c-tc2', 'tc2', 'bath-tc', series.tc2),
    ],
    ...overrides,
  };
}

/** Replaces readings in [fromMs, toMs] with f(reading). */
function patch(samples: TemperatureSample[], fromMs: number, toMs: number, f: (s: TemperatureSample) => number | null): TemperatureSample[] {
  return samples.flatMap((s) => {
    if (s.tMs < fromMs || s.tMs > toMs) return [s];
    const v = f(s);
    return v === null ? [] : [{ tMs: s.tMs, valueC: v }];
  });
}

const rules = (r: ReturnType<typeof evaluateProcessWindow>) => r.findings.map((f) => `${f.rule}${f.channelId ? `@${f.channelId}` : ''}`);
const only = (r: ReturnType<typeof evaluateProcessWindow>, rule: ProcessWindowRule) => r.findings.filter((f) => f.rule === rule);

describe('evaluateProcessWindow: a clean load', () => {
  it('raises nothing and measures soak, transfer and hold', () => {
    const r = evaluateProcessWindow(input(baseChannels()));
    expect(r.findings).toEqual([]);
    expect(r.measures.phase).toBe('DONE');
    expect(r.measures.transferS).toBe(12);
    expect(r.measures.holdMin).toBe(90);
    // zones reach 890 °C at ~19 min after charging (700 + 200·t/20 min, wiggle ±0.3), soak ~71 min
    expect(r.measures.soakMin).toBeGreaterThan(70);
    expect(r.measures.soakMin).toBeLessThan(72);
  });

  it('gives the same result for shuffled, duplicated samples (order does not matter)', () => {
    const series = baseChannels();
    const shuffled: Series = {
      z1: [...series.z1].reverse(),
      z2: [...series.z2, ...series.z2.slice(0, 50)],
      tc1: series.tc1.filter((_, i) => i % 2 === 0).concat(series.tc1.filter((_, i) => i % 2 === 1)),
      tc2: series.tc2,
    };
    series.tc1 = patch(series.tc1, INTO_BATH + 30 * MIN, INTO_BATH + 33 * MIN, () => 386);
    shuffled.tc1 = patch(shuffled.tc1, INTO_BATH + 30 * MIN, INTO_BATH + 33 * MIN, () => 386);
    const a = evaluateProcessWindow(input(series));
    const b = evaluateProcessWindow(input(shuffled));
    expect(a.findings.length).toBeGreaterThan(0);
    expect(b).toEqual(a);
  });
});

describe('austenitize-temp', () => {
  it('raises for a zone above the maximum, naming the zone, peak and duration', () => {
    const s = baseChannels();
    s.z1 = patch(s.z1, T0 + 40 * MIN, T0 + 41 * MIN, () => 915.2);
    const r = evaluateProcessWindow(input(s));
    expect(rules(r)).toEqual(['austenitize-temp@c-z1']);
    const f = r.findings[0];
    expect(f.message).toContain('above 910.0 °C');
    expect(f.message).toContain('peak 915.2 °C');
    // readings every 10 s from 40:00 to 41:00 at 915.2, back in band at 41:10: 70 s above
    expect(f.details.longestAboveMaxS).toBe(70);
    expect(f.dedupKey).toBe('b-118:austenitize-temp:c-z1');
  });

  it('raises for a dip below the minimum during the soak', () => {
    const s = baseChannels();
    s.z2 = patch(s.z2, T0 + 50 * MIN, T0 + 50 * MIN + 20_000, () => 884.1);
    const r = evaluateProcessWindow(input(s));
    const f = only(r, 'austenitize-temp');
    expect(f).toHaveLength(1);
    expect(f[0].channelId).toBe('c-z2');
    expect(f[0].message).toContain('below 890.0 °C for 30 s during the soak');
    expect(f[0].details.lowDuringSoakC).toBe(884.1);
  });

  it('stays quiet while the furnace recovers after charging (below the band before the soak starts)', () => {
    const r = evaluateProcessWindow(input(baseChannels()));
    expect(only(r, 'austenitize-temp')).toEqual([]);
  });
});

describe('austenitize-time', () => {
  it('raises CRITICAL when the longest soak is shorter than the minimum', () => {
    const early = OUT_OF_FURNACE - 40 * MIN; // soak ~31 min
    const r = evaluateProcessWindow(
      input(baseChannels(), { events: { ...events, outOfFurnaceMs: early, intoBathMs: early + 12_000, outOfBathMs: early + 12_000 + 90 * MIN } }),
    );
    const f = only(r, 'austenitize-time');
    expect(f).toHaveLength(1);
    expect(f[0].severity).toBe('CRITICAL');
    expect(f[0].message).toMatch(/soak too short: longest soak with every zone at ≥ 890\.0 °C was 3\d\.\d min \(minimum 60 min\)/);
  });

  it('restarts the soak after a drop: 2 × ~35 min at temperature is not one 60 min soak', () => {
    const s = baseChannels();
    s.z1 = patch(s.z1, T0 + 55 * MIN, T0 + 56 * MIN, () => 870);
    const r = evaluateProcessWindow(input(s));
    expect(only(r, 'austenitize-time')[0]?.details.tooShort).toBe(true);
    expect(only(r, 'austenitize-temp')).toHaveLength(1);
  });

  it('does not call a soak still running too short', () => {
    const r = evaluateProcessWindow(
      input(baseChannels(), { events: { chargedMs: CHARGED }, nowMs: T0 + 40 * MIN }),
    );
    expect(r.findings).toEqual([]);
    expect(r.measures.phase).toBe('IN_FURNACE');
  });

  it('raises MAJOR when the time at temperature exceeds the maximum, even with the load still in', () => {
    const long = T0 + 150 * MIN;
    const s = baseChannels();
    s.z1 = furnaceZone(0, CHARGED - 5 * MIN, long);
    s.z2 = furnaceZone(1.3, CHARGED - 5 * MIN, long);
    const r = evaluateProcessWindow(input(s, { events: { chargedMs: CHARGED }, nowMs: long }));
    const f = only(r, 'austenitize-time');
    expect(f).toHaveLength(1);
    expect(f[0].severity).toBe('MAJOR');
    expect(f[0].details.tooLong).toBe(true);
    expect(f[0].message).toContain('load still in the furnace');
  });

  it('raises when no furnace zone proves the soak', () => {
    const s = baseChannels();
    const inp = input(s);
    const r = evaluateProcessWindow({ ...inp, channels: inp.channels.filter((c) => c.role === 'bath-tc') });
    expect(only(r, 'austenitize-time')[0]?.message).toContain('no furnace zone channel is configured');
  });
});

describe('transfer-time', () => {
  it('raises above the maximum and not at or below it', () => {
    const late = evaluateProcessWindow(input(baseChannels(), { events: { ...events, intoBathMs: OUT_OF_FURNACE + 25_000 } }));
    expect(only(late, 'transfer-time')[0]?.message).toBe('Transfer too long: 25 s from furnace to bath (maximum 20 s)');
    const onTime = evaluateProcessWindow(input(baseChannels(), { events: { ...events, intoBathMs: OUT_OF_FURNACE + 20_000 } }));
    expect(only(onTime, 'transfer-time')).toEqual([]);
  });

  it('raises for a load still between furnace and bath once certainly late, not while the event may be in flight', () => {
    const base = { chargedMs: CHARGED, outOfFurnaceMs: OUT_OF_FURNACE };
    const inFlight = evaluateProcessWindow(input(baseChannels(), { events: base, nowMs: OUT_OF_FURNACE + 70_000 }));
    expect(only(inFlight, 'transfer-time')).toEqual([]);
    const lost = evaluateProcessWindow(input(baseChannels(), { events: base, nowMs: OUT_OF_FURNACE + 100_000 }));
    expect(only(lost, 'transfer-time')[0]?.message).toContain('is not recorded in the bath after 100 s');
  });
});

describe('bath-band-excursion', () => {
  it('raises for an excursion longer than allowed, with the duration and the extreme reading', () => {
    const s = baseChannels();
    // 385 °C from 30:00 to 32:30 (readings every 5 s), back in band at 32:35: 155 s > 120 s allowed
    s.tc1 = patch(s.tc1, INTO_BATH + 30 * MIN, INTO_BATH + 32.5 * MIN, () => 385);
    const r = evaluateProcessWindow(input(s));
    // tc2 stayed at 370 °C, so the two thermocouples also disagree by 15 °C for those 155 s
    expect(rules(r)).toEqual(['bath-band-excursion@c-tc1', 'thermocouple-disagreement']);
    expect(r.findings[0].details.longestExcursionS).toBe(155);
    expect(r.findings[0].message).toContain('outside 360.0–380.0 °C for 155 s');
    expect(r.findings[0].message).toContain('high 385.0 °C');
  });

  it('writes the time in the message on the line\u2019s clock, and keeps ISO UTC in the details', () => {
    const s = baseChannels();
    s.tc1 = patch(s.tc1, INTO_BATH + 30 * MIN, INTO_BATH + 32.5 * MIN, () => 385);
    const utc = only(evaluateProcessWindow(input(s)), 'bath-band-excursion')[0]!;
    const berlin = only(evaluateProcessWindow(input(s, { timeZone: 'Europe/Berlin' })), 'bath-band-excursion')[0]!;
    // 08:00:12 UTC on 4 March is 09:00:12 in Berlin (CET, UTC+1, no summer time yet).
    expect(utc.message).toContain('from 2025-03-04T08:00:12Z');
    expect(berlin.message).toContain('from 2025-03-04 09:00:12 CET');
    expect(berlin.details.longestExcursionFrom).toBe('2025-03-04T08:00:12Z');
    expect(berlin.dedupKey).toBe(utc.dedupKey);
  });

  it('stays quiet for an excursion within the allowance (the immersion rise)', () => {
    const s = baseChannels();
    s.tc1 = patch(s.tc1, INTO_BATH, INTO_BATH + 100_000, () => 383);
    s.tc2 = patch(s.tc2, INTO_BATH, INTO_BATH + 100_000, () => 383);
    const r = evaluateProcessWindow(input(s));
    expect(only(r, 'bath-band-excursion')).toEqual([]);
  });

  it('keeps counting through a short recording gap inside an excursion (return to band must be on record)', () => {
    const s = baseChannels();
    s.tc1 = patch(s.tc1, INTO_BATH + 30 * MIN, INTO_BATH + 31 * MIN, () => 357);
    s.tc1 = patch(s.tc1, INTO_BATH + 31 * MIN + 5_000, INTO_BATH + 31 * MIN + 25_000, () => null); // 25 s silent (< 30 s gap)
    s.tc1 = patch(s.tc1, INTO_BATH + 31 * MIN + 30_000, INTO_BATH + 32 * MIN, () => 357);
    const r = evaluateProcessWindow(input(s));
    expect(only(r, 'bath-band-excursion')[0]?.details.longestExcursionS).toBe(125);
    expect(only(r, 'channel-gap')).toEqual([]);
  });

  it('ignores the bath before the load went in and after it came out', () => {
    const s = baseChannels();
    s.tc1 = patch(s.tc1, INTO_BATH - 5 * MIN, INTO_BATH - 1_000, () => 395);
    s.tc1 = patch(s.tc1, OUT_OF_BATH + 1_000, OUT_OF_BATH + 5 * MIN, () => 395);
    expect(evaluateProcessWindow(input(s)).findings).toEqual([]);
  });
});

describe('sparse readings', () => {
  it('does not assume the bath stayed in band between readings further apart than the allowed gap', () => {
    const s = baseChannels();
    // tc1 logs once a minute (allowed gap 30 s), and two consecutive readings are out of band
    s.tc1 = s.tc1.filter((x) => (x.tMs - s.tc1[0].tMs) % 60_000 === 0);
    s.tc1 = patch(s.tc1, INTO_BATH + 30 * MIN - 1, INTO_BATH + 31 * MIN + 1, () => 388);
    const r = evaluateProcessWindow(input(s));
    expect(only(r, 'channel-gap')[0]?.channelId).toBe('c-tc1');
    // out of band from 30:00 until the next reading back in band at 32:00: 120 s is not more than allowed...
    expect(only(r, 'bath-band-excursion')).toEqual([]);
    // ...but three readings out of band in a row (30:00–32:00, back at 33:00) are 180 s
    s.tc1 = patch(s.tc1, INTO_BATH + 32 * MIN - 1, INTO_BATH + 32 * MIN + 1, () => 388);
    expect(only(evaluateProcessWindow(input(s)), 'bath-band-excursion')[0]?.details.longestExcursionS).toBe(180);
  });
});

describe('hold-min and hold-max', () => {
  it('raises hold-min for a finished hold shorter than the minimum', () => {
    const r = evaluateProcessWindow(input(baseChannels(), { events: { ...events, outOfBathMs: INTO_BATH + 50 * MIN } }));
    expect(only(r, 'hold-min')[0]).toMatchObject({ severity: 'CRITICAL', message: 'Bath hold too short: 50.0 min in the bath (minimum 60 min)' });
  });

  it('does not raise hold-min for a hold still running', () => {
    const { outOfBathMs: _, ...running } = events;
    const r = evaluateProcessWindow(input(baseChannels(), { events: running, nowMs: INTO_BATH + 50 * MIN }));
    expect(only(r, 'hold-min')).toEqual([]);
    expect(r.measures.phase).toBe('IN_BATH');
  });

  it('raises hold-max for a finished hold over the maximum and for a load still in past it', () => {
    const done = evaluateProcessWindow(input(baseChannels(), { events: { ...events, outOfBathMs: INTO_BATH + 130 * MIN } }));
    expect(only(done, 'hold-max')[0]?.message).toBe('Bath hold too long: 130.0 min in the bath (maximum 120 min)');

    const { outOfBathMs: _, ...running } = events;
    const s = baseChannels();
    s.tc1 = bathTc(0.4, INTO_BATH - 5 * MIN, INTO_BATH + 125 * MIN);
    s.tc2 = bathTc(2.1, INTO_BATH - 5 * MIN, INTO_BATH + 125 * MIN);
    const still = evaluateProcessWindow(input(s, { events: running, nowMs: INTO_BATH + 125 * MIN }));
    expect(only(still, 'hold-max')[0]?.details.stillInBath).toBe(true);
  });

  it('does not raise hold-max at the limit, nor for a running hold within the ingest allowance of it', () => {
    const atLimit = evaluateProcessWindow(input(baseChannels(), { events: { ...events, outOfBathMs: INTO_BATH + 120 * MIN } }));
    expect(only(atLimit, 'hold-max')).toEqual([]);
    const { outOfBathMs: _, ...running } = events;
    const s = baseChannels();
    s.tc1 = bathTc(0.4, INTO_BATH - 5 * MIN, INTO_BATH + 121 * MIN);
    s.tc2 = bathTc(2.1, INTO_BATH - 5 * MIN, INTO_BATH + 121 * MIN);
    const justOver = evaluateProcessWindow(input(s, { events: running, nowMs: INTO_BATH + 120.5 * MIN }));
    expect(only(justOver, 'hold-max')).toEqual([]);
  });
});

describe('channel-gap', () => {
  it('raises for a gap longer than allowed and says how long', () => {
    const s = baseChannels();
    s.tc2 = patch(s.tc2, INTO_BATH + 20 * MIN + 1_000, INTO_BATH + 21 * MIN - 1_000, () => null);
    const r = evaluateProcessWindow(input(s));
    expect(rules(r)).toEqual(['channel-gap@c-tc2']);
    expect(r.findings[0].details.longestGapS).toBe(60);
    expect(r.findings[0].message).toContain('Bath thermocouple tc2 recorded nothing for 60 s');
  });

  it('stays quiet for a gap within the limit', () => {
    const s = baseChannels();
    s.tc2 = patch(s.tc2, INTO_BATH + 20 * MIN + 1_000, INTO_BATH + 20 * MIN + 29_000, () => null); // 30 s apart
    expect(only(evaluateProcessWindow(input(s)), 'channel-gap')).toEqual([]);
  });

  it('notices a controller that stopped sending while the load is still in the bath', () => {
    const { outOfBathMs: _, ...running } = events;
    const s = baseChannels();
    s.tc1 = bathTc(0.4, INTO_BATH - 5 * MIN, INTO_BATH + 30 * MIN);
    s.tc2 = bathTc(2.1, INTO_BATH - 5 * MIN, INTO_BATH + 40 * MIN);
    const r = evaluateProcessWindow(input(s, { events: running, nowMs: INTO_BATH + 40 * MIN }));
    const f = only(r, 'channel-gap');
    expect(f.map((x) => x.channelId)).toEqual(['c-tc1']);
    expect(f[0].message).toContain('(still silent)');
    // trailing edge = now − 60 s allowance: 39 min − 30 min = 540 s
    expect(f[0].details.longestGapS).toBe(540);
  });

  it('does not raise for samples that are merely in flight (within the ingest allowance)', () => {
    const { outOfBathMs: _, ...running } = events;
    const s = baseChannels();
    s.tc1 = bathTc(0.4, INTO_BATH - 5 * MIN, INTO_BATH + 39 * MIN);
    s.tc2 = bathTc(2.1, INTO_BATH - 5 * MIN, INTO_BATH + 39 * MIN);
    const r = evaluateProcessWindow(input(s, { events: running, nowMs: INTO_BATH + 40 * MIN }));
    expect(r.findings).toEqual([]);
  });

  it('raises for a channel with no readings at all during the step', () => {
    const s = baseChannels();
    s.tc2 = [];
    const r = evaluateProcessWindow(input(s));
    expect(only(r, 'channel-gap')[0]?.details.longestGapS).toBe(90 * 60);
  });
});

describe('signal-flatline', () => {
  it('raises for a thermocouple frozen at one value for longer than the limit', () => {
    const s = baseChannels();
    s.tc2 = patch(s.tc2, INTO_BATH + 10 * MIN, INTO_BATH + 25 * MIN, () => 370.0);
    const r = evaluateProcessWindow(input(s));
    const f = only(r, 'signal-flatline');
    expect(f.map((x) => x.channelId)).toEqual(['c-tc2']);
    expect(f[0].details.flatForS).toBe(15 * 60);
    expect(f[0].message).toContain('check the sensor');
  });

  it('stays quiet for a frozen stretch shorter than the limit and for a live signal', () => {
    const s = baseChannels();
    s.tc2 = patch(s.tc2, INTO_BATH + 10 * MIN, INTO_BATH + 19 * MIN, () => 370.0);
    expect(only(evaluateProcessWindow(input(s)), 'signal-flatline')).toEqual([]);
  });
});

describe('signal-implausible', () => {
  it('raises for an open-thermocouple reading and keeps it out of the band check', () => {
    const s = baseChannels();
    s.tc1 = patch(s.tc1, INTO_BATH + 30 * MIN, INTO_BATH + 35 * MIN, () => 1372);
    const r = evaluateProcessWindow(input(s));
    // 1372 °C is not a bath temperature: no excursion and no disagreement is raised from it, and the gap
    // rule still counts the readings as received
    expect(rules(r)).toEqual(['signal-implausible@c-tc1']);
    expect(r.findings[0].details.outOfRangeCount).toBe(61);
    expect(r.findings[0].message).toContain('61 readings outside the plausible 0.0–1200.0 °C (first 1372.0 °C');
  });

  it('raises for a jump faster than the maximum rate', () => {
    const s = baseChannels();
    s.tc1 = patch(s.tc1, INTO_BATH + 30 * MIN, INTO_BATH + 30 * MIN, () => 640); // +270 °C in 5 s = 54 °C/s
    const r = evaluateProcessWindow(input(s));
    const f = only(r, 'signal-implausible');
    expect(f).toHaveLength(1);
    expect(f[0].details.jumpCount).toBe(2);
    expect(only(r, 'bath-band-excursion')).toEqual([]); // 5 s out of band is within the 120 s allowance
  });

  it('stays quiet for a fast but possible change', () => {
    const s = baseChannels();
    s.tc1 = patch(s.tc1, INTO_BATH + 30 * MIN, INTO_BATH + 30 * MIN, () => 378); // +8 °C in 5 s
    expect(only(evaluateProcessWindow(input(s)), 'signal-implausible')).toEqual([]);
  });
});

describe('thermocouple-disagreement', () => {
  it('raises when two bath thermocouples differ beyond tolerance for long enough', () => {
    const s = baseChannels();
    s.tc2 = patch(s.tc2, INTO_BATH + 40 * MIN, INTO_BATH + 41.5 * MIN, (x) => x.valueC + 9.5);
    const r = evaluateProcessWindow(input(s));
    const f = only(r, 'thermocouple-disagreement');
    expect(f).toHaveLength(1);
    expect(f[0].dedupKey).toBe('b-118:thermocouple-disagreement:c-tc1+c-tc2');
    expect(f[0].details.longestDisagreementS).toBe(95);
    expect(f[0].message).toContain('Bath thermocouples tc1 and tc2 differ by more than 8.0 °C for 95 s');
  });

  it('stays quiet for a short disagreement or a small offset', () => {
    const s = baseChannels();
    s.tc2 = patch(s.tc2, INTO_BATH + 40 * MIN, INTO_BATH + 40.5 * MIN, (x) => x.valueC + 9.5);
    expect(only(evaluateProcessWindow(input(s)), 'thermocouple-disagreement')).toEqual([]);
    const t = baseChannels();
    t.tc2 = patch(t.tc2, INTO_BATH + 40 * MIN, INTO_BATH + 60 * MIN, (x) => x.valueC + 5);
    expect(only(evaluateProcessWindow(input(t)), 'thermocouple-disagreement')).toEqual([]);
  });

  it('does not pair furnace zones (they may differ by design)', () => {
    const s = baseChannels();
    s.z2 = patch(s.z2, T0 + 30 * MIN, T0 + 80 * MIN, (x) => x.valueC + 9);
    expect(only(evaluateProcessWindow(input(s)), 'thermocouple-disagreement')).toEqual([]);
  });
});

describe('load-event-order', () => {
  it('raises for a bath entry timed before the furnace exit', () => {
    const r = evaluateProcessWindow(input(baseChannels(), { events: { ...events, intoBathMs: OUT_OF_FURNACE - 5_000 } }));
    expect(only(r, 'load-event-order')[0]?.details.reversed).toEqual(['OUT_OF_FURNACE>INTO_BATH']);
  });

  it('raises for a missing earlier event only once the later one is older than the allowance', () => {
    const { chargedMs: _, ...noCharge } = events;
    expect(only(evaluateProcessWindow(input(baseChannels(), { events: noCharge })), 'load-event-order')[0]?.details.missing).toEqual(['CHARGED']);
    const fresh = { chargedMs: CHARGED, intoBathMs: INTO_BATH };
    expect(only(evaluateProcessWindow(input(baseChannels(), { events: fresh, nowMs: INTO_BATH + 10_000 })), 'load-event-order')).toEqual([]);
  });

  it('stays quiet for events in order', () => {
    expect(only(evaluateProcessWindow(input(baseChannels())), 'load-event-order')).toEqual([]);
  });
});

describe('dedup keys', () => {
  it('are unique per finding and stable across evaluations', () => {
    const s = baseChannels();
    s.tc1 = patch(s.tc1, INTO_BATH + 30 * MIN, INTO_BATH + 35 * MIN, () => 390);
    s.tc2 = patch(s.tc2, INTO_BATH + 30 * MIN, INTO_BATH + 35 * MIN, () => 390);
    s.z1 = patch(s.z1, T0 + 40 * MIN, T0 + 41 * MIN, () => 915);
    const inp = input(s, { events: { ...events, outOfBathMs: INTO_BATH + 130 * MIN } });
    const a = evaluateProcessWindow(inp);
    const keys = a.findings.map((f) => f.dedupKey);
    expect(new Set(keys).size).toBe(keys.length);
    expect(keys.length).toBeGreaterThanOrEqual(4);
    expect(evaluateProcessWindow(inp).findings.map((f) => f.dedupKey)).toEqual(keys);
  });
});
