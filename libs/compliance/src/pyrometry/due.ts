// Due dates for every periodic test, calibration and sensor replacement of one piece of
// equipment, computed from its records and history against a reference set; and whether the
// equipment may run a batch at a given instant.
//
// Semantics (ours, stated once here and tested):
// - An interval counts from the calendar date (in the plant's time zone) of the last *passing*
//   result, with the [S8] calendar rules in ./calendar.ts. The work is on time through the whole
//   due date; the day after, it is overdue.
// - A failure after the last pass makes the item overdue at once: the equipment is not qualified
//   until a passing result (practice.md §1.1 TUS "Failure" [M]).
// - Never passed = overdue: new equipment or a new sensor needs its first result before use.
// - A value the reference set does not give yields status 'no-rule' rather than a guess; the
//   compliance check reports it as a finding unless told otherwise, because compliance cannot be
//   shown against a rule nobody has entered.
// - Sensor use limits: uses are counted from the install date; the band is chosen by the highest
//   use temperature recorded for the sensor (conservative: one hot use puts the sensor in the hotter
//   band's lower use limit). When uses so far ≥ the limit, the sensor may not be used again.

import { addDays, addInterval, daysBetween, describeInterval, localDateOf, type CalendarDate } from './calendar.js';
import { PyrometryInputError, requireInstant } from './errors.js';
import { lookupKeyed } from './reference/index.js';
import { THERMOCOUPLE_METAL } from './reference/thermocouples.js';
import type {
  CalibrationIntervalValue,
  FurnaceClass,
  InstrumentationType,
  InstrumentUse,
  Interval,
  PyrometryReference,
  SatMethod,
  SensorReplacementBand,
  SensorUse,
  Sourced,
  ThermocoupleType,
  UsesLimit,
} from './types.js';

export interface SensorRecord {
  readonly sensorId: string;
  readonly use: SensorUse;
  readonly thermocoupleType: ThermocoupleType;
  readonly expendable: boolean;
  /** When it was put in service; age limits count from this date. */
  readonly installedAt: Date | null;
  /** When it was taken out of service; a retired sensor has no due items. */
  readonly retiredAt?: Date | null;
  /**
   * Last calendar day the sensor may be used, when its certificate or the plant sets one
   * (independent of the standard's age and use limits, which are computed separately).
   */
  readonly expiresOn?: CalendarDate | null;
}

export interface InstrumentRecord {
  readonly instrumentId: string;
  readonly use: InstrumentUse;
  readonly retiredAt?: Date | null;
}

export interface EquipmentRecord {
  readonly equipmentId: string;
  readonly furnaceClass: FurnaceClass;
  readonly instrumentationType: InstrumentationType;
  /** Needed where the reference keys SAT by method (CQI-9). */
  readonly satMethod?: SatMethod;
  /**
   * Whether the equipment needs uniformity surveys. An austempering bath may count as a salt bath
   * (surveys required) or as a controlled-temperature quench bath (AMS 2750H Table 17 excludes
   * those); practice.md §1.1 makes it a setting per bath agreed with the customer [S3, M].
   */
  readonly tusRequired: boolean;
  readonly sensors: readonly SensorRecord[];
  readonly instruments: readonly InstrumentRecord[];
}

export interface TestRecord {
  readonly kind: 'sat' | 'tus';
  readonly equipmentId: string;
  /** The sensor a SAT tested; absent = a SAT of the whole equipment (counts for every sensor). */
  readonly sensorId?: string | null;
  readonly at: Date;
  readonly passed: boolean;
  readonly testId?: string;
}

export interface CalibrationRecord {
  readonly subject: 'sensor' | 'instrument';
  readonly subjectId: string;
  readonly at: Date;
  readonly passed: boolean;
  readonly certificateId?: string;
}

export interface SensorUseRecord {
  readonly sensorId: string;
  /** Start of the use (batch start); the compliance check counts uses strictly before t. */
  readonly at: Date;
  /** Highest temperature of this use; picks the replacement band. */
  readonly maxTempC: number;
  readonly batchId?: string;
}

