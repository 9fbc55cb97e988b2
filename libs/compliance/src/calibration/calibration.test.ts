import { describe, expect, it } from 'vitest';
import { createSeededRandom } from '../drift/random.js';
import { bandSd, calibrateBand, calibratedPredictionBands, calibrationsInForce, engineBandCalibration, labBandHooks, labCalibrationBasis, rawPredictedBand, Z95 } from './bands.js';
import { lnGamma, normalQuantile, regularizedIncompleteBeta, studentTCdf, studentTQuantile } from './distributions.js';
import { convertHardness, labObservations, meanHardnessIn } from './lab.js';
import { startCalibration, summarizeCalibration, updateCalibration } from './running.js';
import { judgeSequence } from './sequence.js';
import { calibrationExclusion, isAssignableCause, summarizeExclusions, type BatchDeviationLike } from './assignable-cause.js';

describe('distributions', () => {
  it('ln Γ matches exact values', () => {
    // Γ(n) = (n − 1)! and Γ(½) = √π (exact identities, A&S 6.1.6 and 6.1.8).
    expect(lnGamma(1)).toBeCloseTo(0, 13);
    expect(lnGamma(5)).toBeCloseTo(Math.log(24), 13);
    expect(lnGamma(0.5)).toBeCloseTo(0.5 * Math.log(Math.PI), 13);
    expect(lnGamma(20.5)).toBeCloseTo(Math.log(Math.sqrt(Math.PI)) + Array.from({ length: 20 }, (_, i) => Math.log(i + 0.5)).reduce((a, b) => a + b), 11);
  });

  it('incomplete beta: closed forms I_x(1, b) = 1 − (1 − x)^b and I_x(a, 1) = x^a', () => {
    // Exact identities of the regularised incomplete beta (A&S 26.5.x special cases).
    for (const x of [0.01, 0.3, 0.77, 0.999]) {
      expect(regularizedIncompleteBeta(x, 1, 3.5)).toBeCloseTo(1 - (1 - x) ** 3.5, 12);
      expect(regularizedIncompleteBeta(x, 2.25, 1)).toBeCloseTo(x ** 2.25, 12);
    }
  });

  it('Student t: ν = 1 is the Cauchy distribution, ν = 2 has a closed form', () => {
    // Exact: Cauchy F(t) = ½ + atan(t)/π; ν = 2: F(t) = ½ + t/(2√(2 + t²)).
    for (const t of [-7, -1.3, 0.4, 2.2, 12]) {
      expect(studentTCdf(t, 1)).toBeCloseTo(0.5 + Math.atan(t) / Math.PI, 12);
      expect(studentTCdf(t, 2)).toBeCloseTo(0.5 + t / (2 * Math.sqrt(2 + t * t)), 12);
    }
  });

  it('quantiles reproduce the printed t table (one-sided 0.95) and z₀.₉₅', () => {
    // NIST/SEMATECH e-Handbook of Statistical Methods §1.3.6.7.2 "Critical values of the Student's t
    // distribution", column 0.05 (upper tail), printed to 3 decimals: ν = 1 6.314, 2 2.920, 5 2.015, 10 1.812,
    // 20 1.725, 30 1.697, 100 1.660; normal 1.645 (§1.3.6.7.1).
    const table: [number, number][] = [[1, 6.314], [2, 2.92], [5, 2.015], [10, 1.812], [20, 1.725], [30, 1.697], [100, 1.66]];
    for (const [dof, t] of table) expect(Math.abs(studentTQuantile(0.95, dof) - t)).toBeLessThan(0.0006);
    expect(Math.abs(normalQuantile(0.95) - 1.645)).toBeLessThan(0.0006);
    expect(Z95).toBeCloseTo(1.6448536, 6);
    expect(studentTQuantile(0.05, 7.3)).toBeCloseTo(-studentTQuantile(0.95, 7.3), 10);
    expect(studentTCdf(studentTQuantile(0.975, 3.7), 3.7)).toBeCloseTo(0.975, 10);
  });
});

