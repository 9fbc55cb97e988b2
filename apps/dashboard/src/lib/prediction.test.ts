import { describe, expect, it } from 'vitest';
import { PredictionResult } from '@ausline/contracts';
import { inventedPrediction } from './prediction-fixture.js';
import { criterionName, fractionAt, overallVerdict, readPrediction, verdictOf } from './prediction.js';

const INTO = Date.parse('2026-03-01T07:00:00.000Z');
const row = {
  version: 3,
  modelVersion: 'invented-fixture',
  createdAt: '2026-03-01T07:50:00.000Z',
  watermark: '2026-03-01T07:45:00.000Z',
  phase: 'DONE',
  milestone: 'out-of-bath',
  result: inventedPrediction(INTO),
};

describe('readPrediction', () => {
  it('the fixture is a valid PredictionResult of libs/contracts (so the adapter is tested on the real shape)', () => {
    expect(PredictionResult.safeParse(row.result).success).toBe(true);
  });

  it('reads every field the screens use', () => {
    const p = readPrediction(row)!;
    expect(p.temperaturesC).toEqual({ ae1: 742, ae3: 778, bs: 561, ms: 276 });
    expect(p.bainite.ceilingFraction).toBe(0.59);
    expect(p.bainite.curve).toHaveLength(46);
    expect(p.bainite.band[0]).toEqual([0, 0, 0]);
    expect(p.bainite.loggedUntilS).toBe(2700);
    expect(p.final.freshMartensite).toBe(0.04);
    expect(p.properties.hardnessHV).toEqual({ p05: 470, p50: 492, p95: 515 });
    expect(p.properties.adiGrade).toBeNull();
    expect(p.hold).toMatchObject({ earliestSafeEndMs: INTO + 40 * 60_000, scheduledEndMs: INTO + 45 * 60_000, extraHoldMin: 1.5, limiting: ['complete-transformation'] });
    expect(p.warnings).toEqual(['grain size not given: ASTM 9 assumed']);
    expect(p.milestone).toBe('out-of-bath');
  });

  it('reads verdicts with their rule, limits and drivers, and the stored overall verdict', () => {
    const p = readPrediction(row)!;
    expect(p.verdicts.map((v) => [v.criterion, v.verdict])).toEqual([
      ['min-bainite', 'conforming'],
      ['max-blocky-austenite', 'at-risk'],
      ['hardness', 'conforming'],
    ]);
    expect(p.verdicts[2]).toMatchObject({ limitMin: 460, limitMax: 545, unit: 'HV', rule: 'predicted-hardness' });
    expect(p.verdicts[1]!.drivers).toEqual(['bath 300 °C leaves coarse blocks between sheaves']);
    expect(p.overall).toBe('at-risk');
    expect(verdictOf(p)).toBe('at-risk');
    expect(criterionName('max-blocky-austenite')).toBe('Maximum blocky austenite');
  });

  it('drops verdicts it cannot read and normalises spelling; no overall falls back to the worst verdict', () => {
    const p = readPrediction({ result: { verdicts: [{ criterion: 'x', verdict: 'at_risk', message: 'm' }, { criterion: 'y', verdict: 'fine' }] } })!;
    expect(p.verdicts.map((v) => v.verdict)).toEqual(['at-risk']);
    expect(p.overall).toBeNull();
    expect(verdictOf(p)).toBe('at-risk');
  });

  it('no prediction is null, and missing numbers stay null instead of becoming 0', () => {
    expect(readPrediction(null)).toBeNull();
    const p = readPrediction({ result: { bainite: { ceilingFraction: 'high' } } })!;
    expect(p.bainite.ceilingFraction).toBeNull();
    expect(p.properties.hardnessHV).toBeNull();
    expect(p.verdicts).toEqual([]);
    expect(overallVerdict(p.verdicts)).toBeNull();
  });

  it('interpolates the bainite curve', () => {
    const curve: Array<[number, number]> = [[0, 0], [600, 0.3], [1200, 0.6]];
    expect(fractionAt(curve, 300)).toBeCloseTo(0.15);
    expect(fractionAt(curve, 1200)).toBe(0.6);
    expect(fractionAt(curve, 5000)).toBe(0.6);
    expect(fractionAt(curve, -1)).toBeNull();
    expect(fractionAt([], 10)).toBeNull();
  });
});