export interface PyrometryHistory {
  readonly tests: readonly TestRecord[];
  readonly calibrations: readonly CalibrationRecord[];
  readonly sensorUses: readonly SensorUseRecord[];
}

export type DueItemKind = 'tus' | 'sat' | 'sensor-calibration' | 'instrument-calibration' | 'sensor-replacement' | 'sensor-expiry';
export type DueStatus = 'ok' | 'due-soon' | 'overdue' | 'no-rule';
export type DueCause =
  | 'within-interval'
  | 'due-soon'
  | 'past-due-date'
  | 'last-result-failed'
  | 'never-passed'
  | 'use-limit-reached'
  | 'uses-nearly-reached'
  | 'record-incomplete'
  | 'no-rule';

/** The reference value an item was computed with, so a screen can show "which rule". */
export interface RuleUsed {
  readonly key: string;
  readonly value: string;
  readonly confirmed: boolean;
  readonly note: string;
}

export interface DueItem {
  readonly kind: DueItemKind;
  readonly equipmentId: string;
  /** equipmentId for a survey, sensorId or instrumentId otherwise. */
  readonly subjectId: string;
  readonly dueDate: CalendarDate | null;
  readonly status: DueStatus;
  readonly causes: readonly DueCause[];
  readonly reason: string;
  readonly lastPassAt: Date | null;
  readonly lastFailAt: Date | null;
  readonly usesSoFar?: number;
  readonly usesLimit?: UsesLimit | null;
  readonly rules: readonly RuleUsed[];
}

export interface DueOptions {
  /** IANA time zone of the plant; calendar dates are taken there. Default 'UTC'. */
  readonly timeZone?: string;
  /** An item is 'due-soon' from this many days before its due date. Default 7 (our choice). */
  readonly dueSoonDays?: number;
  /** A use limit is 'due-soon' with this many uses or fewer left. Default 10 % of the limit, at least 1 (our choice). */
  readonly dueSoonUses?: number;
}

const STATUS_RANK: Record<DueStatus, number> = { ok: 0, 'due-soon': 1, 'no-rule': 2, overdue: 3 };

function intervalRule(key: string, sourced: Sourced<CalibrationIntervalValue>): RuleUsed {
  const v = sourced.value;
  return {
    key,
    value: v === null ? 'not given' : v === 'not-required' ? 'not required' : describeInterval(v),
    confirmed: sourced.confirmed,
    note: sourced.note,
  };
}

interface PeriodicInput {
  readonly kind: DueItemKind;
  readonly equipmentId: string;
  readonly subjectId: string;
  readonly events: readonly { readonly at: Date; readonly passed: boolean }[];
  readonly ruleKey: string;
  readonly interval: Sourced<CalibrationIntervalValue>;
  readonly what: string;
}

function periodicItem(p: PeriodicInput, now: Date, today: CalendarDate, options: Required<Omit<DueOptions, 'dueSoonUses'>>): DueItem | null {
  if (p.interval.value === 'not-required') return null;
  const rule = intervalRule(p.ruleKey, p.interval);
  const past = p.events.filter((e) => e.at.getTime() <= now.getTime());
  const lastPassAt = latest(past.filter((e) => e.passed).map((e) => e.at));
  const lastFailAt = latest(past.filter((e) => !e.passed && (lastPassAt === null || e.at.getTime() > lastPassAt.getTime())).map((e) => e.at));
  const base = { kind: p.kind, equipmentId: p.equipmentId, subjectId: p.subjectId, lastPassAt, lastFailAt, rules: [rule] };
  const interval = p.interval.value;
  const dueDate = interval !== null && lastPassAt !== null ? addInterval(localDateOf(lastPassAt, options.timeZone), interval) : null;

  if (lastFailAt !== null) {
    return {
      ...base,
      dueDate,
      status: 'overdue',
      causes: ['last-result-failed'],
      reason: `${p.what} failed at ${lastFailAt.toISOString()} and has not passed since`,
    };
  }
  if (interval === null) {
    return { ...base, dueDate: null, status: 'no-rule', causes: ['no-rule'], reason: `no interval for ${p.what} in ${p.ruleKey}: ${p.interval.note}` };
  }
  if (lastPassAt === null || dueDate === null) {
    return { ...base, dueDate: null, status: 'overdue', causes: ['never-passed'], reason: `${p.what} has no passing result on record` };
  }
  return { ...base, dueDate, ...dateStatus(today, dueDate, options.dueSoonDays, `${p.what} (${describeInterval(interval)} from ${localDateOf(lastPassAt, options.timeZone)})`) };
}

