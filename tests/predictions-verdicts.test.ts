/**
 * Predicted verdicts through the real API and worker (issue 4 item 2): each acceptance criterion a spec names is
 * judged on the worker's prediction (p05/p50/p95 of 200 ensemble members), and raises its deviation when the band
 * crosses or breaks the limit, stays quiet when the whole band meets it – both directions for every criterion.
 *
 * Invented scenarios on an invented bolt steel (0.45 C, 1.5 Si, 1.4 Mn, 0.5 Cr, 0.25 Mo) in 8 mm rounds, austenitized
 * at 900 °C (logged), 10 s transfer, agitated salt:
 *   sound   335 °C for 150 min             every criterion of spec A conforms
 *   short   335 °C for 10 min              pulled before the transformation finished
 *   hot     420 °C for 150 min             bath too close to Bs (and a low T0′ ceiling)
 *   cold    300 °C for 240 min             bath too close to Ms
 *   thick   80 mm round, 335 °C, 150 min   upper transformation products during the quench at its centre
 *   low Si  0.4 Si heat, 335 °C, 150 min   Si + Al below what keeps cementite out
 * plus tighter limits on the sound load (spec B), a T0′ calibrated product (spec C) and ADI loads (specs D, E).
 * The numbers come from libs/metallurgy (Li 1998 kinetics, CALPHAD T0′, van Bohemen Ms/Bs, Koistinen–Marburger,
 * ASTM E140 conversions); this test checks the judging and the deviations, and prints the figures.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import type { AcceptanceCriteria, PredictionRow } from '@ausline/contracts';
import {
  BOLT_STEEL,
  BOLT_STEEL_LOW_SI,
  createSpec,
  DUCTILE_IRON,
  figures,
  postHeat,
  runLoad,
  startPredictionWorld,
  type LoadPlan,
  type Plant,
  type PredictedDeviation,
} from './predictions-support.js';

const w = await startPredictionWorld('predictions-verdicts');

/** Spec A: every steel criterion, with limits the sound load meets with 95 % confidence. */
const SPEC_A: AcceptanceCriteria = {
  minBainiteFraction: 0.35,
  requireCompleteTransformation: true,
  maxFreshMartensiteFraction: 0.5,
  maxBlockyAusteniteFraction: 0.16,
  minFilmToBlockRatio: 0.09,
  maxRetainedAusteniteFraction: 0.25,
  minMsMarginC: 15,
  minBsMarginC: 100,
  maxUpperProductsFraction: 0.05,
  minSiPlusAlWtPct: 1.0, // common practice: 1–2 wt% Si (or Al) keeps cementite out (metallurgy.md §5.3)
  hardness: { scale: 'HRC', min: 44, max: 60 },
  tensile: { minTensileMPa: 1400 },
};
/** Spec B: tighter microstructure and strength limits, and stable retained austenite. */
const SPEC_B: AcceptanceCriteria = { maxBlockyAusteniteFraction: 0.08, maxRetainedAusteniteFraction: 0.12, tensile: { minTensileMPa: 2400 }, requireStableRetainedAustenite: true };
/** Spec C: stable retained austenite for a product whose T0′ was calibrated +1.0 wt% C against XRD (invented calibration). */
const SPEC_C: AcceptanceCriteria = { requireStableRetainedAustenite: true, prediction: { calibration: { t0PrimeBiasWtPct: 1.0 } } };
/**
 * ADI calibration of an invented product (T0′ to XRD, kinetics and quench to trial castings).
 *
 * Why the ADI specs D and E judge Stage I at 20 % and with a calibration, not at the documented default of 3 %
 * (metallurgy.md §4.2: Stage I is over when the austenite left unreacted, which turns to martensite on cooling, is
 * below ≈ 3 %): with this model no quiet case at the default exists, however long the hold. Tried on this iron
 * (10 mm plate, moderate agitation, 200 members, seed 1, no calibration; libs/compliance predictBatch, 2 Dec 2026):
 * the fresh-martensite band's p50 is 0.6–0.7 % but its p95 levels off at 6.9–9.5 % – at 320, 340, 355, 370, 385 and
 * 400 °C, after 120 and after 240 min (the iron window's longest hold), e.g. 370 °C: 7.64 % at 120, 180 and 240 min.
 * The band stops moving because the transformation in the upper 5 % of the members is over, leaving austenite whose
 * Ms lies above ambient (residual-austenite Ms band about 120–215 °C at 370 °C, 180 min), part of which turns to
 * martensite on cooling; a longer hold cannot change that, so Stage I stays "at risk" against 3 %. It is not the T0′
 * scatter alone: with a product T0′ spread of 0.02 wt% (calibration t0PrimeSdWtPct) the p95 is still 6.4 %. With the
 * calibration below it is wider still (p95 16 % at 240 min). A quiet case at 3 % would need an invented calibration
 * that hides this, which is what this note replaces.
 */