describe('running calibration: normal–inverse-gamma update', () => {
  it('without discounting equals the closed-form conjugate posterior', () => {
    // Closed form after n observations with prior (m0 = 0, κ0, ν0, ss0) (Murphy 2007, "Conjugate Bayesian
    // analysis of the Gaussian distribution", normal–gamma posterior, from memory):
    //   κn = κ0 + n, mn = n·x̄/κn, νn = ν0 + n, ssn = ss0 + Σ(x − x̄)² + κ0·n·x̄²/κn.
    const xs = [12.5, -3, 7.25, 22, 4, 9.5, -1];
    let s = startCalibration(10, { discount: 1, priorSpreadWeight: 2 });
    for (const x of xs) s = updateCalibration(s, x);
    const n = xs.length;
    const mean = xs.reduce((a, b) => a + b) / n;
    const sxx = xs.reduce((a, x) => a + (x - mean) ** 2, 0);
    expect(s.kappa).toBe(2 + n);
    expect(s.bias).toBeCloseTo((n * mean) / (2 + n), 12);
    expect(s.dof).toBe(2 + n);
    expect(s.scaledSumSquares).toBeCloseTo(2 * 100 + sxx + (2 * n * mean * mean) / (2 + n), 9);
  });

  it('with discounting tracks a bias that changes, and its effective weight tends to 1/(1 − δ) = 20', () => {
    const rng = createSeededRandom(42);
    let s = startCalibration(40);
    for (let i = 0; i < 60; i++) s = updateCalibration(s, 30 + 10 * rng.nextNormal());
    const before = summarizeCalibration(s);
    for (let i = 0; i < 60; i++) s = updateCalibration(s, -10 + 10 * rng.nextNormal());
    const after = summarizeCalibration(s);
    console.log(`discounted calibration: bias ${before.bias.toFixed(1)} → ${after.bias.toFixed(1)} (true 30 → −10), sd ${after.sd.toFixed(1)} (true 10), κ ${after.kappa.toFixed(2)}`);
    expect(before.bias).toBeGreaterThan(24);
    expect(after.bias).toBeLessThan(-5);
    expect(after.sd).toBeGreaterThan(6);
    expect(after.sd).toBeLessThan(15);
    expect(after.kappa).toBeCloseTo(20, 1);
  });

  it('refuses bad input', () => {
    expect(() => startCalibration(0)).toThrow(/priorSd/);
    expect(() => updateCalibration(startCalibration(1), Number.NaN)).toThrow(/residual/);
  });
});

