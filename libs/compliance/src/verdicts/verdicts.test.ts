import { describe, expect, it } from 'vitest';
import type { AcceptanceCriteria } from '@ausline/contracts';
import { predict, type PredictOutput } from '@ausline/metallurgy';
import { judgeMax, judgeMin, judgeRange, worstVerdict } from './bands.js';
import { judgePrediction, stageIIOnsetBand, type JudgeContext } from './judge.js';
import { verdictFindings } from './findings.js';

describe('judging a band against a limit', () => {
  const band = { p05: 0.3, p50: 0.4, p95: 0.5 };
  it('minimum: conforming when p05 meets it, nonconforming when even p95 misses it, at risk in between', () => {
    expect(judgeMin(band, 0.3)).toBe('conforming');
    expect(judgeMin(band, 0.35)).toBe('at-risk');
    expect(judgeMin(band, 0.5)).toBe('at-risk');
    expect(judgeMin(band, 0.51)).toBe('nonconforming');
  });
  it('maximum: the mirror image', () => {
    expect(judgeMax(band, 0.5)).toBe('conforming');
    expect(judgeMax(band, 0.45)).toBe('at-risk');
    expect(judgeMax(band, 0.29)).toBe('nonconforming');
  });
  it('a null percentile counts as +∞ or −∞ when its side is known, else only at risk', () => {
    expect(judgeMin({ p05: null, p50: null, p95: null }, 0.9, 'plus-infinity')).toBe('conforming'); // no blocky austenite: ratio unbounded
    expect(judgeMax({ p05: 600, p50: 1200, p95: null }, 3600, 'plus-infinity')).toBe('at-risk'); // some members never finish
    expect(judgeMax({ p05: null, p50: null, p95: null }, 3600, 'plus-infinity')).toBe('nonconforming');
    expect(judgeMin({ p05: null, p50: 40, p95: 45 }, 38)).toBe('at-risk');
  });
  it('a range takes the worse side; the worst of a list; none of an empty list', () => {
    expect(judgeRange(band, 0.2, 0.45)).toBe('at-risk');
    expect(judgeRange(band, 0.6, 0.7)).toBe('nonconforming');
    expect(worstVerdict(['conforming', 'at-risk', 'conforming'])).toBe('at-risk');
    expect(worstVerdict([])).toBeNull();
  });
});

/** Invented spring steel (not a standard grade) in 8 mm rounds, held isothermally. */
function steelPrediction(tempC: number, holdMin: number, chemistry: Record<string, number> = { C: 0.45, Si: 1.5, Mn: 1.4, Cr: 0.5, Mo: 0.25 }, sizeMm = 8): PredictOutput {
  const bath: Array<[number, number]> = [];
  for (let t = 0; t <= holdMin * 60; t += 30) bath.push([t, tempC]);
  return predict({
    material: 'steel',
    chemistryWtPct: chemistry,
    grainSizeAstm: 8,
    section: { shape: 'cylinder', diameterMm: sizeMm },
    austenitize: { tempC: 900, minutes: 30 },
    transferS: 8,
    agitation: 'strong',
    bath,
    ambientC: 20,
    uncertainty: { samples: 60, seed: 1 },
  });
}

function context(p: PredictOutput, holdMin: number, over: Partial<JudgeContext> = {}): JudgeContext {
  return {
    chemistryWtPct: { C: 0.45, Si: 1.5, Mn: 1.4, Cr: 0.5, Mo: 0.25 },
    holdEndS: holdMin * 60,
    projected: false,
    bathTempC: p.t0.bathTempC,
    nominalBathC: 330,
    transferS: 8,
    section: { shape: 'CYLINDER', sizeMm: 8 },
    equivalentDiameterMm: 8,
    ambientC: 20,
    siSdWtPct: 0.04,
    alSdWtPct: 0.01,
    ...over,
  };
}

const margins = { msMarginC: { p05: 40, p50: 46, p95: 52 }, bsMarginC: { p05: 150, p50: 175, p95: 200 } };

