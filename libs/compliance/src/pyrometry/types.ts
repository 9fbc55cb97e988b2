// Shared vocabulary of the pyrometry module: the shapes of reference data, equipment records and
// test records. Pure data types only; the numbers live in ./reference/*, the logic in the other files.

/** AMS 2750 furnace classes 1–6 (uniformity tolerance bands). */
export type FurnaceClass = 1 | 2 | 3 | 4 | 5 | 6;
export const FURNACE_CLASSES: readonly FurnaceClass[] = [1, 2, 3, 4, 5, 6];

/** AMS 2750 instrumentation types: how many sensors are controlled, recorded and where. */
export type InstrumentationType = 'A' | 'B' | 'C' | 'D' | 'D+' | 'E';
export const INSTRUMENTATION_TYPES: readonly InstrumentationType[] = ['A', 'B', 'C', 'D', 'D+', 'E'];

/**
 * How a system accuracy test is carried out. CQI-9 keys its SAT limit and interval by method
 * (practice.md §1.2 [S18]); AMS 2750 keys them by furnace class and ignores this.
 */
export type SatMethod = 'probe' | 'comparative';
export const SAT_METHODS: readonly SatMethod[] = ['probe', 'comparative'];

/** What a sensor is used for; accuracy limits and calibration intervals depend on it. */
export type SensorUse =
  | 'primary-standard'
  | 'secondary-standard'
  | 'sat-test'
  | 'tus-test'
  | 'load'
  | 'control'
  | 'recording'
  | 'monitoring'
  | 'over-temperature';
export const SENSOR_USES: readonly SensorUse[] = [
  'primary-standard',
  'secondary-standard',
  'sat-test',
  'tus-test',
  'load',
  'control',
  'recording',
  'monitoring',
  'over-temperature',
];

/** What an instrument (the box the sensor is wired to) is used for. */
export type InstrumentUse = 'field-test' | 'control' | 'recording' | 'over-temperature';
export const INSTRUMENT_USES: readonly InstrumentUse[] = ['field-test', 'control', 'recording', 'over-temperature'];

/** Letter-designated thermocouple types (ASTM E230 / IEC 60584). */
export type ThermocoupleType = 'B' | 'E' | 'J' | 'K' | 'N' | 'R' | 'S' | 'T';

/** Base-metal vs noble-metal decides calibration interval and whether a sensor may be recalibrated. */
export type SensorMetal = 'base-metal' | 'noble-metal';

/**
 * A value from reference data together with where it came from. `confirmed` is true only when
 * practice.md tags it [S n] for the same standard revision; `note` names the source tag, and for
 * unconfirmed values tells the plant to check its own copy of the standard.
 */
export interface Sourced<T> {
  readonly value: T;
  readonly confirmed: boolean;
  readonly note: string;
}

/**
 * A ± limit as standards state it: "±X °C (±Y °F) or P % of reading, whichever is greater".
 * plusMinusF is null when the source gives no Fahrenheit value; pctOfReading null when no
 * percentage alternative applies (then the absolute value alone is the limit).
 */
export interface AccuracyLimit {
  readonly plusMinusC: number;
  readonly plusMinusF: number | null;
  readonly pctOfReading: number | null;
}

/** Uniformity tolerance of a furnace class, in both units as the standard states them. */
export interface UniformityTolerance {
  readonly plusMinusC: number;
  readonly plusMinusF: number;
}

/**
 * A recurring interval. Days and months are different kinds on purpose: AMS 2750E §2.2.25 (as
 * quoted in practice.md [S8]) counts "weekly" as 7 calendar days but "monthly" as the same date in
 * the next month (clamped to that month's last day), so a month is not a fixed number of days.
 */
export type Interval = { readonly unit: 'day'; readonly count: number } | { readonly unit: 'month'; readonly count: number };

/** What an instrumentation type requires per control zone. */
export interface InstrumentationRequirement {
  readonly controlSensorPerZone: boolean;
  readonly controlSensorRecorded: boolean;
  /** Recording sensors at the hottest and coldest places found by the last survey. */
  readonly hotColdRecordingSensorsPerZone: number;
  readonly loadSensorsRecorded: boolean;
  /** Recording sensors beyond control and hot/cold ones (type D+). */
  readonly extraRecordingSensorsPerZone: number;
  readonly overTemperatureSensorPerZone: boolean;
}

/** The context a keyed reference value is looked up in. */
export interface LookupContext {
  readonly furnaceClass: FurnaceClass;
  readonly instrumentationType: InstrumentationType;
  readonly satMethod?: SatMethod;
}

/**
 * A reference value that one standard keys by furnace class, another by class and
 * instrumentation type, another by SAT method, another not at all. Keeping the key in the data
 * (not in the logic) lets AMS 2750 and CQI-9 share the same judging code.
 */