function dateStatus(today: CalendarDate, dueDate: CalendarDate, dueSoonDays: number, what: string): { status: DueStatus; causes: DueCause[]; reason: string } {
  if (today > dueDate) return { status: 'overdue', causes: ['past-due-date'], reason: `${what} was due on ${dueDate}` };
  const daysLeft = daysBetween(today, dueDate);
  if (daysLeft <= dueSoonDays) {
    return { status: 'due-soon', causes: ['due-soon'], reason: `${what} is due on ${dueDate} (${daysLeft === 0 ? 'today' : `in ${daysLeft} day${daysLeft === 1 ? '' : 's'}`})` };
  }
  return { status: 'ok', causes: ['within-interval'], reason: `${what} is due on ${dueDate}` };
}

function latest(dates: readonly Date[]): Date | null {
  return dates.reduce<Date | null>((m, d) => (m === null || d.getTime() > m.getTime() ? d : m), null);
}

function inService(retiredAt: Date | null | undefined, now: Date): boolean {
  return !retiredAt || retiredAt.getTime() > now.getTime();
}

function validate(record: EquipmentRecord, history: PyrometryHistory, now: Date): void {
  requireInstant(now, 'now');
  record.sensors.forEach((s, i) => {
    if (s.installedAt !== null) requireInstant(s.installedAt, `equipment.sensors[${i}].installedAt`);
    if (!(s.thermocoupleType in THERMOCOUPLE_METAL)) throw new PyrometryInputError(`equipment.sensors[${i}].thermocoupleType`, `unknown thermocouple type ${JSON.stringify(s.thermocoupleType)}`);
    if (s.expiresOn !== undefined && s.expiresOn !== null) {
      try {
        addDays(s.expiresOn, 0);
      } catch {
        throw new PyrometryInputError(`equipment.sensors[${i}].expiresOn`, `not a calendar date (YYYY-MM-DD): ${JSON.stringify(s.expiresOn)}`);
      }
    }
  });
  history.tests.forEach((t, i) => requireInstant(t.at, `history.tests[${i}].at`));
  history.calibrations.forEach((c, i) => requireInstant(c.at, `history.calibrations[${i}].at`));
  history.sensorUses.forEach((u, i) => {
    requireInstant(u.at, `history.sensorUses[${i}].at`);
    if (!Number.isFinite(u.maxTempC)) throw new PyrometryInputError(`history.sensorUses[${i}].maxTempC`, 'must be a finite number');
  });
}

/**
 * Everything periodic about one piece of equipment, as of `now`: surveys, accuracy tests,
 * calibrations and sensor replacements, each with its due date, status and the rule used.
 */