const ADI_CALIBRATION = { t0PrimeBiasWtPct: 0.6, ferritePearliteTimeFactor: 30, bainiteTimeFactor: 0.25 };
const SPEC_D: AcceptanceCriteria = { adiProcessWindow: { stageIMaxMartensiteFraction: 0.2 }, prediction: { calibration: ADI_CALIBRATION } };
const SPEC_E: AcceptanceCriteria = { adiProcessWindow: { stageIMaxMartensiteFraction: 0.2, stageIIOnsetMin: 60, stageIIOnsetRefTempC: 370 }, prediction: { calibration: ADI_CALIBRATION } };

const results = new Map<string, { latest: PredictionRow; deviations: PredictedDeviation[] }>();
let plant: Plant;

beforeAll(async () => {
  plant = await w.plant();
  const bolt = await postHeat(w, BOLT_STEEL);
  const lowSi = await postHeat(w, BOLT_STEEL_LOW_SI);
  const iron = await postHeat(w, DUCTILE_IRON, 'DUCTILE_IRON');
  const a = await createSpec(w, { criteria: SPEC_A });
  const b = await createSpec(w, { criteria: SPEC_B });
  const c = await createSpec(w, { criteria: SPEC_C });
  const d = await createSpec(w, { material: 'DUCTILE_IRON', criteria: SPEC_D });
  const e = await createSpec(w, { material: 'DUCTILE_IRON', criteria: SPEC_E });
  const loads: Array<[string, Omit<LoadPlan, 'plant' | 'slot'>]> = [
    ['sound/A', { heatNumber: bolt.heatNumber, specCode: a.code, bathC: 335, holdMin: 150 }],
    ['short/A', { heatNumber: bolt.heatNumber, specCode: a.code, bathC: 335, holdMin: 10 }],
    ['hot/A', { heatNumber: bolt.heatNumber, specCode: a.code, bathC: 420, holdMin: 150 }],
    ['cold/A', { heatNumber: bolt.heatNumber, specCode: a.code, bathC: 300, holdMin: 240 }],
    ['thick/A', { heatNumber: bolt.heatNumber, specCode: a.code, bathC: 335, holdMin: 150, sectionSizeMm: 80 }],
    ['lowSi/A', { heatNumber: lowSi.heatNumber, specCode: a.code, bathC: 335, holdMin: 150 }],
    ['sound/B', { heatNumber: bolt.heatNumber, specCode: b.code, bathC: 335, holdMin: 150 }],
    ['sound/C', { heatNumber: bolt.heatNumber, specCode: c.code, bathC: 320, holdMin: 180 }],
    ['adi90/D', { heatNumber: iron.heatNumber, specCode: d.code, bathC: 370, holdMin: 90, sectionShape: 'PLATE', sectionSizeMm: 10 }],
    ['adi8/D', { heatNumber: iron.heatNumber, specCode: d.code, bathC: 370, holdMin: 8, sectionShape: 'PLATE', sectionSizeMm: 10 }],
    ['adi150/E', { heatNumber: iron.heatNumber, specCode: e.code, bathC: 370, holdMin: 150, sectionShape: 'PLATE', sectionSizeMm: 10 }],
  ];
  // One time slot per load (a line's loads must not overlap); the worker predicts them as their logs arrive.
  const runs = await Promise.all(loads.map(([name, plan], slot) => runLoad(w, { ...plan, plant, slot }).then((r) => [name, r] as const)));
  for (const [name, r] of runs) {
    results.set(name, { latest: r.latest, deviations: r.deviations });
    console.log(figures(name, r.latest));
    for (const d of r.deviations) console.log(`    deviation ${d.rule} ${d.severity}: ${d.message}`);
  }
}, 600_000);

function verdictOf(load: string, criterion: string) {
  const r = results.get(load)!;
  return r.latest.result.verdicts.find((v) => v.criterion === criterion);
}
function deviationOf(load: string, rule: string) {
  return results.get(load)!.deviations.find((d) => d.rule === rule) ?? null;
}

