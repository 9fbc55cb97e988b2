import { describe, expect, it } from 'vitest';
import {
  computeDueItems,
  isEquipmentCompliantAt,
  type DueItem,
  type EquipmentRecord,
  type PyrometryHistory,
  type SensorRecord,
  type SensorUseRecord,
  type TestRecord,
} from './due.js';
import { applyReferenceOverlay } from './overlay.js';
import { AMS2750E, AMS2750G, CQI9_3 } from './reference/index.js';
import type { PyrometryReference } from './types.js';

const d = (iso: string) => new Date(iso);

const controlSensor: SensorRecord = { sensorId: 'F1-TC-ctl', use: 'control', thermocoupleType: 'K', expendable: false, installedAt: d('2024-01-10T06:00:00Z') };
const recordingSensor: SensorRecord = { sensorId: 'F1-TC-rec', use: 'recording', thermocoupleType: 'N', expendable: false, installedAt: d('2024-01-10T06:00:00Z') };

const furnace = (extra: Partial<EquipmentRecord> = {}): EquipmentRecord => ({
  equipmentId: 'F-1',
  furnaceClass: 2,
  instrumentationType: 'B',
  tusRequired: true,
  sensors: [controlSensor, recordingSensor],
  instruments: [
    { instrumentId: 'F1-ctl', use: 'control' },
    { instrumentId: 'F1-rec', use: 'recording' },
  ],
  ...extra,
});

const emptyHistory: PyrometryHistory = { tests: [], calibrations: [], sensorUses: [] };
const tus = (at: string, passed = true): TestRecord => ({ kind: 'tus', equipmentId: 'F-1', at: d(at), passed });
const sat = (at: string, passed = true, sensorId?: string): TestRecord => ({ kind: 'sat', equipmentId: 'F-1', at: d(at), passed, sensorId });
const item = (items: DueItem[], kind: DueItem['kind'], subjectId = 'F-1') => {
  const found = items.find((i) => i.kind === kind && i.subjectId === subjectId);
  if (!found) throw new Error(`no ${kind} item for ${subjectId}`);
  return found;
};

/**
 * AMS 2750G plus the plant's own entries for what practice.md does not give (so the compliance
 * checks below are not drowned in "no rule"): SAT weekly, instrument and control-sensor
 * calibration quarterly. These are test values of ours, not claims about the standard.
 */
function plantReference(): PyrometryReference {
  const r = applyReferenceOverlay(AMS2750G, {
    source: 'Test plant procedure PP-7',
    entries: [
      { item: 'satInterval', furnaceClass: 2, instrumentationType: 'B', value: { unit: 'day', count: 7 } },
      { item: 'instrumentCalibrationInterval', instrumentUse: 'control', value: { unit: 'month', count: 3 } },
      { item: 'instrumentCalibrationInterval', instrumentUse: 'recording', value: { unit: 'month', count: 3 } },
      { item: 'sensorCalibrationInterval', sensorUse: 'control', metal: 'base-metal', value: { unit: 'month', count: 3 } },
      { item: 'sensorCalibrationInterval', sensorUse: 'recording', metal: 'base-metal', value: { unit: 'month', count: 3 } },
    ],
  });
  if (!r.ok) throw new Error(JSON.stringify(r.errors));
  return r.reference;
}