describe('calibrated bands', () => {
  const raw = { p05: 461, p50: 573, p95: 676 }; // the worked example's hardness band (libs/metallurgy README)

  it('the raw band stands until the minimum number of results; then it shifts by the bias and takes the lab spread', () => {
    let s = startCalibration(bandSd(raw));
    expect(calibrateBand(raw, s).applied).toBe(false);
    const residuals = [-22, -31, -18, -27, -25, -20, -29, -24];
    for (const r of residuals) s = updateCalibration(s, r);
    const c = calibrateBand(raw, s);
    expect(c.applied).toBe(true);
    const sum = summarizeCalibration(s);
    expect(c.band.p50).toBeCloseTo(573 + sum.bias, 9);
    expect(c.band.p95 - c.band.p50).toBeCloseTo(studentTQuantile(0.95, sum.dof) * sum.sd * Math.sqrt(1 + 1 / sum.kappa), 9);
    console.log(`calibrated hardness band: raw ${raw.p05}–${raw.p95} HV (width ${raw.p95 - raw.p05}) → ${c.band.p05.toFixed(0)}–${c.band.p95.toFixed(0)} HV (width ${(c.band.p95 - c.band.p05).toFixed(0)}), p50 ${raw.p50} → ${c.band.p50.toFixed(1)}`);
    expect(c.band.p95 - c.band.p05).toBeLessThan(raw.p95 - raw.p05);
    expect(c.band.p50).toBeLessThan(raw.p50 - 10);
  });

  it('the engine-hook form carries the bias, and extra spread only when the calibrated band is wider', () => {
    let s = startCalibration(bandSd(raw));
    for (const r of [-20, -25, -22, -21]) s = updateCalibration(s, r);
    const narrow = engineBandCalibration(raw, s)!;
    expect(narrow.bias).toBeCloseTo(summarizeCalibration(s).bias, 12);
    expect(narrow.sd).toBe(0);
    let w = startCalibration(5);
    for (const r of [-200, 150, -180, 210, -160]) w = updateCalibration(w, r);
    const wide = engineBandCalibration({ p05: 560, p50: 573, p95: 586 }, w)!;
    expect(wide.sd).toBeGreaterThan(0);
  });

  it('retained austenite band = film + blocky percentiles; hardness from bands, else properties', () => {
    const result = { bands: { filmAustenite: { p05: 0.05, p50: 0.07, p95: 0.09 }, blockyAustenite: { p05: 0.1, p50: 0.16, p95: 0.22 } }, properties: { hardnessHV: { p05: 400, p50: 420, p95: 440 } } };
    const ra = rawPredictedBand(result, 'retainedAusteniteFraction')!;
    expect(ra.band.p05).toBeCloseTo(0.15, 12);
    expect(ra.band.p95).toBeCloseTo(0.31, 12);
    expect(ra.from).toBe('bands.filmAustenite + bands.blockyAustenite');
    const own = rawPredictedBand({ bands: { ...result.bands, retainedAusteniteFraction: { p05: 0.18, p50: 0.23, p95: 0.28 } } }, 'retainedAusteniteFraction')!;
    expect(own).toEqual({ band: { p05: 0.18, p50: 0.23, p95: 0.28 }, from: 'bands.retainedAusteniteFraction' });
    expect(rawPredictedBand(result, 'hardnessHV')!.from).toBe('properties.hardnessHV');
    expect(rawPredictedBand(result, 'tensileMPa')).toBeNull();
    expect(rawPredictedBand({ properties: { hardnessHV: { p05: null, p50: 1, p95: 2 } } }, 'hardnessHV')).toBeNull();
  });
});

describe('lab observations', () => {
  it('converts hardness reading by reading through the E140 rows; refuses readings off the table', () => {
    // ASTM E140 rows carried by libs/metallurgy: HRC 50 = 513 HV, HRC 55 = 595 HV (metallurgy.md §6.4 [F2]).
    expect(convertHardness(50, 'HRC', 'HV')).toBeCloseTo(513, 9);
    const m = meanHardnessIn({ scale: 'HRC', values: { readings: [50, 55] } }, 'HV')!;
    expect(m.value).toBeCloseTo((513 + 595) / 2, 9);
    expect(m.meanInOwnScale).toBe(52.5);
    const obs = labObservations({ id: 'a', kind: 'HARDNESS', scale: 'HRC', values: { readings: [18, 50] } });
    expect(obs[0]!.comparable).toBe(false);
    const ra = labObservations({ id: 'b', kind: 'RETAINED_AUSTENITE', scale: null, values: { volumePct: 23.5, method: 'XRD' } });
    expect(ra[0]).toMatchObject({ quantity: 'retainedAusteniteFraction', comparable: true, measured: 0.235 });
    expect(labObservations({ id: 'c', kind: 'TENSILE', scale: null, values: { rmMPa: 1180, rp02MPa: 900, elongationPct: 8 } })[0]).toMatchObject({ measured: 1180 });
    expect(labObservations({ id: 'd', kind: 'IMPACT', scale: null, values: {} })).toEqual([]);
  });
});