export function computeDueItems(
  equipmentRecord: EquipmentRecord,
  history: PyrometryHistory,
  now: Date,
  reference: PyrometryReference,
  options: DueOptions = {},
): DueItem[] {
  validate(equipmentRecord, history, now);
  const opts = { timeZone: options.timeZone ?? 'UTC', dueSoonDays: options.dueSoonDays ?? 7 };
  const today = localDateOf(now, opts.timeZone);
  const eq = equipmentRecord;
  const items: DueItem[] = [];
  const tests = history.tests.filter((t) => t.equipmentId === eq.equipmentId);

  if (eq.tusRequired) {
    const looked = lookupKeyed(reference, 'tusInterval', reference.tusInterval, eq);
    const item = periodicItem(
      {
        kind: 'tus',
        equipmentId: eq.equipmentId,
        subjectId: eq.equipmentId,
        events: tests.filter((t) => t.kind === 'tus'),
        ruleKey: looked.key,
        interval: looked.sourced,
        what: `uniformity survey of ${eq.equipmentId}`,
      },
      now,
      today,
      opts,
    );
    if (item) items.push(item);
  }

  const satUses = reference.satRequiredForSensorUses.value;
  const satLooked = lookupKeyed(reference, 'satInterval', reference.satInterval, eq);
  for (const sensor of eq.sensors) {
    if (!inService(sensor.retiredAt, now) || !satUses.includes(sensor.use)) continue;
    const item = periodicItem(
      {
        kind: 'sat',
        equipmentId: eq.equipmentId,
        subjectId: sensor.sensorId,
        events: tests.filter((t) => t.kind === 'sat' && (t.sensorId === undefined || t.sensorId === null || t.sensorId === sensor.sensorId)),
        ruleKey: satLooked.key,
        interval: satLooked.sourced,
        what: `accuracy test of ${sensor.use} sensor ${sensor.sensorId}`,
      },
      now,
      today,
      opts,
    );
    if (item) items.push(item);
  }

  for (const sensor of eq.sensors) {
    if (!inService(sensor.retiredAt, now)) continue;
    const metal = THERMOCOUPLE_METAL[sensor.thermocoupleType];
    const item = periodicItem(
      {
        kind: 'sensor-calibration',
        equipmentId: eq.equipmentId,
        subjectId: sensor.sensorId,
        events: history.calibrations.filter((c) => c.subject === 'sensor' && c.subjectId === sensor.sensorId),
        ruleKey: `${reference.id} sensorCalibrationInterval ${sensor.use} ${metal}`,
        interval: reference.sensorCalibrationInterval[sensor.use][metal],
        what: `calibration of ${metal} ${sensor.use} sensor ${sensor.sensorId}`,
      },
      now,
      today,
      opts,
    );
    if (item) items.push(item);
    items.push(replacementItem(eq.equipmentId, sensor, history, now, today, reference, { ...opts, dueSoonUses: options.dueSoonUses }));
    if (sensor.expiresOn) {
      items.push({
        kind: 'sensor-expiry',
        equipmentId: eq.equipmentId,
        subjectId: sensor.sensorId,
        dueDate: sensor.expiresOn,
        lastPassAt: null,
        lastFailAt: null,
        rules: [{ key: `sensor ${sensor.sensorId} expiresOn`, value: sensor.expiresOn, confirmed: true, note: 'from the sensor record (certificate or plant entry), not from the reference set' }],
        ...dateStatus(today, sensor.expiresOn, opts.dueSoonDays, `expiry of sensor ${sensor.sensorId}`),
      });
    }
  }

  for (const instrument of eq.instruments) {
    if (!inService(instrument.retiredAt, now)) continue;
    const item = periodicItem(
      {
        kind: 'instrument-calibration',
        equipmentId: eq.equipmentId,
        subjectId: instrument.instrumentId,
        events: history.calibrations.filter((c) => c.subject === 'instrument' && c.subjectId === instrument.instrumentId),
        ruleKey: `${reference.id} instrumentCalibrationInterval ${instrument.use}`,
        interval: reference.instrumentCalibrationInterval[instrument.use],
        what: `calibration of ${instrument.use} instrument ${instrument.instrumentId}`,
      },
      now,
      today,
      opts,
    );
    if (item) items.push(item);
  }
  return items;
}