// TUS interval class 2 type B monthly: practice.md §1.1 TUS examples [S10].
describe('TUS due dates, class 2 type B monthly ([S10]), counted per AMS 2750E §2.2.25 ([S8])', () => {
  const history = { ...emptyHistory, tests: [tus('2024-01-31T10:00:00Z')] };

  it('a survey on Jan 31 of a leap year is due Feb 29', () => {
    const t = item(computeDueItems(furnace(), history, d('2024-02-01T00:00:00Z'), AMS2750G), 'tus');
    expect(t).toMatchObject({ dueDate: '2024-02-29', status: 'ok', lastPassAt: d('2024-01-31T10:00:00Z') });
    expect(t.rules[0]).toMatchObject({ key: 'AMS2750G tusInterval class 2 type B', value: 'monthly', confirmed: true });
    expect(t.rules[0].note).toMatch(/\[S10\]/);
  });

  it('in a common year it is due Feb 28', () => {
    const t = item(computeDueItems(furnace(), { ...emptyHistory, tests: [tus('2023-01-31T10:00:00Z')] }, d('2023-02-28T12:00:00Z'), AMS2750G), 'tus');
    expect(t).toMatchObject({ dueDate: '2023-02-28', status: 'due-soon' });
    expect(t.reason).toMatch(/today/);
  });

  it('is ok up to 8 days before, due-soon from 7 days before through the due date, overdue the day after', () => {
    const at = (iso: string) => item(computeDueItems(furnace(), history, d(iso), AMS2750G), 'tus').status;
    expect(at('2024-02-21T23:59:59Z')).toBe('ok');
    expect(at('2024-02-22T00:00:00Z')).toBe('due-soon');
    expect(at('2024-02-29T23:59:59.999Z')).toBe('due-soon'); // on the due date: still on time
    expect(at('2024-03-01T00:00:00Z')).toBe('overdue');
    expect(item(computeDueItems(furnace(), history, d('2024-03-01T00:00:00Z'), AMS2750G), 'tus').causes).toEqual(['past-due-date']);
  });

  it('counts calendar days in the plant time zone', () => {
    // 23:30 UTC on Jan 31 is already Feb 1 in Berlin, so the survey is due Mar 1 there.
    const late = { ...emptyHistory, tests: [tus('2024-01-31T23:30:00Z')] };
    const berlin = { timeZone: 'Europe/Berlin' };
    expect(item(computeDueItems(furnace(), late, d('2024-03-01T22:59:00Z'), AMS2750G, berlin), 'tus')).toMatchObject({ dueDate: '2024-03-01', status: 'due-soon' });
    expect(item(computeDueItems(furnace(), late, d('2024-03-01T23:00:00Z'), AMS2750G, berlin), 'tus').status).toBe('overdue');
    expect(item(computeDueItems(furnace(), late, d('2024-03-01T23:00:00Z'), AMS2750G), 'tus').dueDate).toBe('2024-02-29');
  });

  it('a failure after the last pass is overdue at once; a later pass restarts the interval', () => {
    const failed = { ...emptyHistory, tests: [tus('2024-02-01T08:00:00Z'), tus('2024-02-10T08:00:00Z', false)] };
    const f = item(computeDueItems(furnace(), failed, d('2024-02-11T00:00:00Z'), AMS2750G), 'tus');
    expect(f).toMatchObject({ status: 'overdue', causes: ['last-result-failed'], lastFailAt: d('2024-02-10T08:00:00Z'), dueDate: '2024-03-01' });
    const fixed = { tests: [...failed.tests, tus('2024-02-12T08:00:00Z')], calibrations: [], sensorUses: [] };
    expect(item(computeDueItems(furnace(), fixed, d('2024-02-13T00:00:00Z'), AMS2750G), 'tus')).toMatchObject({ status: 'ok', dueDate: '2024-03-12', lastFailAt: null });
  });

  it('never surveyed is overdue; results after "now" do not count; no TUS item when the bath needs none', () => {
    expect(item(computeDueItems(furnace(), emptyHistory, d('2024-02-01T00:00:00Z'), AMS2750G), 'tus')).toMatchObject({
      status: 'overdue',
      causes: ['never-passed'],
      dueDate: null,
    });
    expect(item(computeDueItems(furnace(), history, d('2024-01-31T09:59:59Z'), AMS2750G), 'tus').causes).toEqual(['never-passed']);
    expect(computeDueItems(furnace({ tusRequired: false }), history, d('2024-02-01T00:00:00Z'), AMS2750G).some((i) => i.kind === 'tus')).toBe(false);
  });
});

