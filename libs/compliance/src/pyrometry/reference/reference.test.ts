import { describe, expect, it } from 'vitest';
import { FURNACE_CLASSES, INSTRUMENTATION_TYPES, type PyrometryReference, type Sourced } from '../types.js';
import {
  AMS2750E,
  AMS2750F,
  AMS2750G,
  AMS2750H,
  CQI9_3,
  CQI9_4,
  CQI9_DIFFERENCES_FROM_AMS2750,
  FROM_MEMORY,
  findPyrometryReference,
  lookupContext,
  listReferenceValues,
  lookupKeyed,
  PYROMETRY_REFERENCES,
  THERMOCOUPLE_METAL,
  THERMOCOUPLE_WIRE_TOLERANCE,
} from './index.js';

/** Every Sourced value anywhere in a reference set, with its path. */
function sourcedValues(node: unknown, path = ''): { path: string; s: Sourced<unknown> }[] {
  if (node === null || typeof node !== 'object') return [];
  const o = node as Record<string, unknown>;
  if ('confirmed' in o && 'note' in o && 'value' in o) return [{ path, s: o as unknown as Sourced<unknown> }];
  return Object.entries(o).flatMap(([k, v]) => sourcedValues(v, `${path}.${k}`));
}

describe('reference data provenance', () => {
  it.each(PYROMETRY_REFERENCES.map((r) => [r.id, r] as const))('%s: every value says where it came from', (_id, ref: PyrometryReference) => {
    const values = sourcedValues(ref);
    expect(values.length).toBeGreaterThan(60);
    for (const { path, s } of values) {
      expect(s.note, path).toMatch(/\S{3}/);
      if (s.confirmed) {
        // A confirmed value cites a source tag from practice.md.
        expect(s.note, path).toMatch(/\[S\d+/);
        expect(s.value, path).not.toBeNull();
      } else {
        // An unconfirmed value tells the plant to check its copy (or that it is not given at all).
        expect(s.note, path).toMatch(/confirm against the plant's copy of the standard|enter it from the plant's copy/);
      }
    }
  });

  it('marks [M] values from memory and [S] values confirmed, per revision', () => {
    // Furnace class tolerances: practice.md §1.1 table, "±°C (per F/G)" [S2, S70].
    const g2 = lookupKeyed(AMS2750G, 'uniformityTolerance', AMS2750G.uniformityTolerance, lookupContext(2, 'B')).sourced;
    expect(g2).toMatchObject({ value: { plusMinusC: 6.0, plusMinusF: 10.0 }, confirmed: true });
    expect(g2.note).toMatch(/\[S2, S70\]/);
    // The same number under H is a placeholder: H's class table was not seen.
    const h2 = lookupKeyed(AMS2750H, 'uniformityTolerance', AMS2750H.uniformityTolerance, lookupContext(2, 'B')).sourced;
    expect(h2).toMatchObject({ value: { plusMinusC: 6.0 }, confirmed: false });
    expect(h2.note).toMatch(/seen for AMS 2750 F\/G only, not for H/);
    // SAT limit class 1 ±1.1 °C is [M] in practice.md §1.1 SAT.
    const sat1 = lookupKeyed(AMS2750E, 'satDifferenceLimit', AMS2750E.satDifferenceLimit, lookupContext(1, 'A')).sourced;
    expect(sat1.confirmed).toBe(false);
    expect(sat1.note).toContain(FROM_MEMORY);
    // SAT limit class 2 ±3.0 °F is confirmed for E only [S9].
    const satE2 = lookupKeyed(AMS2750E, 'satDifferenceLimit', AMS2750E.satDifferenceLimit, lookupContext(2, 'A')).sourced;
    expect(satE2).toMatchObject({ value: { plusMinusC: 1.7, plusMinusF: 3 }, confirmed: true });
    const satH2 = lookupKeyed(AMS2750H, 'satDifferenceLimit', AMS2750H.satDifferenceLimit, lookupContext(2, 'A')).sourced;
    expect(satH2.confirmed).toBe(false);
    expect(satH2.note).toMatch(/H changed SAT tables 11 and 12 \[S3\]/);
  });

  it('gives Table 6 sensor replacement limits as confirmed for G only ([S11])', () => {
    const bands = AMS2750G.sensorReplacement[0].bands;
    expect(bands.map((b) => [b.upToC, b.maxUses.value])).toEqual([
      [260, 'unlimited'],
      [650, 270],
      [980, 180],
      [1205, 90],
      [1260, 10],
      [null, 1],
    ]);
    expect(bands.slice(0, 5).every((b) => b.maxUses.confirmed && b.maxAge.confirmed)).toBe(true);
    expect(AMS2750G.sensorReplacement[0].appliesTo).toEqual({ metal: 'base-metal', expendable: false });
    expect(AMS2750H.sensorReplacement[0].bands[1].maxUses).toMatchObject({ value: 270, confirmed: false });
    expect(AMS2750F.sensorReplacement[0].bands[1].maxUses.confirmed).toBe(false);
    // Above 1260 °C practice.md gives "one use" only: no age value is invented.
    expect(bands[5].maxAge.value).toBeNull();
  });

  it('leaves values practice.md does not give as null, never as a guess', () => {
    expect(AMS2750G.sensorAccuracy['primary-standard'].value).toBeNull();
    expect(AMS2750G.sensorAccuracy.load.value).toBeNull();
    expect(AMS2750G.instrumentCalibrationInterval.control.value).toBeNull();
    expect(AMS2750G.reducedFrequency.value).toBeNull();
    // Only class 3 type B has an SAT interval in practice.md (E, monthly [S8]).
    let given = 0;
    for (const c of FURNACE_CLASSES) {
      for (const t of INSTRUMENTATION_TYPES) {
        if (lookupKeyed(AMS2750E, 'satInterval', AMS2750E.satInterval, lookupContext(c, t)).sourced.value !== null) given += 1;
      }
    }
    expect(given).toBe(1);
    expect(lookupKeyed(AMS2750E, 'satInterval', AMS2750E.satInterval, lookupContext(3, 'B')).sourced).toMatchObject({
      value: { unit: 'month', count: 1 },
      confirmed: true,
    });
  });

  it('keeps CQI-9 keyed by SAT method, with its own limits where they differ', () => {
    // practice.md §1.2 SAT: probe about ±5 °C and comparative ±1 °C (3rd edition, [S18]).
    expect(lookupKeyed(CQI9_3, 'satDifferenceLimit', CQI9_3.satDifferenceLimit, lookupContext(5, 'D', 'probe')).sourced).toMatchObject({
      value: { plusMinusC: 5 },
      confirmed: true,
    });
    expect(lookupKeyed(CQI9_3, 'satDifferenceLimit', CQI9_3.satDifferenceLimit, lookupContext(5, 'D', 'comparative')).sourced.value?.plusMinusC).toBe(1);
    // For the 4th edition the same numbers are unconfirmed.
    expect(lookupKeyed(CQI9_4, 'satDifferenceLimit', CQI9_4.satDifferenceLimit, lookupContext(5, 'D', 'probe')).sourced.confirmed).toBe(false);
    // Without a method the limit cannot be chosen.
    expect(lookupKeyed(CQI9_4, 'satDifferenceLimit', CQI9_4.satDifferenceLimit, lookupContext(5, 'D')).sourced.value).toBeNull();
    // 50 mm tip distance vs AMS 76 mm [S13, S14].
    expect(CQI9_4.satProbeTipDistanceMaxMm.value).toBe(50);
    expect(AMS2750G.satProbeTipDistanceMaxMm.value).toBe(76);
    // Base-metal thermocouples are replaced, not recalibrated [S25].
    expect(CQI9_3.sensorCalibrationInterval.control['base-metal'].value).toBe('not-required');
    expect(CQI9_DIFFERENCES_FROM_AMS2750.length).toBeGreaterThanOrEqual(8);
  });

  it('finds sets by standard and revision', () => {
    expect(findPyrometryReference('AMS2750', 'G')).toBe(AMS2750G);
    expect(findPyrometryReference('CQI-9', '4')).toBe(CQI9_4);
    expect(findPyrometryReference('AMS2750', 'D')).toBeUndefined();
  });

  it('classifies thermocouple metals and wire tolerances as practice.md gives them', () => {
    // Noble metal B, R, S: practice.md §1.2 [S25].
    expect(Object.entries(THERMOCOUPLE_METAL).filter(([, m]) => m === 'noble-metal').map(([t]) => t).sort()).toEqual(['B', 'R', 'S']);
    // ASTM E230 / IEC 60584 via practice.md §1.1 [S74].
    expect(THERMOCOUPLE_WIRE_TOLERANCE.K.standard.value).toEqual({ plusMinusC: 2.2, plusMinusF: null, pctOfReading: 0.75 });
    expect(THERMOCOUPLE_WIRE_TOLERANCE.N.special.value).toEqual({ plusMinusC: 1.1, plusMinusF: null, pctOfReading: 0.4 });
    expect(THERMOCOUPLE_WIRE_TOLERANCE.J.standard.value).toEqual(THERMOCOUPLE_WIRE_TOLERANCE.K.standard.value);
    expect(THERMOCOUPLE_WIRE_TOLERANCE.S.standard.value?.pctOfReading).toBe(0.25);
    expect(THERMOCOUPLE_WIRE_TOLERANCE.T.standard.value).toBeNull();
  });
});

describe('listReferenceValues', () => {
  it('lists every value with its path so a screen can show what is unconfirmed', () => {
    const all = listReferenceValues(AMS2750G);
    expect(all.find((v) => v.path === 'uniformityTolerance.byClass.2')).toMatchObject({ value: { plusMinusC: 6, plusMinusF: 10 }, confirmed: true });
    expect(all.find((v) => v.path === 'satDifferenceLimit.byClass.1')).toMatchObject({ confirmed: false });
    expect(all.find((v) => v.path === 'sensorReplacement.0.bands.1.maxUses')).toMatchObject({ value: 270, confirmed: true });
    const confirmed = all.filter((v) => v.confirmed).length;
    expect(confirmed).toBeGreaterThan(10);
    expect(all.length - confirmed).toBeGreaterThan(confirmed); // most of the class × type tables are not in practice.md
  });
});