function replacementItem(
  equipmentId: string,
  sensor: SensorRecord,
  history: PyrometryHistory,
  now: Date,
  today: CalendarDate,
  reference: PyrometryReference,
  options: { timeZone: string; dueSoonDays: number; dueSoonUses: number | undefined },
): DueItem {
  const metal = THERMOCOUPLE_METAL[sensor.thermocoupleType];
  const kindText = `${sensor.expendable ? 'expendable' : 'nonexpendable'} ${metal}`;
  const base = { kind: 'sensor-replacement' as const, equipmentId, subjectId: sensor.sensorId, lastPassAt: null, lastFailAt: null };
  const rule = reference.sensorReplacement.find((r) => r.appliesTo.metal === metal && r.appliesTo.expendable === sensor.expendable);
  const uses = history.sensorUses.filter(
    (u) => u.sensorId === sensor.sensorId && u.at.getTime() <= now.getTime() && (sensor.installedAt === null || u.at.getTime() >= sensor.installedAt.getTime()),
  );
  const usesSoFar = uses.length;
  if (!rule) {
    return {
      ...base,
      dueDate: null,
      status: 'no-rule',
      causes: ['no-rule'],
      reason: `${reference.id} has no replacement limits for ${kindText} sensors (not given in practice.md); enter them from the plant's copy of the standard`,
      usesSoFar,
      usesLimit: null,
      rules: [],
    };
  }
  const highestC = uses.reduce<number | null>((m, u) => (m === null || u.maxTempC > m ? u.maxTempC : m), null);
  // With no use yet the coolest band applies; the first hot use moves the sensor up.
  const bandIndex = highestC === null ? 0 : rule.bands.findIndex((b) => b.upToC === null || highestC <= b.upToC);
  const band: SensorReplacementBand = rule.bands[bandIndex === -1 ? rule.bands.length - 1 : bandIndex];
  const bandKey = `${reference.id} sensorReplacement ${kindText} band ≤${band.upToC ?? '∞'} °C`;
  const rules: RuleUsed[] = [
    { key: `${bandKey} uses`, value: band.maxUses.value === null ? 'not given' : String(band.maxUses.value), confirmed: band.maxUses.confirmed, note: band.maxUses.note },
    {
      key: `${bandKey} age`,
      value: band.maxAge.value === null ? 'not given' : band.maxAge.value === 'unlimited' ? 'unlimited' : describeInterval(band.maxAge.value),
      confirmed: band.maxAge.confirmed,
      note: band.maxAge.note,
    },
  ];
  const hottest = highestC === null ? 'no uses yet' : `hottest use ${highestC} °C`;

  // Age.
  const age = band.maxAge.value;
  let ageStatus: { status: DueStatus; causes: DueCause[]; reason: string };
  let dueDate: CalendarDate | null = null;
  if (age === null) {
    ageStatus = { status: 'no-rule', causes: ['no-rule'], reason: `no age limit in ${bandKey}: ${band.maxAge.note}` };
  } else if (age === 'unlimited') {
    ageStatus = { status: 'ok', causes: ['within-interval'], reason: 'no age limit' };
  } else if (sensor.installedAt === null) {
    ageStatus = { status: 'overdue', causes: ['record-incomplete'], reason: `install date of sensor ${sensor.sensorId} not recorded, so its age limit cannot be shown` };
  } else {
    dueDate = addInterval(localDateOf(sensor.installedAt, options.timeZone), age as Interval);
    ageStatus = dateStatus(today, dueDate, options.dueSoonDays, `replacement of sensor ${sensor.sensorId} by age (installed ${localDateOf(sensor.installedAt, options.timeZone)}, ${describeInterval(age as Interval)})`);
  }

  // Uses.
  const limit = band.maxUses.value;
  let usesStatus: { status: DueStatus; causes: DueCause[]; reason: string };
  if (limit === null) {
    usesStatus = { status: 'no-rule', causes: ['no-rule'], reason: `no use limit in ${bandKey}: ${band.maxUses.note}` };
  } else if (limit === 'unlimited') {
    usesStatus = { status: 'ok', causes: ['within-interval'], reason: `${usesSoFar} uses, any number allowed (${hottest})` };
  } else if (usesSoFar >= limit) {
    usesStatus = { status: 'overdue', causes: ['use-limit-reached'], reason: `sensor ${sensor.sensorId} has ${usesSoFar} of ${limit} uses (${hottest}); it may not be used again` };
  } else {
    const soon = options.dueSoonUses ?? Math.max(1, Math.floor(limit * 0.1));
    usesStatus =
      limit - usesSoFar <= soon
        ? { status: 'due-soon', causes: ['uses-nearly-reached'], reason: `sensor ${sensor.sensorId} has ${usesSoFar} of ${limit} uses (${hottest})` }
        : { status: 'ok', causes: ['within-interval'], reason: `sensor ${sensor.sensorId} has ${usesSoFar} of ${limit} uses (${hottest})` };
  }

  const worst = STATUS_RANK[ageStatus.status] >= STATUS_RANK[usesStatus.status] ? ageStatus.status : usesStatus.status;
  const parts = [ageStatus, usesStatus].filter((s) => s.status === worst);
  return {
    ...base,
    dueDate,
    status: worst,
    causes: [...new Set(parts.flatMap((s) => s.causes))],
    reason: parts.map((s) => s.reason).join('; '),
    usesSoFar,
    usesLimit: limit,
    rules,
  };
}