describe('interval depends on class and instrumentation type', () => {
  it('class 5 type B is quarterly ([S10]): Nov 30 → Feb 29 in a leap year', () => {
    const t = item(computeDueItems(furnace({ furnaceClass: 5 }), { ...emptyHistory, tests: [tus('2023-11-30T08:00:00Z')] }, d('2024-01-01T00:00:00Z'), AMS2750G), 'tus');
    expect(t).toMatchObject({ dueDate: '2024-02-29', status: 'ok' });
  });

  it('class 2 type D has no TUS interval in practice.md: no-rule, not a guess', () => {
    const t = item(computeDueItems(furnace({ instrumentationType: 'D' }), { ...emptyHistory, tests: [tus('2024-01-31T10:00:00Z')] }, d('2024-02-01T00:00:00Z'), AMS2750G), 'tus');
    expect(t).toMatchObject({ status: 'no-rule', dueDate: null });
    expect(t.reason).toMatch(/no interval .* AMS2750G tusInterval class 2 type D/);
  });

  it('CQI-9 surveys at least annually (2nd edition errata [S20], unconfirmed for the 3rd): Feb 29 → Feb 28', () => {
    const t = item(computeDueItems(furnace(), { ...emptyHistory, tests: [tus('2024-02-29T08:00:00Z')] }, d('2025-02-28T08:00:00Z'), CQI9_3), 'tus');
    expect(t).toMatchObject({ dueDate: '2025-02-28', status: 'due-soon' });
    expect(t.rules[0].confirmed).toBe(false);
  });
});

describe('SAT due dates by day (weekly, a plant entry) per sensor', () => {
  it('weekly is 7 calendar days, same weekday; an equipment-wide SAT counts for every sensor', () => {
    const history = { ...emptyHistory, tests: [sat('2024-02-28T08:00:00Z', true, 'F1-TC-ctl'), sat('2024-02-26T08:00:00Z')] };
    const items = computeDueItems(furnace(), history, d('2024-03-06T20:00:00Z'), plantReference());
    expect(item(items, 'sat', 'F1-TC-ctl')).toMatchObject({ dueDate: '2024-03-06', status: 'due-soon' });
    expect(item(items, 'sat', 'F1-TC-rec')).toMatchObject({ dueDate: '2024-03-04', status: 'overdue' });
    expect(item(computeDueItems(furnace(), history, d('2024-03-07T00:00:00Z'), plantReference()), 'sat', 'F1-TC-ctl').status).toBe('overdue');
  });

  it('CQI-9 probe SAT is quarterly ([S17, S18]); without a method on the record there is no rule', () => {
    const history = { ...emptyHistory, tests: [sat('2024-01-15T08:00:00Z')] };
    expect(item(computeDueItems(furnace({ satMethod: 'probe' }), history, d('2024-02-01T00:00:00Z'), CQI9_3), 'sat', 'F1-TC-ctl').dueDate).toBe('2024-04-15');
    expect(item(computeDueItems(furnace(), history, d('2024-02-01T00:00:00Z'), CQI9_3), 'sat', 'F1-TC-ctl').status).toBe('no-rule');
  });
});

