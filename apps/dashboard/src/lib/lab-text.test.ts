import { describe, expect, it } from 'vitest';
import { acceptanceMeasuredText, fmtAcceptanceCriterion, fmtAcceptanceVerdict, fmtAgainstPrediction, fmtLabKind, labResultText } from './lab-text.js';

describe('lab results in words', () => {
  it('states each kind with its values and units', () => {
    expect(labResultText('HARDNESS', 'HV', { readings: [488, 495, 501, 490, 497], n: 5, mean: 494.2, min: 488, max: 501 })).toBe('494 HV mean of 5 readings (488–501 HV)');
    expect(labResultText('HARDNESS', 'HRC', { readings: [52.4], n: 1, mean: 52.4, min: 52.4, max: 52.4 })).toBe('52.4 HRC mean of 1 reading (52.4–52.4 HRC)');
    expect(labResultText('RETAINED_AUSTENITE', null, { volumePct: 31.2, method: 'XRD' })).toBe('31.2 vol% (XRD)');
    expect(labResultText('TENSILE', null, { rmMPa: 1250, rp02MPa: 1100, elongationPct: 9.5 })).toBe('Rm 1250 MPa, Rp0.2 1100 MPa, A 9.5 %');
    expect(labResultText('IMPACT', null, { energiesJ: [12, 14, 13], temperatureC: 20, notch: 'UNNOTCHED' })).toBe('12, 14, 13 J at 20 °C, unnotched');
  });

  it('never shows a missing value as a number', () => {
    expect(labResultText('HARDNESS', 'HV', {})).toBe('—');
    expect(labResultText('TENSILE', null, { rmMPa: 1250 })).toBe('Rm 1250 MPa');
  });

  it('names the kind and the verdict plainly', () => {
    expect(fmtLabKind('RETAINED_AUSTENITE')).toBe('Retained austenite');
    expect(fmtLabKind('HARDNESS', 'HV')).toBe('Hardness (HV)');
    expect(fmtAcceptanceVerdict('not-tested')).toBe('not tested');
    expect(fmtAcceptanceVerdict('fail')).toBe('FAIL');
    expect(fmtAcceptanceCriterion('retained-austenite')).toBe('Retained austenite');
    expect(fmtAgainstPrediction('hardnessHV', 'above')).toBe('hardness above the predicted band');
  });
});

describe('acceptance checks in words', () => {
  it('summarises what was measured with units, without the record\u2019s key names', () => {
    expect(acceptanceMeasuredText('hardness', { scale: 'HV', readings: 5, min: 488, max: 501, mean: 494.2 })).toBe('5 readings, 488–501 HV, mean 494 HV');
    expect(acceptanceMeasuredText('tensile', { tests: 1, minRmMPa: 1200, minRp02MPa: 1050, minElongationPct: 8 })).toBe('1 test, lowest Rm 1200 MPa, lowest Rp0.2 1050 MPa, lowest A 8.0 %');
    expect(acceptanceMeasuredText('retained-austenite', { tests: 1, maxVolumePct: 31.2 })).toBe('31.2 vol%');
    expect(acceptanceMeasuredText('retained-austenite', { tests: 2, maxVolumePct: 31.2 })).toBe('2 tests, highest 31.2 vol%');
    expect(acceptanceMeasuredText('impact', { specimens: 3, minJ: 12 })).toBe('3 specimens, lowest 12 J');
  });

  it('says when nothing was tested', () => {
    expect(acceptanceMeasuredText('hardness', { scale: 'HV', readings: 0, min: null, max: null, mean: null })).toBe('no readings');
    expect(acceptanceMeasuredText('tensile', { tests: 0, minRmMPa: null })).toBe('no tests');
  });
});