describe('judgeSequence: prequential judging', () => {
  it('a result never calibrates its own band; an outlier against a narrowed band is caught', () => {
    const raw = { p05: 480, p50: 560, p95: 640 };
    const obs = [-12, -18, -15, -14, -16, -13, -17, -15, 40].map((r, i) => ({ key: `k${i}`, measured: 560 + r, raw }));
    const { judgements, final } = judgeSequence(obs, { quantity: 'hardnessHV' });
    expect(judgements[0]!.judgedWith!.applied).toBe(false);
    expect(judgements.slice(0, 8).every((j) => j.comparison!.verdict === 'inside')).toBe(true);
    // +40 HV is inside the raw band (±80) but far outside the calibrated one (bias ≈ −15, spread ≈ 2–3).
    expect(judgements[8]!.comparison!.verdict).toBe('above');
    expect(judgements[8]!.judgedWith!.applied).toBe(true);
    expect(final!.n).toBe(9);
    // Without a prediction the observation is skipped and the state carries over.
    const skip = judgeSequence([{ key: 'x', measured: 1, raw: null }], { quantity: 'hardnessHV' });
    expect(skip.judgements[0]!.comparison).toBeNull();
    expect(skip.final).toBeNull();
  });
});

describe('assignable causes: results of a load whose process broke its window are judged but do not calibrate', () => {
  // Leaving points with an assignable cause out of the reference is the SPC practice when limits are revised
  // (Montgomery, Introduction to Statistical Quality Control, on revising control limits; common practice).
  const raw = { p05: 360, p50: 400, p95: 440 };
  const clean = [-20, -22, -19, -21].map((r, i) => ({ key: `c${i}`, measured: 400 + r, raw }));
  const dev = (over: Partial<BatchDeviationLike>): BatchDeviationLike => ({ id: 'd1', rule: 'hold-min', severity: 'CRITICAL', conditionPresent: true, ...over });
  const shortHold = { key: 'short', measured: 400 + 70, raw, excludedBy: calibrationExclusion([dev({})]) };

  it('a MAJOR/CRITICAL process-window deviation still present is a cause, whatever its status; predicted verdicts, mismatches, MINOR and cleared ones are not', () => {
    expect(isAssignableCause(dev({}))).toBe(true);
    expect(isAssignableCause(dev({ rule: 'bath-band-excursion', severity: 'MAJOR' }))).toBe(true);
    expect(isAssignableCause(dev({ rule: 'thermocouple-disagreement', severity: 'MINOR' }))).toBe(false);
    expect(isAssignableCause(dev({ rule: 'predicted-hardness', severity: 'MAJOR' }))).toBe(false);
    expect(isAssignableCause(dev({ rule: 'model-process-mismatch', severity: 'MAJOR' }))).toBe(false);
    expect(isAssignableCause(dev({ conditionPresent: false }))).toBe(false);
    expect(calibrationExclusion([dev({ rule: 'predicted-hardness', severity: 'MAJOR' })])).toBeNull();
    expect(calibrationExclusion([dev({ id: 'b', rule: 'transfer-time' }), dev({ id: 'a' }), dev({ id: 'c', rule: 'channel-gap', severity: 'MINOR' })])).toEqual({
      reason: 'assignable-cause',
      causes: [
        { deviationId: 'a', rule: 'hold-min', severity: 'CRITICAL' },
        { deviationId: 'b', rule: 'transfer-time', severity: 'CRITICAL' },
      ],
    });
  });

  it('an excluded result leaves the calibration as it was; the same result from a clean load moves it', () => {
    const without = judgeSequence(clean, { quantity: 'hardnessHV' });
    const withExcluded = judgeSequence([...clean.slice(0, 2), shortHold, ...clean.slice(2)], { quantity: 'hardnessHV' });
    const withClean = judgeSequence([...clean.slice(0, 2), { ...shortHold, excludedBy: null }, ...clean.slice(2)], { quantity: 'hardnessHV' });
    // Excluded: the final state is exactly the one without it, and its own judgement leaves the state untouched.
    expect(withExcluded.final).toEqual(without.final);
    expect(withExcluded.judgements[2]!.stateAfter).toEqual(withExcluded.judgements[1]!.stateAfter);
    expect(withExcluded.judgements[2]!.excludedBy!.causes[0]!.rule).toBe('hold-min');
    // Clean: the same +70 HV is folded in (n + 1) and pulls the bias up and widens the spread.
    expect(withClean.final!.n).toBe(without.final!.n + 1);
    expect(summarizeCalibration(withClean.final!).bias).toBeGreaterThan(summarizeCalibration(without.final!).bias + 5);
    expect(summarizeCalibration(withClean.final!).sd).toBeGreaterThan(2 * summarizeCalibration(without.final!).sd);
    expect(withClean.judgements[2]!.excludedBy).toBeNull();
  });

  it('an excluded result is still judged against its own band (here the raw one: above it, a mismatch to raise)', () => {
    const { judgements } = judgeSequence([shortHold, ...clean], { quantity: 'hardnessHV' });
    expect(judgements[0]!.comparison!.verdict).toBe('above');
    expect(judgements[0]!.residual).toBe(70);
    expect(judgements[0]!.after).toBeNull(); // nothing learned yet
    // The prior spread comes from the first folded-in prediction; the calibration counts the clean four only.
    expect(judgements.at(-1)!.stateAfter!.n).toBe(4);
  });

  it('summarizeExclusions counts results once in all and once per rule', () => {
    const two = calibrationExclusion([dev({ id: 'a' }), dev({ id: 'b', rule: 'bath-band-excursion', severity: 'MAJOR' })]);
    const one = calibrationExclusion([dev({ id: 'c' })]);
    expect(summarizeExclusions([null, two, undefined, one])).toEqual({ results: 2, byRule: { 'bath-band-excursion': 1, 'hold-min': 2 } });
    expect(summarizeExclusions([])).toEqual({ results: 0, byRule: {} });
  });
});