describe('calibration due dates', () => {
  // Test thermocouples: base metal every 3 months, noble metal every 6 (AMS 2750E Table 1 via PRI, [S6]).
  const testKit: EquipmentRecord = {
    ...furnace({ tusRequired: false, instruments: [{ instrumentId: 'FTI-1', use: 'field-test' }] }),
    sensors: [
      { sensorId: 'T-K1', use: 'tus-test', thermocoupleType: 'K', expendable: true, installedAt: d('2024-01-01T00:00:00Z') },
      { sensorId: 'T-S1', use: 'sat-test', thermocoupleType: 'S', expendable: false, installedAt: d('2024-01-01T00:00:00Z') },
    ],
  };
  const calibrated: PyrometryHistory = {
    ...emptyHistory,
    calibrations: [
      { subject: 'sensor', subjectId: 'T-K1', at: d('2023-11-30T09:00:00Z'), passed: true },
      { subject: 'sensor', subjectId: 'T-S1', at: d('2023-08-31T09:00:00Z'), passed: true },
      { subject: 'instrument', subjectId: 'FTI-1', at: d('2024-01-15T09:00:00Z'), passed: true },
    ],
  };

  it('base-metal test sensor quarterly, noble-metal semi-annual, both ending on Feb 29', () => {
    const items = computeDueItems(testKit, calibrated, d('2024-02-10T00:00:00Z'), AMS2750E);
    expect(item(items, 'sensor-calibration', 'T-K1')).toMatchObject({ dueDate: '2024-02-29', status: 'ok' });
    expect(item(items, 'sensor-calibration', 'T-K1').rules[0]).toMatchObject({ value: 'quarterly', confirmed: true });
    expect(item(items, 'sensor-calibration', 'T-S1')).toMatchObject({ dueDate: '2024-02-29', status: 'ok' });
    expect(item(items, 'sensor-calibration', 'T-S1').rules[0].value).toBe('semi-annual');
    // Field test instrument quarterly: practice.md §1.1 instruments [M], from memory.
    expect(item(items, 'instrument-calibration', 'FTI-1')).toMatchObject({ dueDate: '2024-04-15', status: 'ok' });
    expect(item(items, 'instrument-calibration', 'FTI-1').rules[0].confirmed).toBe(false);
  });

  it('a failed calibration makes the sensor overdue until it passes again', () => {
    const failed = { ...calibrated, calibrations: [...calibrated.calibrations, { subject: 'sensor' as const, subjectId: 'T-K1', at: d('2024-02-05T09:00:00Z'), passed: false }] };
    expect(item(computeDueItems(testKit, failed, d('2024-02-10T00:00:00Z'), AMS2750E), 'sensor-calibration', 'T-K1').causes).toEqual(['last-result-failed']);
  });

  it('control instruments have no interval in practice.md (no-rule); CQI-9 does not recalibrate base metal at all', () => {
    const items = computeDueItems(furnace(), emptyHistory, d('2024-02-10T00:00:00Z'), AMS2750G);
    expect(item(items, 'instrument-calibration', 'F1-ctl')).toMatchObject({ status: 'no-rule' });
    const cqi = computeDueItems(furnace(), emptyHistory, d('2024-02-10T00:00:00Z'), CQI9_3);
    expect(cqi.some((i) => i.kind === 'sensor-calibration')).toBe(false);
  });
});