export type Keyed<T> =
  | { readonly basis: 'single'; readonly value: Sourced<T | null> }
  | { readonly basis: 'furnace-class'; readonly byClass: Readonly<Record<FurnaceClass, Sourced<T | null>>> }
  | {
      readonly basis: 'class-and-type';
      readonly byClassAndType: Readonly<Record<FurnaceClass, Readonly<Record<InstrumentationType, Sourced<T | null>>>>>;
    }
  | { readonly basis: 'sat-method'; readonly byMethod: Readonly<Record<SatMethod, Sourced<T | null>>> };

/** Limit on uses; 'unlimited' is a stated "any number of uses", distinct from null = not given. */
export type UsesLimit = number | 'unlimited';

/**
 * One band of a sensor replacement table: sensors whose highest use temperature is above the
 * previous band's upToC and at most this band's upToC (null = no upper bound).
 */
export interface SensorReplacementBand {
  readonly upToC: number | null;
  readonly maxUses: Sourced<UsesLimit | null>;
  /** null value = not given; counted from the sensor's install date with the calendar rules. */
  readonly maxAge: Sourced<Interval | 'unlimited' | null>;
}

export interface SensorReplacementRule {
  /** Which sensors the band table applies to (e.g. nonexpendable base-metal). */
  readonly appliesTo: { readonly metal: SensorMetal; readonly expendable: boolean };
  readonly bands: readonly SensorReplacementBand[];
}

/**
 * 'not-required' is a stated rule (e.g. CQI-9: base-metal thermocouples are replaced, not
 * recalibrated); null means the source gives no value and the plant must enter one.
 */
export type CalibrationIntervalValue = Interval | 'not-required' | null;

/** The full reference data set of one standard at one revision. */
export interface PyrometryReference {
  /** e.g. "AMS2750G", plus "+overlay(...)" suffixes once a customer overlay is merged. */
  readonly id: string;
  readonly standard: 'AMS2750' | 'CQI-9';
  readonly revision: string;
  readonly title: string;
  /** Customer overlays merged into this set, by their stated source, oldest first. */
  readonly overlays: readonly string[];
  /** How "weekly", "monthly", ... are counted; the calendar code implements this rule. */
  readonly intervalCounting: Sourced<'weekly-7-days-monthly-same-date-clamped'>;
  readonly uniformityTolerance: Keyed<UniformityTolerance>;
  readonly instrumentationTypes: Readonly<Record<InstrumentationType, Sourced<InstrumentationRequirement>>>;
  readonly sensorAccuracy: Readonly<Record<SensorUse, Sourced<AccuracyLimit | null>>>;
  readonly instrumentAccuracy: Readonly<Record<InstrumentUse, Sourced<AccuracyLimit | null>>>;
  readonly satDifferenceLimit: Keyed<AccuracyLimit>;
  readonly satInterval: Keyed<Interval>;
  readonly tusInterval: Keyed<Interval>;
  /** Which sensor uses need their own periodic SAT. */
  readonly satRequiredForSensorUses: Sourced<readonly SensorUse[]>;
  readonly sensorCalibrationInterval: Readonly<Record<SensorUse, Readonly<Record<SensorMetal, Sourced<CalibrationIntervalValue>>>>>;
  readonly instrumentCalibrationInterval: Readonly<Record<InstrumentUse, Sourced<CalibrationIntervalValue>>>;
  readonly sensorReplacement: readonly SensorReplacementRule[];
  /** Most distance between the tips of the sensor under test and the test sensor in a probe SAT. */
  readonly satProbeTipDistanceMaxMm: Sourced<number | null>;
  /**
   * Hot/cold recording sensors need not be moved after a survey whose results stay within this
   * fraction of the class tolerance in the relevant direction (0.5 = half).
   */
  readonly hotColdRelocationFraction: Sourced<number | null>;
  /** Survey data collection: longest gap between readings of one location. */
  readonly tusMaxSampleIntervalS: Sourced<number | null>;
  /** Stated extensions of SAT/TUS intervals after consecutive passes; null = not given, none applied. */
  readonly reducedFrequency: Sourced<string | null>;
  /** Grace period after a due date; null = not given, none applied. */
  readonly gracePeriod: Sourced<Interval | null>;
  /** Recorder readability in degrees (0.1 = tenths). */
  readonly recorderReadabilityDeg: Sourced<number | null>;
  /** Whether base-metal thermocouples may be recalibrated instead of replaced. */
  readonly baseMetalRecalibrationAllowed: Sourced<boolean | null>;
  /** A survey may use one temperature if the qualified range is at most this wide. */
  readonly tusSingleTemperatureMaxRangeC: Sourced<number | null>;
}

/** One point of a calibration certificate: add correctionC to a reading taken at atC. */
export interface CalibrationPoint {
  readonly atC: number;
  readonly correctionC: number;
}
