import { describe, expect, it } from 'vitest';
import { fmtBand, fmtC, fmtLimits, fmtNum, fmtRule, fmtSection, fmtVolPct } from './format.js';

describe('format', () => {
  it('always carries the unit and shows a dash for missing values', () => {
    expect(fmtC(370.24)).toBe('370.2 °C');
    expect(fmtC(null)).toBe('—');
    expect(fmtC(Number.NaN)).toBe('—');
    expect(fmtVolPct(0.763)).toBe('76.3 vol%');
    expect(fmtVolPct(0)).toBe('0.0 vol%');
    expect(fmtBand({ p05: 420, p50: 440.4, p95: 462 }, 'HV')).toBe('420–462 HV (median 440)');
    expect(fmtLimits(360, 380, '°C')).toBe('360–380 °C');
    expect(fmtLimits(0.7, null, 'vol%', 1)).toBe('≥ 0.7 vol%');
    expect(fmtLimits(undefined, undefined, 'HV')).toBe('not limited');
    expect(fmtNum(-5)).toBe('−5');
  });

  it('names sections and rules in plain words', () => {
    expect(fmtSection('CYLINDER', 25)).toBe('round, 25 mm dia.');
    expect(fmtRule('bath-band-excursion')).toBe('Bath temperature band');
    expect(fmtRule('some-new-rule')).toBe('Some new rule');
  });
});