export type FindingKind = 'overdue' | 'failed' | 'never-passed' | 'sensor-use-limit' | 'sensor-age-limit' | 'sensor-expired' | 'record-incomplete' | 'no-rule';

export interface ComplianceFinding {
  readonly kind: FindingKind;
  readonly itemKind: DueItemKind;
  readonly equipmentId: string;
  readonly subjectId: string;
  readonly reason: string;
  readonly rules: readonly RuleUsed[];
}

export interface ComplianceOptions extends DueOptions {
  /** Whether a value missing from the reference set is a finding (default) or ignored. */
  readonly noRule?: 'finding' | 'ignore';
}

export interface ComplianceResult {
  readonly compliant: boolean;
  readonly at: Date;
  readonly findings: readonly ComplianceFinding[];
  readonly items: readonly DueItem[];
}

/**
 * Whether a batch may run on the equipment at instant t: nothing overdue, no failed test or
 * calibration outstanding, no sensor past its age or use limit. Only history up to t counts
 * (a test passed after t cannot qualify a batch at t); a sensor use recorded at exactly t is the
 * batch itself, so uses strictly before t are counted and the batch would be one more. A batch
 * that spans midnight can be checked at its start and at its end.
 */
export function isEquipmentCompliantAt(
  equipmentRecord: EquipmentRecord,
  history: PyrometryHistory,
  t: Date,
  reference: PyrometryReference,
  options: ComplianceOptions = {},
): ComplianceResult {
  requireInstant(t, 't');
  // Validate before filtering: an invalid instant would otherwise drop out of the filters silently.
  validate(equipmentRecord, history, t);
  const ms = t.getTime();
  const before: PyrometryHistory = {
    tests: history.tests.filter((x) => x.at.getTime() <= ms),
    calibrations: history.calibrations.filter((x) => x.at.getTime() <= ms),
    sensorUses: history.sensorUses.filter((x) => x.at.getTime() < ms),
  };
  const items = computeDueItems(equipmentRecord, before, t, reference, options);
  const findings: ComplianceFinding[] = [];
  for (const item of items) {
    if (item.status !== 'overdue' && !(item.status === 'no-rule' && (options.noRule ?? 'finding') === 'finding')) continue;
    const base = { itemKind: item.kind, equipmentId: item.equipmentId, subjectId: item.subjectId, rules: item.rules };
    if (item.status === 'no-rule') {
      findings.push({ ...base, kind: 'no-rule', reason: item.reason });
      continue;
    }
    for (const cause of item.causes) {
      const kind: FindingKind | null =
        cause === 'past-due-date'
          ? item.kind === 'sensor-replacement'
            ? 'sensor-age-limit'
            : item.kind === 'sensor-expiry'
              ? 'sensor-expired'
              : 'overdue'
          : cause === 'last-result-failed'
            ? 'failed'
            : cause === 'never-passed'
              ? 'never-passed'
              : cause === 'use-limit-reached'
                ? 'sensor-use-limit'
                : cause === 'record-incomplete'
                  ? 'record-incomplete'
                  : null;
      if (kind) {
        const reason =
          kind === 'sensor-use-limit'
            ? `${item.reason}; this batch would be use ${(item.usesSoFar ?? 0) + 1} of ${item.usesLimit}`
            : item.reason;
        findings.push({ ...base, kind, reason });
      }
    }
  }
  return { compliant: findings.length === 0, at: t, findings, items };
}