// Sensor replacement: AMS 2750G Table 6 as summarised in practice.md §1.1 [S11]:
// ≤260 °C quarterly / any uses; 260–650 °C quarterly or 270 uses; 650–980 °C quarterly or 180 uses.
describe('sensor replacement by uses and age (AMS 2750G Table 6, [S11])', () => {
  const bathSensor: SensorRecord = { sensorId: 'B1-TC', use: 'control', thermocoupleType: 'K', expendable: false, installedAt: d('2024-01-10T06:00:00Z') };
  const bath = (sensors: SensorRecord[] = [bathSensor]): EquipmentRecord => ({ ...furnace({ equipmentId: 'B-1', tusRequired: false, instruments: [] }), sensors });
  const uses = (count: number, maxTempC: number, sensorId = 'B1-TC', from = Date.parse('2024-01-11T00:00:00Z')): SensorUseRecord[] =>
    Array.from({ length: count }, (_, k) => ({ sensorId, at: new Date(from + k * 60_000), maxTempC }));
  const replacement = (history: PyrometryHistory, now = d('2024-02-01T00:00:00Z'), eq = bath()) => item(computeDueItems(eq, history, now, AMS2750G), 'sensor-replacement', eq.sensors[0].sensorId);

  it('260–650 °C band: 200 uses ok, 269 due-soon, 270 may not be used again', () => {
    expect(replacement({ ...emptyHistory, sensorUses: uses(200, 360) })).toMatchObject({ status: 'ok', usesSoFar: 200, usesLimit: 270 });
    expect(replacement({ ...emptyHistory, sensorUses: uses(269, 360) })).toMatchObject({ status: 'due-soon', causes: ['uses-nearly-reached'] });
    const full = replacement({ ...emptyHistory, sensorUses: uses(270, 360) });
    expect(full).toMatchObject({ status: 'overdue', causes: ['use-limit-reached'] });
    expect(full.reason).toMatch(/270 of 270 uses .* may not be used again/);
    expect(full.rules[0]).toMatchObject({ key: 'AMS2750G sensorReplacement nonexpendable base-metal band ≤650 °C uses', value: '270', confirmed: true });
  });

  it('one hot use moves the sensor into the 650–980 °C band (180 uses)', () => {
    const r = replacement({ ...emptyHistory, sensorUses: [...uses(199, 360), { sensorId: 'B1-TC', at: d('2024-01-30T00:00:00Z'), maxTempC: 870 }] });
    expect(r).toMatchObject({ status: 'overdue', usesSoFar: 200, usesLimit: 180 });
  });

  it('band edges are upper-inclusive: 260 °C is the any-uses band, 260.1 °C is not', () => {
    expect(replacement({ ...emptyHistory, sensorUses: uses(1000, 260) })).toMatchObject({ status: 'ok', usesLimit: 'unlimited' });
    expect(replacement({ ...emptyHistory, sensorUses: uses(1000, 260.1) })).toMatchObject({ status: 'overdue', usesLimit: 270 });
  });

  it('quarterly age from the install date: Jan 10 → Apr 10, overdue Apr 11', () => {
    const few = { ...emptyHistory, sensorUses: uses(5, 300) };
    expect(replacement(few, d('2024-04-10T23:00:00Z'))).toMatchObject({ dueDate: '2024-04-10', status: 'due-soon' });
    const old = replacement(few, d('2024-04-11T00:00:00Z'));
    expect(old).toMatchObject({ status: 'overdue', causes: ['past-due-date'] });
    expect(old.reason).toMatch(/installed 2024-01-10, quarterly/);
  });

  it('uses before the install date belong to an earlier sensor and are not counted', () => {
    const r = replacement({ ...emptyHistory, sensorUses: uses(300, 360, 'B1-TC', Date.parse('2023-12-01T00:00:00Z')) });
    expect(r.usesSoFar).toBe(0);
  });

  it('no install date on record cannot show the age limit; expendable sensors have no table in practice.md', () => {
    expect(replacement(emptyHistory, undefined, bath([{ ...bathSensor, installedAt: null }]))).toMatchObject({ status: 'overdue', causes: ['record-incomplete'] });
    expect(replacement(emptyHistory, undefined, bath([{ ...bathSensor, expendable: true }]))).toMatchObject({ status: 'no-rule' });
  });

  it('an expiry date on the sensor record is its own item: valid through that day', () => {
    const eq = bath([{ ...bathSensor, expiresOn: '2024-03-31' }]);
    const expiry = (iso: string) => item(computeDueItems(eq, emptyHistory, d(iso), AMS2750G), 'sensor-expiry', 'B1-TC');
    expect(expiry('2024-03-31T23:59:59Z')).toMatchObject({ dueDate: '2024-03-31', status: 'due-soon' });
    expect(expiry('2024-04-01T00:00:00Z').status).toBe('overdue');
    expect(isEquipmentCompliantAt(eq, emptyHistory, d('2024-04-01T00:00:00Z'), AMS2750G, { noRule: 'ignore' }).findings).toMatchObject([
      { kind: 'sensor-expired', subjectId: 'B1-TC' },
    ]);
    expect(() => computeDueItems(bath([{ ...bathSensor, expiresOn: '2024-02-30' }]), emptyHistory, d('2024-02-01T00:00:00Z'), AMS2750G)).toThrow(
      /equipment\.sensors\[0\]\.expiresOn/,
    );
  });

  it('retired sensors have no due items', () => {
    const items = computeDueItems(bath([{ ...bathSensor, retiredAt: d('2024-01-20T00:00:00Z') }]), emptyHistory, d('2024-02-01T00:00:00Z'), AMS2750G);
    expect(items).toEqual([]);
  });
});

