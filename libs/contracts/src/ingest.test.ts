import { describe, expect, it } from 'vitest';
import {
  BatchCreate,
  ChemistryWtPct,
  DeviationDisposition,
  DeviationQuery,
  deviceTimeMs,
  HeatInput,
  LabResultInput,
  LoadEventInput,
  SamplesPost,
} from './ingest.js';

function issuePaths(result: { success: boolean; error?: { issues: Array<{ path: PropertyKey[] }> } }): string[] {
  return (result.error?.issues ?? []).map((i) => i.path.join('.'));
}

describe('ChemistryWtPct', () => {
  it('accepts known elements with carbon', () => {
    expect(ChemistryWtPct.safeParse({ C: 0.98, Si: 1.45, Mn: 1.05, Cr: 1.45 }).success).toBe(true);
  });
  it('accepts a ductile iron certificate with residual Mg and Sn', () => {
    expect(ChemistryWtPct.safeParse({ C: 3.6, Si: 2.5, Mn: 0.3, Cu: 0.6, Ni: 0.5, Mg: 0.045, Sn: 0.01 }).success).toBe(true);
  });
  it('names an unknown element symbol by its key', () => {
    const r = ChemistryWtPct.safeParse({ C: 0.5, Xx: 1 });
    expect(issuePaths(r)).toEqual(['Xx']);
    expect(r.error!.issues[0]!.message).toMatch(/unknown element symbol 'Xx'/);
  });
  it('rejects negative values, non-numbers and a missing carbon', () => {
    expect(issuePaths(ChemistryWtPct.safeParse({ C: -0.1 }))).toEqual(['C']);
    expect(issuePaths(ChemistryWtPct.safeParse({ C: '0.4' }))).toEqual(['C']);
    expect(issuePaths(ChemistryWtPct.safeParse({ Si: 2 }))).toEqual(['C']);
  });
  it('rejects a sum above 100 wt%', () => {
    const r = ChemistryWtPct.safeParse({ C: 3.6, Si: 60, Cr: 50 });
    expect(r.success).toBe(false);
    expect(r.error!.issues[0]!.message).toMatch(/113\.600 wt%/);
  });
});

describe('HeatInput', () => {
  it('defaults the source and rejects unknown fields', () => {
    const ok = HeatInput.parse({ heatNumber: 'H1', material: 'STEEL', chemistryWtPct: { C: 0.6 } });
    expect(ok.source).toBe('mill-certificate');
    expect(issuePaths(HeatInput.safeParse({ heatNumber: 'H1', material: 'STEEL', chemistryWtPct: { C: 0.6 }, chemistry: {} }))).toEqual(['']);
  });
});

describe('SamplesPost', () => {
  const sample = { channel: 'tc1', t: '2026-03-01T08:00:00.000+01:00', value: 371.2 };
  it('accepts ISO times with offset and epoch milliseconds', () => {
    expect(SamplesPost.safeParse({ samples: [sample, { ...sample, t: 1_772_348_400_000 }] }).success).toBe(true);
  });
  it('rejects a time without offset at samples.N.t', () => {
    expect(issuePaths(SamplesPost.safeParse({ samples: [sample, { ...sample, t: '2026-03-01T08:00:00' }] }))).toEqual(['samples.1.t']);
  });
  it('rejects epoch seconds (too small to be milliseconds)', () => {
    const r = SamplesPost.safeParse({ samples: [{ ...sample, t: 1_772_348_400 }] });
    expect(issuePaths(r)).toEqual(['samples.0.t']);
    expect(r.error!.issues[0]!.message).toMatch(/seconds/);
  });
  it('rejects NaN, strings and null values at samples.N.value', () => {
    for (const value of [Number.NaN, '371', null, Number.POSITIVE_INFINITY]) {
      expect(issuePaths(SamplesPost.safeParse({ samples: [sample, sample, { ...sample, value }] }))).toEqual(['samples.2.value']);
    }
  });
  it('limits a request to 10,000 samples', () => {
    expect(SamplesPost.safeParse({ samples: Array.from({ length: 10_000 }, () => sample) }).success).toBe(true);
    expect(issuePaths(SamplesPost.safeParse({ samples: Array.from({ length: 10_001 }, () => sample) }))).toEqual(['samples']);
  });
  it('converts device times to epoch milliseconds', () => {
    expect(deviceTimeMs('2026-03-01T08:00:00.000+01:00')).toBe(Date.UTC(2026, 2, 1, 7));
    expect(deviceTimeMs(1_772_348_400_000)).toBe(1_772_348_400_000);
  });
});