describe('calibratedPredictionBands', () => {
  it('gives raw, calibrated and engine-hook forms for every calibrated quantity the result carries', () => {
    let s = startCalibration(20);
    for (const r of [-10, -12, -9, -11]) s = updateCalibration(s, r);
    const result = { bands: { hardnessHV: { p05: 360, p50: 400, p95: 440 } } };
    const out = calibratedPredictionBands(result, { hardnessHV: s });
    expect(Object.keys(out)).toEqual(['hardnessHV']);
    expect(out.hardnessHV!.applied).toBe(true);
    expect(out.hardnessHV!.calibrated.p50).toBeCloseTo(400 + summarizeCalibration(s).bias, 9);
    expect(out.hardnessHV!.engine!.bias).toBeCloseTo(summarizeCalibration(s).bias, 9);
    expect(calibratedPredictionBands(result, {}).hardnessHV!.applied).toBe(false);
  });
});

describe('labBandHooks: the calibrations in force in the engine-hook form, per evaluation', () => {
  const raw = { p05: 360, p50: 400, p95: 440 };
  const learned = (residuals: number[]) => residuals.reduce((s, r) => updateCalibration(s, r), startCalibration(bandSd(raw)));

  it('gives nothing below the minimum number of results, nor for a band the engine could not compute', () => {
    expect(labBandHooks({ hardnessHV: raw }, { hardnessHV: learned([-20, -22]) })).toBeNull();
    expect(calibrationsInForce({ hardnessHV: learned([-20, -22]), tensileMPa: learned([5, 6, 7]) })).toEqual({ tensileMPa: learned([5, 6, 7]) });
    expect(labBandHooks({ hardnessHV: { p05: null, p50: 400, p95: 440 } }, { hardnessHV: learned([-20, -22, -21]) })).toBeNull();
  });

  it('in force: the hook each quantity gets is engineBandCalibration of that evaluation\'s own raw band', () => {
    const states = { hardnessHV: learned([-20, -22, -21]), retainedAusteniteFraction: learned([0.01, 0.02, 0.015]) };
    const hooks = labBandHooks({ hardnessHV: raw, tensileMPa: { p05: 1200, p50: 1300, p95: 1400 } }, states)!;
    expect(Object.keys(hooks)).toEqual(['hardnessHV']); // no tensile calibration; no retained-austenite band given
    expect(hooks.hardnessHV).toEqual(engineBandCalibration(raw, states.hardnessHV));
    const basis = labCalibrationBasis(states, { applied: hooks })!;
    expect(basis.minResults).toBe(3);
    expect(basis.quantities.hardnessHV!.n).toBe(3);
    expect(basis.applied).toEqual(hooks);
    expect(labCalibrationBasis({})).toBeNull();
  });
});
