import { describe, expect, it } from 'vitest';
import { WEEKLY } from './calendar.js';
import { applyReferenceOverlay, type ReferenceOverlay } from './overlay.js';
import { AMS2750E, AMS2750G, CQI9_4, lookupContext, lookupKeyed } from './reference/index.js';
import type { PyrometryReference } from './types.js';

const SOURCE = 'Customer spec HT-100 rev C §4.2';

function accepted(base: PyrometryReference, entries: ReferenceOverlay['entries']): PyrometryReference {
  const r = applyReferenceOverlay(base, { source: SOURCE, entries });
  if (!r.ok) throw new Error(`refused: ${r.errors.map((e) => `${e.path} ${e.message}`).join('; ')}`);
  return r.reference;
}

function refused(base: PyrometryReference, entries: ReferenceOverlay['entries']) {
  const r = applyReferenceOverlay(base, { source: SOURCE, entries });
  if (r.ok) throw new Error('accepted a looser overlay');
  return r.errors;
}

describe('customer overlays: stricter only', () => {
  it("accepts ±5.0 °C for class 2 (the primes' alternative in practice.md §1.1 [S2]) and leaves the base set untouched", () => {
    const ref = accepted(AMS2750G, [{ item: 'uniformityTolerance', furnaceClass: 2, value: { plusMinusC: 5.0 } }]);
    const cell = lookupKeyed(ref, 'uniformityTolerance', ref.uniformityTolerance, lookupContext(2, 'B')).sourced;
    // The °F figure is derived from °C when the customer gives only °C: 5.0 °C = 9.0 °F.
    expect(cell).toMatchObject({ value: { plusMinusC: 5.0, plusMinusF: 9.0 }, confirmed: true });
    expect(cell.note).toMatch(/customer overlay "Customer spec HT-100 rev C §4.2".*stricter than AMS2750G/);
    expect(ref.id).toBe(`AMS2750G+overlay(${SOURCE})`);
    expect(ref.overlays).toEqual([SOURCE]);
    // Other classes and the base set are unchanged.
    expect(lookupKeyed(ref, 'uniformityTolerance', ref.uniformityTolerance, lookupContext(3, 'B')).sourced.value?.plusMinusC).toBe(8);
    expect(lookupKeyed(AMS2750G, 'uniformityTolerance', AMS2750G.uniformityTolerance, lookupContext(2, 'B')).sourced.value?.plusMinusC).toBe(6);
  });

  it('rejects a looser tolerance, naming the entry and both values', () => {
    const errors = refused(AMS2750G, [{ item: 'uniformityTolerance', furnaceClass: 2, value: { plusMinusC: 7.0 } }]);
    expect(errors).toEqual([
      { path: 'entries[0].value', message: expect.stringMatching(/±7 °C \/ ±12\.6 °F is looser than AMS2750G uniformityTolerance class 2 ±6 °C \/ ±10 °F/) },
    ]);
  });

  it('is all or nothing: one looser entry refuses the whole overlay', () => {
    const errors = refused(AMS2750G, [
      { item: 'uniformityTolerance', furnaceClass: 2, value: { plusMinusC: 5.0 } },
      { item: 'satDifferenceLimit', furnaceClass: 2, value: { plusMinusC: 2.0 } },
    ]);
    expect(errors.map((e) => e.path)).toEqual(['entries[1].value']);
  });

  it('accepts a shorter SAT interval and rejects a longer one (class 3 type B monthly under E, [S8])', () => {
    const weekly = accepted(AMS2750E, [{ item: 'satInterval', furnaceClass: 3, instrumentationType: 'B', value: WEEKLY }]);
    expect(lookupKeyed(weekly, 'satInterval', weekly.satInterval, lookupContext(3, 'B')).sourced.value).toEqual(WEEKLY);
    const errors = refused(AMS2750E, [{ item: 'satInterval', furnaceClass: 3, instrumentationType: 'B', value: { unit: 'month', count: 2 } }]);
    expect(errors[0].message).toMatch(/every 2 months is looser than AMS2750E satInterval class 3 type B monthly/);
  });

  it('accepts 28 days for a monthly interval but refuses 30 days, which is longer in February', () => {
    accepted(AMS2750E, [{ item: 'satInterval', furnaceClass: 3, instrumentationType: 'B', value: { unit: 'day', count: 28 } }]);
    const errors = refused(AMS2750E, [{ item: 'satInterval', furnaceClass: 3, instrumentationType: 'B', value: { unit: 'day', count: 30 } }]);
    expect(errors[0].message).toMatch(/cannot be compared .* state it in months/);
  });

  it('fills values the reference set does not give (TUS interval for class 2 type D)', () => {
    const ref = accepted(AMS2750G, [{ item: 'tusInterval', furnaceClass: 2, instrumentationType: 'D', value: { unit: 'month', count: 1 } }]);
    const cell = lookupKeyed(ref, 'tusInterval', ref.tusInterval, lookupContext(2, 'D')).sourced;
    expect(cell).toMatchObject({ value: { unit: 'month', count: 1 }, confirmed: true });
    expect(cell.note).toMatch(/fills a value AMS2750G does not give/);
  });

  it('a blanket entry applies to every cell and is refused where any cell is already stricter', () => {
    // Quarterly for all cells: class 2 type B is monthly ([S10]) so quarterly is looser there.
    const errors = refused(AMS2750G, [{ item: 'tusInterval', value: { unit: 'month', count: 3 } }]);
    expect(errors.map((e) => e.message)).toEqual([expect.stringMatching(/quarterly is looser than AMS2750G tusInterval class 2 type B monthly/)]);
    const monthly = accepted(AMS2750G, [{ item: 'tusInterval', value: { unit: 'month', count: 1 } }]);
    expect(lookupKeyed(monthly, 'tusInterval', monthly.tusInterval, lookupContext(6, 'E')).sourced.value).toEqual({ unit: 'month', count: 1 });
  });

  it('treats a percentage alternative where the standard has none as looser', () => {
    // SAT class 2 has no percentage in our data (practice.md §1.1 SAT), so "or 0.2 %" widens it at 870 °C.
    const errors = refused(AMS2750G, [{ item: 'satDifferenceLimit', furnaceClass: 2, value: { plusMinusC: 1.5, pctOfReading: 0.2 } }]);
    expect(errors[0].message).toMatch(/0\.2 % of reading where AMS2750G satDifferenceLimit class 2 allows no percentage/);
    accepted(AMS2750G, [{ item: 'satDifferenceLimit', furnaceClass: 2, value: { plusMinusC: 1.5 } }]);
  });

  it('tightens sensor use limits per Table 6 band ([S11]) and refuses more uses', () => {
    const ref = accepted(AMS2750G, [{ item: 'sensorReplacement', upToC: 650, maxUses: 200 }]);
    expect(ref.sensorReplacement[0].bands[1].maxUses).toMatchObject({ value: 200, confirmed: true });
    expect(refused(AMS2750G, [{ item: 'sensorReplacement', upToC: 650, maxUses: 300 }])[0]).toMatchObject({
      path: 'entries[0].maxUses',
      message: expect.stringMatching(/300 uses is looser than AMS2750G .* 270 uses/),
    });
    expect(refused(AMS2750G, [{ item: 'sensorReplacement', upToC: 600, maxUses: 100 }])[0].message).toMatch(/no band ending at 600/);
    // A use limit on the "any number of uses" band is stricter.
    expect(accepted(AMS2750G, [{ item: 'sensorReplacement', upToC: 260, maxUses: 500 }]).sensorReplacement[0].bands[0].maxUses.value).toBe(500);
  });

  it('requiring a calibration the standard does not require is stricter (CQI-9 base metal)', () => {
    const ref = accepted(CQI9_4, [{ item: 'sensorCalibrationInterval', sensorUse: 'control', metal: 'base-metal', value: { unit: 'month', count: 6 } }]);
    expect(ref.sensorCalibrationInterval.control['base-metal'].value).toEqual({ unit: 'month', count: 6 });
  });

  it('refuses selectors the standard does not key by, and missing sources', () => {
    expect(refused(CQI9_4, [{ item: 'satDifferenceLimit', furnaceClass: 2, value: { plusMinusC: 1 } }])[0]).toMatchObject({
      path: 'entries[0].furnaceClass',
      message: expect.stringMatching(/CQI-9-4 keys satDifferenceLimit by SAT method/),
    });
    expect(applyReferenceOverlay(AMS2750G, { source: ' ', entries: [] })).toEqual({
      ok: false,
      errors: [{ path: 'source', message: 'name the customer document the limits come from' }],
    });
  });

  it('stacks overlays and keeps their sources in order', () => {
    const first = accepted(AMS2750G, [{ item: 'satProbeTipDistanceMaxMm', value: 50 }]);
    const second = applyReferenceOverlay(first, { source: 'PO 4711 note 3', entries: [{ item: 'satProbeTipDistanceMaxMm', value: 40 }] });
    expect(second.ok && second.reference.overlays).toEqual([SOURCE, 'PO 4711 note 3']);
    expect(applyReferenceOverlay(first, { source: 'PO 4712', entries: [{ item: 'satProbeTipDistanceMaxMm', value: 60 }] }).ok).toBe(false);
  });
});
