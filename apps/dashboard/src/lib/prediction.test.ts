import { describe, expect, it } from 'vitest';
import { fractionAt, overallVerdict, readPrediction } from './prediction.js';

/** An invented prediction in the `ausline predict` shape (issue 3 item 9) plus issue 4's verdicts and hold. */
const fixture = {
  version: 3,
  modelVersion: 'm-0.1',
  createdAt: '2026-03-01T07:10:00.000Z',
  watermark: '2026-03-01T07:09:58.000Z',
  phase: 'IN_BATH',
  result: {
    modelVersion: 'm-0.1',
    temperaturesC: { ae1: 735, ae3: 790, bs: 520, ms: 245 },
    t0: { bathTempC: 370, t0CarbonWtPct: 1.15, t0PrimeCarbonWtPct: 0.98 },
    bainite: { ceilingFraction: 0.78, fractionAtEnd: 0.76, timeTo95PctS: 3300, curve: [[0, 0], [600, 0.3], [1200, 0.6], [3600, 0.76]], band: [[0, 0, 0], [1200, 0.5, 0.68]] },
    quench: { upperProductsFraction: 0, coreReachesBathS: 40, idealCriticalDiameterMm: 80 },
    final: { bainiticFerrite: 0.76, filmAustenite: 0.15, blockyAustenite: 0.06, freshMartensite: 0.03, upperProducts: 0, austeniteCarbonWtPct: 1.2, residualAusteniteMsC: -40 },
    properties: { hardnessHV: { p05: 420, p50: 440, p95: 462 }, tensileMPa: { p05: 1350, p50: 1420, p95: 1490 } },
    warnings: ['grain size not given; ASTM 8 assumed'],
    verdicts: [
      { criterion: 'minBainiteFraction', verdict: 'conforming', p05: 0.72, p50: 0.76, p95: 0.79, limit: 0.7, unit: 'fraction' },
      { criterion: 'hardness', verdict: 'at_risk', p05: 420, p50: 440, p95: 462, limit: 450, unit: 'HV', message: 'p95 above 450 HV' },
      { criterion: 'bogus', verdict: 'fine' },
    ],
    hold: { earliestSafeEndAt: '2026-03-01T07:55:00.000Z', scheduledEndAt: '2026-03-01T08:00:00.000Z', extraHoldMin: null },
  },
};

describe('readPrediction', () => {
  it('reads every field the screens use', () => {
    const p = readPrediction(fixture)!;
    expect(p.temperaturesC).toEqual({ ae1: 735, ae3: 790, bs: 520, ms: 245 });
    expect(p.bainite.ceilingFraction).toBe(0.78);
    expect(p.bainite.curve).toHaveLength(4);
    expect(p.bainite.band).toEqual([[0, 0, 0], [1200, 0.5, 0.68]]);
    expect(p.final.freshMartensite).toBe(0.03);
    expect(p.properties.hardnessHV).toEqual({ p05: 420, p50: 440, p95: 462 });
    expect(p.properties.adiGrade).toBeNull();
    expect(p.hold.earliestSafeEndMs).toBe(Date.parse('2026-03-01T07:55:00.000Z'));
    expect(p.warnings).toEqual(['grain size not given; ASTM 8 assumed']);
  });

  it('keeps only verdicts it understands, and normalises their spelling', () => {
    const p = readPrediction(fixture)!;
    expect(p.verdicts.map((v) => [v.criterion, v.verdict])).toEqual([
      ['minBainiteFraction', 'conforming'],
      ['hardness', 'at-risk'],
    ]);
    expect(overallVerdict(p.verdicts)).toBe('at-risk');
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
