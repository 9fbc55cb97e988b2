import { describe, expect, it } from 'vitest';
import type { QuantityCalibration } from '../api/types.js';
import { exclusionCauses, fmtNarrowed, fmtQuantityBand, fmtQuantityDelta, fmtQuantityValue, quantityCounts } from './calibration.js';

const quantity = (over: Partial<QuantityCalibration> = {}): QuantityCalibration => ({
  quantity: 'hardnessHV',
  unit: 'HV',
  calibration: { n: 4, bias: 12.04, sd: 9.5, dof: 4.2, kappa: 5.1, inForce: true, updatedAt: '2026-05-04T10:00:00Z' },
  excluded: { results: 0, byRule: {} },
  history: [],
  effect: { batches: [], meanRawWidth: null, meanCalibratedWidth: null, meanNarrowedPct: null, meanShift: null },
  ...over,
});

const row = (batchId: string, batchCode: string, causes: Array<{ deviationId: string; rule: string; severity: string }> | null) => ({
  labResultId: `lab-${batchId}`,
  externalRef: null,
  labKind: 'HARDNESS',
  batchId,
  batchCode,
  measured: 420,
  predictionVersion: 1,
  raw: null,
  band: null,
  calibrationApplied: false,
  residual: 20,
  verdict: 'inside',
  excludedBy: causes ? { reason: 'assignable-cause' as const, causes } : null,
  firstComparedAt: '2026-05-04T10:00:00Z',
});

describe('calibration figures with units', () => {
  it('shows retained austenite (a volume fraction in the API) as vol%, hardness and tensile in their units, a missing value as a dash', () => {
    expect(fmtQuantityValue('retainedAusteniteFraction', 0.124)).toBe('12.40 vol%');
    expect(fmtQuantityValue('hardnessHV', 412.34)).toBe('412.3 HV');
    expect(fmtQuantityDelta('tensileMPa', -8)).toBe('−8.0 MPa');
    expect(fmtQuantityDelta('hardnessHV', 12.04)).toBe('+12.0 HV');
    expect(fmtQuantityValue('hardnessHV', null)).toBe('—');
    expect(fmtQuantityBand('retainedAusteniteFraction', { p05: 0.08, p50: 0.1, p95: 0.125 })).toBe('8.00–12.50 vol% (median 10.00 vol%)');
  });

  it('words the narrowing: positive narrower, negative wider', () => {
    expect(fmtNarrowed(23.456)).toBe('23.5 % narrower');
    expect(fmtNarrowed(-5)).toBe('5.0 % wider');
    expect(fmtNarrowed(null)).toBe('—');
  });

  it('states whether the calibration is in force against the minimum number of results', () => {
    expect(quantityCounts(quantity(), 3)).toMatchObject({ used: 4, inForce: true });
    const early = quantityCounts(quantity({ calibration: { n: 2, bias: 5, sd: 20, dof: 3, kappa: 3.9, inForce: false, updatedAt: '2026-05-04T10:00:00Z' } }), 3);
    expect(early.inForce).toBe(false);
    expect(early.status).toBe('2 of 3 results needed; the raw model band stands');
    expect(quantityCounts(quantity({ calibration: null }), 3)).toMatchObject({ used: 0, inForce: false });
  });

  it('gathers the deviations that left results out, each with its loads once', () => {
    const cause = { deviationId: 'dev-1', rule: 'hold-min', severity: 'MAJOR' };
    const q = quantity({
      excluded: { results: 3, byRule: { 'hold-min': 3, 'transfer-time': 1 } },
      history: [row('b1', 'L-1', null), row('b2', 'L-2', [cause]), row('b2', 'L-2', [cause]), row('b3', 'L-3', [cause, { deviationId: 'dev-2', rule: 'transfer-time', severity: 'CRITICAL' }])],
    });
    expect(exclusionCauses(q)).toEqual([
      { ...cause, batches: [{ id: 'b2', code: 'L-2' }, { id: 'b3', code: 'L-3' }] },
      { deviationId: 'dev-2', rule: 'transfer-time', severity: 'CRITICAL', batches: [{ id: 'b3', code: 'L-3' }] },
    ]);
  });
});