describe('isEquipmentCompliantAt (a batch running at t)', () => {
  const calibrations = [
    { subject: 'sensor' as const, subjectId: 'F1-TC-ctl', at: d('2024-01-10T05:00:00Z'), passed: true },
    { subject: 'sensor' as const, subjectId: 'F1-TC-rec', at: d('2024-01-10T05:00:00Z'), passed: true },
    { subject: 'instrument' as const, subjectId: 'F1-ctl', at: d('2024-01-10T05:00:00Z'), passed: true },
    { subject: 'instrument' as const, subjectId: 'F1-rec', at: d('2024-01-10T05:00:00Z'), passed: true },
  ];
  const good: PyrometryHistory = {
    tests: [tus('2024-02-01T08:00:00Z'), sat('2024-02-05T08:00:00Z')],
    calibrations,
    sensorUses: [],
  };
  const t = d('2024-02-08T12:00:00Z');

  it('is compliant when everything is within its interval', () => {
    const r = isEquipmentCompliantAt(furnace(), good, t, plantReference());
    expect(r.findings).toEqual([]);
    expect(r.compliant).toBe(true);
  });

  it('reports values missing from the reference set as findings unless told to ignore them', () => {
    const r = isEquipmentCompliantAt(furnace(), good, t, AMS2750G);
    expect(r.compliant).toBe(false);
    expect(new Set(r.findings.map((f) => f.kind))).toEqual(new Set(['no-rule']));
    expect(r.findings.some((f) => f.itemKind === 'sat' && /AMS2750G satInterval class 2 type B/.test(f.reason))).toBe(true);
    expect(isEquipmentCompliantAt(furnace(), good, t, AMS2750G, { noRule: 'ignore' }).compliant).toBe(true);
  });

  it('an overdue survey is a finding for the next batch', () => {
    const r = isEquipmentCompliantAt(furnace(), good, d('2024-03-02T06:00:00Z'), plantReference());
    const tusFinding = r.findings.find((f) => f.itemKind === 'tus');
    expect(tusFinding).toMatchObject({ kind: 'overdue', equipmentId: 'F-1', subjectId: 'F-1' });
    expect(tusFinding?.reason).toMatch(/was due on 2024-03-01/);
    expect(tusFinding?.rules[0].key).toBe('AMS2750G+overlay(Test plant procedure PP-7) tusInterval class 2 type B');
  });

  it('a failed accuracy test is a finding; only results up to t count', () => {
    const failedAfter = { ...good, tests: [...good.tests, sat('2024-02-08T12:00:00.001Z', false, 'F1-TC-ctl')] };
    expect(isEquipmentCompliantAt(furnace(), failedAfter, t, plantReference()).compliant).toBe(true);
    const failedAt = { ...good, tests: [...good.tests, sat('2024-02-08T12:00:00Z', false, 'F1-TC-ctl')] };
    const r = isEquipmentCompliantAt(furnace(), failedAt, t, plantReference());
    expect(r.findings).toMatchObject([{ kind: 'failed', itemKind: 'sat', subjectId: 'F1-TC-ctl' }]);
  });

  it('a sensor at its use limit: the batch would exceed it; its own use at t is not counted twice', () => {
    // Control sensor used at 870 °C: 650–980 °C band, 180 uses ([S11]).
    const used = (n: number, extraAtT = false): PyrometryHistory => ({
      ...good,
      sensorUses: [
        ...Array.from({ length: n }, (_, k) => ({ sensorId: 'F1-TC-ctl', at: new Date(Date.parse('2024-01-11T00:00:00Z') + k * 3_600_000), maxTempC: 870 })),
        ...(extraAtT ? [{ sensorId: 'F1-TC-ctl', at: t, maxTempC: 870 }] : []),
      ],
    });
    expect(isEquipmentCompliantAt(furnace(), used(179, true), t, plantReference()).compliant).toBe(true);
    const r = isEquipmentCompliantAt(furnace(), used(180, true), t, plantReference());
    expect(r.findings).toMatchObject([{ kind: 'sensor-use-limit', itemKind: 'sensor-replacement', subjectId: 'F1-TC-ctl' }]);
    expect(r.findings[0].reason).toMatch(/this batch would be use 181 of 180/);
  });

  it('a sensor past its age limit is a finding', () => {
    const late = { ...good, tests: [tus('2024-04-05T08:00:00Z'), sat('2024-04-09T08:00:00Z')], calibrations: calibrations.map((c) => ({ ...c, at: d('2024-04-01T00:00:00Z') })) };
    const r = isEquipmentCompliantAt(furnace(), late, d('2024-04-11T08:00:00Z'), plantReference());
    expect(r.findings.map((f) => [f.kind, f.subjectId])).toEqual([
      ['sensor-age-limit', 'F1-TC-ctl'],
      ['sensor-age-limit', 'F1-TC-rec'],
    ]);
  });

  it('bad instants are input errors with the field path', () => {
    expect(() => isEquipmentCompliantAt(furnace(), { ...good, tests: [{ ...tus('2024-02-01T08:00:00Z'), at: d('x') }] }, t, AMS2750G)).toThrow(/history\.tests\[0\]\.at/);
  });
});
