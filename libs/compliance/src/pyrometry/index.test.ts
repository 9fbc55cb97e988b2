import { describe, expect, it } from 'vitest';
import * as pyrometry from './index.js';

describe('pyrometry public API', () => {
  it('exports the functions the API and worker call', () => {
    for (const name of [
      'judgeAccuracyTest',
      'judgeUniformitySurvey',
      'judgeSensorCalibration',
      'applyCalibrationCorrection',
      'parseAccuracyTestCsv',
      'parseUniformitySurveyCsv',
      'computeDueItems',
      'isEquipmentCompliantAt',
      'selectSuspectBatches',
      'applyReferenceOverlay',
      'findPyrometryReference',
      'lookupKeyed',
      'addInterval',
      'localDateOf',
    ] as const) {
      expect(typeof pyrometry[name], name).toBe('function');
    }
    expect(pyrometry.PYROMETRY_REFERENCES.map((r) => r.id)).toEqual(['AMS2750E', 'AMS2750F', 'AMS2750G', 'AMS2750H', 'CQI-9-3', 'CQI-9-4']);
  });

  it('reference sets cannot be changed in place; an overlay makes a new set', () => {
    const before = JSON.stringify(pyrometry.AMS2750G);
    const merged = pyrometry.applyReferenceOverlay(pyrometry.AMS2750G, { source: 'x', entries: [{ item: 'uniformityTolerance', furnaceClass: 2, value: { plusMinusC: 5 } }] });
    expect(merged.ok).toBe(true);
    expect(JSON.stringify(pyrometry.AMS2750G)).toBe(before);
    expect(Object.isFrozen(pyrometry.AMS2750G.sensorReplacement[0].bands[1].maxUses)).toBe(true);
    expect(merged.ok && Object.isFrozen(merged.reference.uniformityTolerance)).toBe(true);
  });
});