describe('judgePrediction', () => {
  const long = steelPrediction(330, 240);
  const short = steelPrediction(330, 3);

  it('judges only what the spec names', () => {
    expect(judgePrediction({ prediction: long, criteria: {}, extra: margins, context: context(long, 240) })).toEqual([]);
    const v = judgePrediction({ prediction: long, criteria: { minBainiteFraction: 0.2, hardness: { scale: 'HRC', min: 30, max: 65 } }, extra: margins, context: context(long, 240) });
    expect(v.map((x) => x.criterion)).toEqual(['min-bainite', 'hardness']);
  });

  it('minimum bainite: quiet after a long hold, nonconforming after 3 minutes (both directions), with numbers and drivers', () => {
    const criteria: AcceptanceCriteria = { minBainiteFraction: 0.3 };
    const ok = judgePrediction({ prediction: long, criteria, extra: margins, context: context(long, 240) })[0];
    const bad = judgePrediction({ prediction: short, criteria, extra: margins, context: context(short, 3) })[0];
    console.log(`min bainite 0.30 – 240 min: ${ok.verdict} (${ok.p05}/${ok.p50}/${ok.p95}); 3 min: ${bad.verdict} (${bad.p05}/${bad.p50}/${bad.p95})`);
    expect(ok.verdict).toBe('conforming');
    expect(bad.verdict).toBe('nonconforming');
    expect(bad.rule).toBe('predicted-bainite-min');
    expect(bad.message).toMatch(/Bainitic ferrite predicted .* against a minimum of 30 %: nonconforming/);
    expect(bad.drivers?.[0]).toMatch(/hold 3 min vs time to 95 % of the ceiling/);
  });

  it('incomplete transformation: p95 of the time to 95 % of the ceiling against the end of the hold', () => {
    const criteria: AcceptanceCriteria = { requireCompleteTransformation: true };
    const t95 = long.bands.timeTo95PctS;
    expect(t95.p95).not.toBeNull();
    const ok = judgePrediction({ prediction: long, criteria, extra: margins, context: context(long, 240) })[0];
    expect(ok.verdict).toBe('conforming');
    const bad = judgePrediction({ prediction: short, criteria, extra: margins, context: context(short, 3) })[0];
    expect(bad.verdict).not.toBe('conforming');
    expect(bad.message).toMatch(/Time to 95 % of the T0′ ceiling/);
  });

  it('maximum fresh martensite and minimum film-to-block ratio turn with the hold', () => {
    const criteria: AcceptanceCriteria = {
      maxFreshMartensiteFraction: (long.bands.freshMartensite.p95 as number) + 0.01,
      maxBlockyAusteniteFraction: (long.bands.blockyAustenite.p95 as number) + 0.01,
      minFilmToBlockRatio: Math.max(0, (long.bands.filmToBlockyRatio.p05 as number) - 0.01),
    };
    const ok = judgePrediction({ prediction: long, criteria, extra: margins, context: context(long, 240) });
    expect(ok.map((v) => v.verdict)).toEqual(['conforming', 'conforming', 'conforming']);
    const bad = judgePrediction({ prediction: short, criteria, extra: margins, context: context(short, 3) });
    // After 3 min most of the austenite turns to fresh martensite on cooling (so little stays blocky): the
    // martensite and the film-to-block ratio break their limits.
    expect(bad.map((v) => [v.criterion, v.verdict])).toEqual([
      ['max-fresh-martensite', 'nonconforming'],
      ['max-blocky-austenite', expect.any(String)],
      ['min-film-to-block', expect.stringMatching(/at-risk|nonconforming/)],
    ]);
  });

  it('Ms and Bs margins are judged on their bands', () => {
    const criteria: AcceptanceCriteria = { minMsMarginC: 30, minBsMarginC: 160 };
    const v = judgePrediction({ prediction: long, criteria, extra: margins, context: context(long, 240) });
    expect(v.map((x) => [x.criterion, x.verdict])).toEqual([
      ['ms-margin', 'conforming'],
      ['bs-margin', 'at-risk'],
    ]);
    const tight = judgePrediction({ prediction: long, criteria: { minMsMarginC: 60 }, extra: margins, context: context(long, 240) })[0];
    expect(tight.verdict).toBe('nonconforming');
    expect(tight.message).toMatch(/above the heat's Ms .* minimum margin of 60 °C: nonconforming/);
  });

  it('Si + Al below the minimum (common practice: 1–2 wt% Si keeps cementite out) is nonconforming; a Si-rich heat conforms', () => {
    const criteria: AcceptanceCriteria = { minSiPlusAlWtPct: 1.0 };
    const low = judgePrediction({ prediction: long, criteria, extra: margins, context: context(long, 240, { chemistryWtPct: { C: 0.6, Si: 0.41, Al: 0.025 } }) })[0];
    const rich = judgePrediction({ prediction: long, criteria, extra: margins, context: context(long, 240) })[0];
    expect(low.verdict).toBe('nonconforming');
    expect(low.p50).toBeCloseTo(0.435, 3);
    expect(rich.verdict).toBe('conforming');
    expect(low.drivers?.join(' ')).toContain('common practice');
  });

  it('hardness converts the spec limits to HV by the ASTM E140 rows and reports the band in the spec scale', () => {
    const hv = long.properties.hardnessHV;
    const v = judgePrediction({ prediction: long, criteria: { hardness: { scale: 'HRC', min: 20, max: 60 } }, extra: margins, context: context(long, 240) })[0];
    expect(v.unit).toBe('HRC');
    expect(v.limitMin).toBe(20);
    expect(v.limitMax).toBe(60);
    expect(v.p50).toBe(long.properties.hardnessHRC.p50);
    // ASTM E140 (metallurgy.md §6.4): 40 HRC = 392 HV; a band entirely above 392 HV is "above 40 HRC"
    const above = judgePrediction({ prediction: { ...long, properties: { ...long.properties, hardnessHV: { p05: 400, p50: 450, p95: 500 } } }, criteria: { hardness: { scale: 'HRC', min: 20, max: 40 } }, extra: margins, context: context(long, 240) })[0];
    expect(above.verdict).toBe('nonconforming');
    expect(hv.p05).not.toBeNull();
  });

  it('upper products during the quench name the section against the ideal critical diameter (ASTM A255)', () => {
    const v = judgePrediction({
      prediction: { ...long, bands: { ...long.bands, upperProductsFraction: { p05: 0.2, p50: 0.5, p95: 0.9 } }, quench: { ...long.quench, idealCriticalDiameterMm: 30 } },
      criteria: { maxUpperProductsFraction: 0.05 },
      extra: margins,
      context: context(long, 240, { section: { shape: 'CYLINDER', sizeMm: 40 }, equivalentDiameterMm: 40 }),
    })[0];
    expect(v.verdict).toBe('nonconforming');
    expect(v.drivers?.[0]).toMatch(/40\.0 mm round cools like a 40 mm round, above the heat's ideal critical diameter 30 mm \(ASTM A255\)/);
  });

  it('ADI Stage II: the onset scales with temperature (Arrhenius) and the hold is judged against its band', () => {
    const at370 = stageIIOnsetBand({}, 370);
    const at390 = stageIIOnsetBand({}, 390);
    expect(at370.p50).toBeCloseTo(240 * 60, 6); // our default: 240 min at 370 °C
    expect(at390.p50 as number).toBeLessThan(at370.p50 as number); // hotter: carbides sooner
    const iron = { ...long, material: 'ductile-iron' as const };
    const early = judgePrediction({ prediction: iron, criteria: { adiProcessWindow: {} }, extra: margins, context: context(long, 60, { bathTempC: 370 }) });
    const late = judgePrediction({ prediction: iron, criteria: { adiProcessWindow: {} }, extra: margins, context: context(long, 600, { bathTempC: 370 }) });
    expect(early.find((v) => v.criterion === 'adi-stage-ii')?.verdict).toBe('conforming');
    expect(late.find((v) => v.criterion === 'adi-stage-ii')?.verdict).toBe('nonconforming');
    expect(early.map((v) => v.criterion)).toEqual(['adi-stage-i', 'adi-stage-ii']);
  });

  it('hold length: too short when the end comes before the earliest safe end', () => {
    const criteria: AcceptanceCriteria = { minBainiteFraction: 0.2 };
    const v = judgePrediction({ prediction: long, criteria, extra: margins, context: context(long, 60), hold: { earliestSafeEndS: 5400, endS: 3600, endBasis: 'batch', limiting: ['min-bainite'] } });
    const hold = v.find((x) => x.criterion === 'hold-length');
    expect(hold?.verdict).toBe('nonconforming');
    expect(hold?.message).toMatch(/Hold too short: the scheduled end of hold at 60 min, before the earliest safe end 90 min .* 30 min more needed/);
    const fine = judgePrediction({ prediction: long, criteria, extra: margins, context: context(long, 60), hold: { earliestSafeEndS: 3000, endS: 3600, endBasis: 'actual', limiting: [] } });
    expect(fine.find((x) => x.criterion === 'hold-length')?.verdict).toBe('conforming');
  });
});

describe('verdictFindings', () => {
  it('one finding per non-conforming verdict, severity by verdict, rounded details, stable dedupKey', () => {
    const verdicts = [
      { criterion: 'min-bainite', rule: 'predicted-bainite-min', verdict: 'at-risk' as const, message: 'm1', p05: 0.2812, p50: 0.33, p95: 0.41, limit: 0.3, unit: 'fraction', drivers: ['a', 'b'] },
      { criterion: 'hardness', rule: 'predicted-hardness', verdict: 'nonconforming' as const, message: 'm2', unit: 'HRC', p05: 51.26, p50: 53, p95: 55, limitMin: 44, limitMax: 50 },
      { criterion: 'ms-margin', rule: 'predicted-ms-margin', verdict: 'conforming' as const, message: 'm3' },
      { criterion: 'hold-length', rule: 'hold-too-short-predicted', verdict: 'nonconforming' as const, message: 'm4', p50: 5432, limit: 3600, unit: 's' },
    ];
    const f = verdictFindings(verdicts, { batchId: 'b1', modelVersion: 'm', projected: true, bathTempC: 331.4 });
    expect(f.map((x) => [x.rule, x.severity, x.dedupKey])).toEqual([
      ['predicted-bainite-min', 'MINOR', 'b1:predicted-bainite-min'],
      ['predicted-hardness', 'MAJOR', 'b1:predicted-hardness'],
      ['hold-too-short-predicted', 'MAJOR', 'b1:hold-too-short-predicted'],
    ]);
    expect(f[0].details).toMatchObject({ p05: 0.28, p50: 0.33, limit: 0.3, projected: true, bathTempC: 331 });
    expect(f[1].details).toMatchObject({ p05: 51.3, limitMin: 44, limitMax: 50 });
    expect(f[2].details).toMatchObject({ p50: 5460, limit: 3600 }); // seconds are rounded to the minute
    expect(f[0].message).toBe('Predicted risk: m1. Why: a; b');
  });
});