/** [criterion, rule, quiet load, raising load] */
const BOTH_WAYS: Array<[string, string, string, string]> = [
  ['min-bainite', 'predicted-bainite-min', 'sound/A', 'short/A'],
  ['complete-transformation', 'predicted-incomplete-transformation', 'sound/A', 'short/A'],
  ['max-fresh-martensite', 'predicted-fresh-martensite-max', 'sound/A', 'short/A'],
  ['min-film-to-block', 'predicted-film-block-ratio-min', 'sound/A', 'short/A'],
  ['hardness', 'predicted-hardness', 'sound/A', 'short/A'],
  ['bs-margin', 'predicted-bs-margin', 'sound/A', 'hot/A'],
  ['ms-margin', 'predicted-ms-margin', 'sound/A', 'cold/A'],
  ['max-upper-products', 'predicted-upper-products', 'sound/A', 'thick/A'],
  ['min-si-plus-al', 'predicted-si-al-low', 'sound/A', 'lowSi/A'],
  ['max-blocky-austenite', 'predicted-blocky-austenite-max', 'sound/A', 'sound/B'],
  ['max-retained-austenite', 'predicted-retained-austenite-max', 'sound/A', 'sound/B'],
  ['tensile', 'predicted-tensile', 'sound/A', 'sound/B'],
  ['stable-retained-austenite', 'predicted-unstable-austenite', 'sound/C', 'sound/B'],
  ['adi-stage-i', 'predicted-adi-stage-i', 'adi90/D', 'adi8/D'],
  ['adi-stage-ii', 'predicted-adi-stage-ii', 'adi90/D', 'adi150/E'],
];

describe('predicted verdicts open and clear deviations, criterion by criterion', () => {
  it.each(BOTH_WAYS)('%s (%s): quiet on %s, raised on %s', (criterion, rule, quiet, raising) => {
    const q = verdictOf(quiet, criterion);
    const r = verdictOf(raising, criterion);
    expect(q?.verdict, `${criterion} on ${quiet}: ${q?.message}`).toBe('conforming');
    expect(deviationOf(quiet, rule)).toBeNull();
    expect(r?.verdict, `${criterion} on ${raising}: ${r?.message}`).not.toBe('conforming');
    const d = deviationOf(raising, rule);
    expect(d, `${rule} deviation on ${raising}`).not.toBeNull();
    // Which criterion, the numbers, and why.
    expect(d!.severity).toBe(r!.verdict === 'nonconforming' ? 'MAJOR' : 'MINOR');
    expect(d!.status).toBe('OPEN');
    expect(d!.message).toMatch(/^Predicted (risk|nonconformance): /);
    expect(d!.message).toContain(' Why: ');
    expect(d!.details).toMatchObject({ criterion, verdict: r!.verdict });
    expect((d!.details.drivers as string[]).length).toBeGreaterThan(0);
  });

  it('the sound load conforms on every criterion of spec A and raises nothing', () => {
    const sound = results.get('sound/A')!;
    expect(sound.latest.result.overall).toBe('conforming');
    expect(sound.latest.result.verdicts.map((v) => v.criterion).sort()).toEqual(
      [
        'bs-margin',
        'complete-transformation',
        'hardness',
        'hold-length',
        'max-blocky-austenite',
        'max-fresh-martensite',
        'max-retained-austenite',
        'max-upper-products',
        'min-bainite',
        'min-film-to-block',
        'min-si-plus-al',
        'ms-margin',
        'tensile',
      ].sort(),
    );
    expect(sound.deviations).toEqual([]);
  });

  it('the short hold is judged hold-too-short and says how much longer it needed', () => {
    const d = deviationOf('short/A', 'hold-too-short-predicted');
    expect(d?.severity).toBe('MAJOR');
    expect(d?.message).toMatch(/Hold too short: the hold ended at 10 min, before the earliest safe end \d+ min .* \d+ min more needed/);
    expect(deviationOf('sound/A', 'hold-too-short-predicted')).toBeNull();
  });

  it('the deviations name the driving input: the section for upper products, the chemistry for Si, the bath for Bs', () => {
    expect(deviationOf('thick/A', 'predicted-upper-products')!.message).toMatch(/80\.0 mm round/);
    expect(deviationOf('lowSi/A', 'predicted-si-al-low')!.message).toMatch(/Si \+ Al 0\.40 wt%.*heat chemistry Si 0\.40 wt%/);
    expect(deviationOf('hot/A', 'predicted-bs-margin')!.message).toMatch(/Bath 42\d °C sits .* below the heat's Bs 510 °C/);
  });

  it('a criterion the spec does not name is not judged (spec B names no bainite minimum)', () => {
    const b = results.get('sound/B')!;
    expect(b.latest.result.verdicts.map((v) => v.criterion).sort()).toEqual(['max-blocky-austenite', 'max-retained-austenite', 'stable-retained-austenite', 'tensile']);
    expect(b.deviations.map((d) => d.rule)).not.toContain('predicted-bainite-min');
  });
});