describe('LabResultInput', () => {
  it('accepts hardness with a matching scale and standard', () => {
    const r = LabResultInput.safeParse({ kind: 'HARDNESS', scale: 'HRC', testStandard: 'ASTM E18', readings: [52, 53], externalRef: 'L-1' });
    expect(r.success).toBe(true);
  });
  it('rejects a standard of another scale at testStandard', () => {
    // ISO 6507-1 is the Vickers method, not Rockwell (common practice: ISO 6508-1 / ASTM E18 for HRC).
    const r = LabResultInput.safeParse({ kind: 'HARDNESS', scale: 'HRC', testStandard: 'ISO 6507-1', readings: [52], externalRef: 'L-1' });
    expect(issuePaths(r)).toEqual(['testStandard']);
  });
  it('names an implausible reading by index', () => {
    // 520 is an HV-sized number sent as HRC; the Rockwell C scale stops near 70 (common practice).
    const r = LabResultInput.safeParse({ kind: 'HARDNESS', scale: 'HRC', testStandard: 'ASTM E18', readings: [52, 520], externalRef: 'L-1' });
    expect(issuePaths(r)).toEqual(['readings.1']);
  });
  it('rejects Rp0.2 above Rm', () => {
    const r = LabResultInput.safeParse({ kind: 'TENSILE', testStandard: 'ISO 6892-1', rmMPa: 1000, rp02MPa: 1100, elongationPct: 8, externalRef: 'T-1' });
    expect(issuePaths(r)).toEqual(['rp02MPa']);
  });
  it('accepts retained austenite by XRD and impact energies', () => {
    expect(LabResultInput.safeParse({ kind: 'RETAINED_AUSTENITE', method: 'XRD', testStandard: 'ASTM E975', volumePct: 12.5, externalRef: 'R-1' }).success).toBe(true);
    expect(LabResultInput.safeParse({ kind: 'IMPACT', testStandard: 'ISO 148-1', notch: 'UNNOTCHED', energiesJ: [110, 104, 98], temperatureC: 22, externalRef: 'I-1' }).success).toBe(true);
  });
  it('rejects an unknown kind at kind', () => {
    expect(issuePaths(LabResultInput.safeParse({ kind: 'DENSITY', externalRef: 'x' }))).toEqual(['kind']);
  });
});

describe('BatchCreate and LoadEventInput', () => {
  const base = { code: 'L-1', heatNumber: 'H1', productSpecCode: 'P1', partCount: 10, weightKg: 100, sectionShape: 'PLATE', sectionSizeMm: 12 };
  it('needs exactly one of id or code for each reference', () => {
    expect(BatchCreate.safeParse({ ...base, lineCode: 'LINE-1' }).success).toBe(true);
    expect(issuePaths(BatchCreate.safeParse(base))).toEqual(['lineId']);
    expect(issuePaths(BatchCreate.safeParse({ ...base, lineCode: 'A', lineId: '6f1f0f47-8a3f-4d8e-9c43-2f6f7e0a1b2c' }))).toEqual(['lineId']);
  });
  it('rejects a fractional part count', () => {
    expect(issuePaths(BatchCreate.safeParse({ ...base, lineCode: 'A', partCount: 2.5 }))).toEqual(['partCount']);
  });
  it('rejects an unknown event kind', () => {
    expect(issuePaths(LoadEventInput.safeParse({ kind: 'QUENCHED', at: 1_772_348_400_000, equipmentCode: 'F1' }))).toEqual(['kind']);
  });
});

describe('Deviation query and actions', () => {
  it('parses comma lists and defaults the page size', () => {
    const q = DeviationQuery.parse({ status: 'OPEN,ACKNOWLEDGED', severity: 'MAJOR' });
    expect(q.status).toEqual(['OPEN', 'ACKNOWLEDGED']);
    expect(q.limit).toBe(50);
  });
  it('rejects an unknown status and a reversed time range', () => {
    expect(issuePaths(DeviationQuery.safeParse({ status: 'OPEN,DONE' }))).toEqual(['status.1']);
    expect(issuePaths(DeviationQuery.safeParse({ from: '2026-03-02T00:00:00Z', to: '2026-03-01T00:00:00Z' }))).toEqual(['to']);
  });
  it('requires the permit number for a concession', () => {
    expect(issuePaths(DeviationDisposition.safeParse({ disposition: 'CONCESSION', reason: 'customer accepts' }))).toEqual(['dispositionRef']);
    expect(DeviationDisposition.safeParse({ disposition: 'SCRAP', reason: 'cracked on immersion' }).success).toBe(true);
  });
});
