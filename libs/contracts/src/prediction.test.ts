import { describe, expect, it } from 'vitest';
import { HeatAdviceRequest, HeatDiagramQuery, PREDICTION_CRITERIA, PREDICTION_RULES } from './prediction.js';
import { AcceptanceCriteria } from './spec.js';

const paths = (r: { success: boolean; error?: { issues: { path: PropertyKey[] }[] } }) => (r.error?.issues ?? []).map((i) => i.path.join('.'));
const ID = '7f6b2d8e-3c1a-4b5e-9f00-1a2b3c4d5e6f';

describe('prediction contracts', () => {
  it('maps every criterion to its own deviation rule', () => {
    expect(new Set(PREDICTION_RULES).size).toBe(Object.keys(PREDICTION_CRITERIA).length);
    expect(PREDICTION_CRITERIA['min-bainite']).toBe('predicted-bainite-min');
    expect(PREDICTION_CRITERIA['hold-length']).toBe('hold-too-short-predicted');
  });

  it('advice needs exactly one of specId / specVersionId and names bad fields', () => {
    expect(HeatAdviceRequest.safeParse({ specId: ID }).success).toBe(true);
    expect(HeatAdviceRequest.safeParse({ specVersionId: ID, section: { shape: 'CYLINDER', sizeMm: 24 } }).success).toBe(true);
    expect(paths(HeatAdviceRequest.safeParse({}))).toEqual(['specId']);
    expect(paths(HeatAdviceRequest.safeParse({ specId: ID, specVersionId: ID }))).toEqual(['specId']);
    expect(paths(HeatAdviceRequest.safeParse({ specId: ID, section: { shape: 'CYLINDER', sizeMm: -1 } }))).toEqual(['section.sizeMm']);
    expect(paths(HeatAdviceRequest.safeParse({ specId: ID, uncertainty: { samples: 5, seed: 1 } }))).toEqual(['uncertainty.samples']);
  });

  it('diagram query coerces numbers, defaults the range and refuses an inverted or oversized one', () => {
    expect(HeatDiagramQuery.parse({})).toMatchObject({ fromC: 200, toC: 900, stepC: 10 });
    expect(HeatDiagramQuery.parse({ fromC: '250', toC: '400', stepC: '25' })).toMatchObject({ fromC: 250, toC: 400, stepC: 25 });
    expect(paths(HeatDiagramQuery.safeParse({ fromC: '400', toC: '300' }))).toEqual(['toC']);
    expect(paths(HeatDiagramQuery.safeParse({ fromC: '0', toC: '1000', stepC: '1' }))).toEqual(['stepC']);
    expect(paths(HeatDiagramQuery.safeParse({ fromC: 'hot' }))).toEqual(['fromC']);
  });

  it('acceptance criteria take the prediction criteria and settings, strictly', () => {
    const ok = AcceptanceCriteria.safeParse({
      maxUpperProductsFraction: 0.05,
      requireCompleteTransformation: true,
      requireStableRetainedAustenite: false,
      adiProcessWindow: { stageIMaxMartensiteFraction: 0.03, stageIIOnsetMin: 240, stageIIOnsetRefTempC: 370 },
      prediction: { section: { shape: 'PLATE', sizeMm: 22 }, grainSizeAstm: 7, calibration: { t0PrimeBiasWtPct: 0.4 } },
    });
    expect(ok.success).toBe(true);
    expect(paths(AcceptanceCriteria.safeParse({ maxUpperProductsFraction: 1.5 }))).toEqual(['maxUpperProductsFraction']);
    expect(paths(AcceptanceCriteria.safeParse({ prediction: { section: { shape: 'DISC', sizeMm: 5 } } }))).toEqual(['prediction.section.shape']);
    expect(paths(AcceptanceCriteria.safeParse({ prediction: { calibration: { bainiteTimeFacter: 2 } } }))).toEqual(['prediction.calibration']);
  });
});
