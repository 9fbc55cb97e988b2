// SAE AMS 2750 (Pyrometry) reference data, revisions E, F, G and H, as far as practice.md §1.1
// gives it. Each number is written once as a Fact with the revisions practice.md saw it for; each
// revision's set is then derived, so a value confirmed only for E shows up in G as a flagged
// placeholder rather than as a silent copy. Values practice.md does not give at all are null and
// say so: the logic reports "no rule" for them instead of inventing one.

import { MONTHLY, QUARTERLY } from '../calendar.js';
import {
  FURNACE_CLASSES,
  INSTRUMENTATION_TYPES,
  type AccuracyLimit,
  type CalibrationIntervalValue,
  type FurnaceClass,
  type InstrumentationRequirement,
  type InstrumentationType,
  type Interval,
  type PyrometryReference,
  type SensorMetal,
  type SensorUse,
  type Sourced,
  type UniformityTolerance,
  type UsesLimit,
} from '../types.js';
import { deepFreeze, fact, forRevision, notGiven, type Fact } from './sourcing.js';

export const AMS2750_REVISIONS = ['E', 'F', 'G', 'H'] as const;
export type Ams2750Revision = (typeof AMS2750_REVISIONS)[number];

const H_CHANGED_SENSOR_TABLES = { H: 'AMS 2750H changed the sensor tables [S3]' };
const H_CHANGED_SAT_TABLES = { H: 'AMS 2750H changed SAT tables 11 and 12 [S3]' };
const H_CHANGED_TUS_INTERVALS = { H: 'AMS 2750H changed TUS interval tables 15 and 16 [S3]' };

// --- Furnace classes: practice.md §1.1 "Furnace classes" [S2, S70], °C column per F/G. ---------
const CLASS_SOURCE = 'practice.md §1.1 furnace classes [S2, S70] (±°C per F/G)';
const uniformityFacts: Record<FurnaceClass, Fact<UniformityTolerance>> = {
  1: fact({ plusMinusC: 3.0, plusMinusF: 5.0 }, CLASS_SOURCE, ['F', 'G']),
  2: fact({ plusMinusC: 6.0, plusMinusF: 10.0 }, CLASS_SOURCE, ['F', 'G'], {
    caveat: 'some primes accept ±5.0 °C (Nadcap task-group position folded into F [S2]); load that as a customer overlay',
  }),
  3: fact({ plusMinusC: 8.0, plusMinusF: 15.0 }, CLASS_SOURCE, ['F', 'G'], {
    caveat: 'some primes accept ±7.0 °C [S2]; load that as a customer overlay',
  }),
  4: fact({ plusMinusC: 10.0, plusMinusF: 20.0 }, CLASS_SOURCE, ['F', 'G']),
  5: fact({ plusMinusC: 14.0, plusMinusF: 25.0 }, CLASS_SOURCE, ['F', 'G']),
  6: fact({ plusMinusC: 28.0, plusMinusF: 50.0 }, CLASS_SOURCE, ['F', 'G'], {
    caveat: 'not used for aerospace parts',
  }),
};

// --- Instrumentation types: practice.md §1.1 [S5 partial, M]. -----------------------------------
// Only "one control sensor per zone", "A–D record the control sensor" and "E has no recording" are
// [S5]; the rest is from memory, so no type is marked confirmed as a whole.
const TYPE_SOURCE = 'practice.md §1.1 instrumentation types [S5 partial, M]';
const requirement = (r: Partial<InstrumentationRequirement>): InstrumentationRequirement => ({
  controlSensorPerZone: true, // every type [S5]
  controlSensorRecorded: true, // A, B, C, D, D+ [S5]
  hotColdRecordingSensorsPerZone: 0,
  loadSensorsRecorded: false,
  extraRecordingSensorsPerZone: 0,
  // "required for most types" [M]; set for every type because we cannot say which are exempt.
  overTemperatureSensorPerZone: true,
  ...r,
});
const typeFacts: Record<InstrumentationType, Fact<InstrumentationRequirement>> = {
  A: fact(requirement({ hotColdRecordingSensorsPerZone: 2, loadSensorsRecorded: true }), TYPE_SOURCE, [], {
    caveat: 'A: control recorded [S5]; at least two more recording sensors per zone at the hottest and coldest spots of the last survey plus load sensors [S5 partial, M]; over-temperature [M]',
  }),
  B: fact(requirement({ loadSensorsRecorded: true }), TYPE_SOURCE, [], {
    caveat: 'B: control recorded [S5], recorded load sensors [M]; over-temperature [M]',
  }),
  C: fact(requirement({ hotColdRecordingSensorsPerZone: 2 }), TYPE_SOURCE, [], {
    caveat: 'C: control recorded [S5], hot and cold recording sensors [M]; over-temperature [M]',
  }),
  D: fact(requirement({}), TYPE_SOURCE, [], {
    caveat: 'D: control recorded only [S5 for recording, M for "only"]; over-temperature [M]',
  }),
  'D+': fact(requirement({ extraRecordingSensorsPerZone: 1 }), TYPE_SOURCE, [], {
    caveat: 'D+: D plus one more recording sensor per zone [M; check the table in the current revision]',
  }),
  E: fact(requirement({ controlSensorRecorded: false }), TYPE_SOURCE, [], {
    caveat: 'E: control only, no recording [S5]; over-temperature [M]',
  }),
};

// --- Sensor accuracy: AMS 2750E Table 1 as summarised by PRI, practice.md §1.1 [S6]. ------------
const SENSOR_SOURCE = 'practice.md §1.1 sensors: AMS 2750E Table 1 as summarised by PRI [S6]';
const testSensorAccuracy = fact<AccuracyLimit>({ plusMinusC: 1.1, plusMinusF: 2, pctOfReading: 0.4 }, SENSOR_SOURCE, ['E'], {
  changedIn: H_CHANGED_SENSOR_TABLES,
});
const processSensorAccuracy = fact<AccuracyLimit>(
  { plusMinusC: 2.2, plusMinusF: 4, pctOfReading: 0.75 },
  `${SENSOR_SOURCE} ("standard limits")`,
  ['E'],
  { changedIn: H_CHANGED_SENSOR_TABLES },
);

// --- Instrument accuracy: practice.md §1.1 instruments [M unless noted]. ------------------------
const fieldTestInstrumentAccuracy = fact<AccuracyLimit>(
  { plusMinusC: 0.6, plusMinusF: 1, pctOfReading: 0.1 },
  'practice.md §1.1 instruments: field test instruments [M] (CQI-9 also quotes ±0.6 °C [S17])',
  [],
);
const processInstrumentAccuracy = fact<AccuracyLimit>(
  { plusMinusC: 1.1, plusMinusF: 2, pctOfReading: 0.2 },
  'practice.md §1.1 instruments: control and recording instruments [M]',
  [],
  { caveat: "revision G's transition clause for whole-degree recorders quotes ±1 °C or 0.2 % of reading [S11, S16]" },
);

// --- SAT difference limits by class: practice.md §1.1 SAT, E/F era [M except class 2 (S9)]. -----
const SAT_LIMIT_SOURCE = 'practice.md §1.1 SAT: allowed SAT difference by class (E/F era)';
const NO_PERCENT =
  'revision E also allowed a percentage of reading (0.2–1.0 %) whose per-class values practice.md does not give; none applied, which is stricter';
const satLimitFacts: Record<FurnaceClass, Fact<AccuracyLimit>> = {
  1: fact({ plusMinusC: 1.1, plusMinusF: 2, pctOfReading: null }, `${SAT_LIMIT_SOURCE} [M]`, [], { caveat: NO_PERCENT, changedIn: H_CHANGED_SAT_TABLES }),
  2: fact({ plusMinusC: 1.7, plusMinusF: 3, pctOfReading: null }, `${SAT_LIMIT_SOURCE} [S9]`, ['E'], {
    caveat: `±3.0 °F confirmed for E [S9], ±1.7 °C is its conversion; ${NO_PERCENT}`,
    changedIn: H_CHANGED_SAT_TABLES,
  }),
  3: fact({ plusMinusC: 2.2, plusMinusF: 4, pctOfReading: null }, `${SAT_LIMIT_SOURCE} [M]`, [], { caveat: NO_PERCENT, changedIn: H_CHANGED_SAT_TABLES }),
  4: fact({ plusMinusC: 2.2, plusMinusF: 4, pctOfReading: null }, `${SAT_LIMIT_SOURCE} [M]`, [], { caveat: NO_PERCENT, changedIn: H_CHANGED_SAT_TABLES }),
  5: fact({ plusMinusC: 2.8, plusMinusF: 5, pctOfReading: null }, `${SAT_LIMIT_SOURCE} [M]`, [], { caveat: NO_PERCENT, changedIn: H_CHANGED_SAT_TABLES }),
  6: fact({ plusMinusC: 5.6, plusMinusF: 10, pctOfReading: null }, `${SAT_LIMIT_SOURCE} [M]`, [], { caveat: NO_PERCENT, changedIn: H_CHANGED_SAT_TABLES }),
};

// --- SAT and TUS intervals: only a few cells of the class × type tables are in practice.md. ------
type Cell = `${FurnaceClass}/${InstrumentationType}`;
const satIntervalFacts: Partial<Record<Cell, Fact<Interval>>> = {
  '3/B': fact(MONTHLY, 'practice.md §1.1 SAT intervals: class 3 type B monthly under AMS 2750E [S8]', ['E'], {
    changedIn: H_CHANGED_SAT_TABLES,
  }),
};
const TUS_INTERVAL_SOURCE = 'practice.md §1.1 TUS interval examples [S10]';
const TUS_SOURCE_REVISION = 'the revision of that source is not stated in practice.md';
const tusIntervalFacts: Partial<Record<Cell, Fact<Interval>>> = {
  '2/B': fact(MONTHLY, `${TUS_INTERVAL_SOURCE}: class 2 type B monthly`, ['E', 'F', 'G'], {
    caveat: TUS_SOURCE_REVISION,
    changedIn: H_CHANGED_TUS_INTERVALS,
  }),
  '5/B': fact(QUARTERLY, `${TUS_INTERVAL_SOURCE}: class 5 type B quarterly`, ['E', 'F', 'G'], {
    caveat: TUS_SOURCE_REVISION,
    changedIn: H_CHANGED_TUS_INTERVALS,
  }),
};

// --- Sensor calibration intervals: test thermocouples [S6]. ---------------------------------------
const testSensorCalibration: Record<SensorMetal, Fact<Interval>> = {
  'base-metal': fact(QUARTERLY, `${SENSOR_SOURCE}: base-metal TUS and SAT test thermocouples every 3 months`, ['E'], {
    changedIn: H_CHANGED_SENSOR_TABLES,
  }),
  'noble-metal': fact({ unit: 'month', count: 6 }, `${SENSOR_SOURCE}: noble-metal TUS and SAT test thermocouples every 6 months`, ['E'], {
    changedIn: H_CHANGED_SENSOR_TABLES,
  }),
};

// --- Sensor replacement: AMS 2750G Table 6 as summarised in [S11]. ------------------------------
const TABLE6_SOURCE = 'practice.md §1.1 sensors: nonexpendable base-metal sensor replacement, AMS 2750G Table 6 as summarised in [S11]';
const TABLE6_EDGES = 'band edges read as upper-inclusive (a use at exactly 650 °C is in the 260–650 °C band): our reading of the summary';
const table6 = (upToC: number | null, maxUses: UsesLimit, label: string) => ({
  upToC,
  maxUses: fact(maxUses, `${TABLE6_SOURCE}: ${label}`, ['G'], { caveat: TABLE6_EDGES, changedIn: H_CHANGED_SENSOR_TABLES }),
  // Above 1260 °C the summary gives "one use" and no age limit; that stays "not given".
  maxAge:
    upToC === null
      ? null
      : fact<Interval>(QUARTERLY, `${TABLE6_SOURCE}: ${label}`, ['G'], { caveat: TABLE6_EDGES, changedIn: H_CHANGED_SENSOR_TABLES }),
});
const table6Bands = [
  table6(260, 'unlimited', '≤260 °C quarterly, any number of uses'),
  table6(650, 270, '260–650 °C quarterly or 270 uses'),
  table6(980, 180, '650–980 °C quarterly or 180 uses'),
  table6(1205, 90, '980–1205 °C quarterly or 90 uses'),
  table6(1260, 10, '1205–1260 °C quarterly or 10 uses'),
  table6(null, 1, '>1260 °C one use'),
];

const processSensorUses: readonly SensorUse[] = ['control', 'recording', 'monitoring'];

function build(revision: Ams2750Revision): PyrometryReference {
  const r = <T>(f: Fact<T>): Sourced<T> => forRevision(f, 'AMS 2750', revision);

  const byClass = <T>(facts: Record<FurnaceClass, Fact<T>>) =>
    Object.fromEntries(FURNACE_CLASSES.map((c) => [c, r(facts[c])])) as Record<FurnaceClass, Sourced<T | null>>;

  const byClassAndType = (facts: Partial<Record<Cell, Fact<Interval>>>, what: string) =>
    Object.fromEntries(
      FURNACE_CLASSES.map((c) => [
        c,
        Object.fromEntries(
          INSTRUMENTATION_TYPES.map((t) => {
            const f = facts[`${c}/${t}`];
            return [
              t,
              f
                ? r(f)
                : notGiven<Interval>(
                    `${what} for class ${c} type ${t}; practice.md §1.1 gives only ${Object.keys(facts).join(', ')} of the class × type table`,
                  ),
            ];
          }),
        ),
      ]),
    ) as Record<FurnaceClass, Record<InstrumentationType, Sourced<Interval | null>>>;

  const sensorAccuracy = Object.fromEntries(
    (['primary-standard', 'secondary-standard', 'sat-test', 'tus-test', 'load', 'control', 'recording', 'monitoring', 'over-temperature'] as const).map(
      (use) => {
        if (use === 'sat-test' || use === 'tus-test') return [use, r(testSensorAccuracy)];
        if (processSensorUses.includes(use)) return [use, r(processSensorAccuracy)];
        return [use, notGiven<AccuracyLimit>(`AMS 2750 accuracy limit for ${use} sensors`)];
      },
    ),
  ) as PyrometryReference['sensorAccuracy'];

  const sensorCalibrationInterval = Object.fromEntries(
    (['primary-standard', 'secondary-standard', 'sat-test', 'tus-test', 'load', 'control', 'recording', 'monitoring', 'over-temperature'] as const).map(
      (use) => {
        const isTest = use === 'sat-test' || use === 'tus-test';
        const perMetal = (metal: SensorMetal): Sourced<CalibrationIntervalValue> =>
          isTest ? r(testSensorCalibration[metal]) : notGiven<Interval>(`AMS 2750 calibration interval for ${metal} ${use} sensors`);
        return [use, { 'base-metal': perMetal('base-metal'), 'noble-metal': perMetal('noble-metal') }];
      },
    ),
  ) as PyrometryReference['sensorCalibrationInterval'];

  return {
    id: `AMS2750${revision}`,
    standard: 'AMS2750',
    revision,
    title: `SAE AMS 2750 revision ${revision}, Pyrometry (values as summarised in practice.md §1.1)`,
    overlays: [],
    intervalCounting: r(
      fact('weekly-7-days-monthly-same-date-clamped' as const, 'practice.md §1.1 SAT: interval counting, AMS 2750E §2.2.25 quoted in [S8]', ['E']),
    ),
    uniformityTolerance: { basis: 'furnace-class', byClass: byClass(uniformityFacts) },
    instrumentationTypes: Object.fromEntries(INSTRUMENTATION_TYPES.map((t) => [t, r(typeFacts[t])])) as PyrometryReference['instrumentationTypes'],
    sensorAccuracy,
    instrumentAccuracy: {
      'field-test': r(fieldTestInstrumentAccuracy),
      control: r(processInstrumentAccuracy),
      recording: r(processInstrumentAccuracy),
      'over-temperature': notGiven<AccuracyLimit>('AMS 2750 accuracy of over-temperature instruments'),
    },
    satDifferenceLimit: { basis: 'furnace-class', byClass: byClass(satLimitFacts) },
    satInterval: { basis: 'class-and-type', byClassAndType: byClassAndType(satIntervalFacts, 'AMS 2750 SAT interval') },
    tusInterval: { basis: 'class-and-type', byClassAndType: byClassAndType(tusIntervalFacts, 'AMS 2750 TUS interval') },
    satRequiredForSensorUses: r(
      fact<readonly SensorUse[]>(
        ['control', 'recording'],
        'practice.md §1.1 SAT describes a check of each measuring chain but does not list which sensor uses need their own SAT',
        [],
      ),
    ),
    sensorCalibrationInterval,
    instrumentCalibrationInterval: {
      'field-test': r(fact<CalibrationIntervalValue>(QUARTERLY, 'practice.md §1.1 instruments: field test instruments calibrated quarterly [M]', [])),
      control: notGiven<Interval>('control instrument calibration interval: depends on furnace class, "roughly monthly to quarterly for the tight classes" [M]'),
      recording: notGiven<Interval>('recording instrument calibration interval: depends on furnace class, "roughly monthly to quarterly for the tight classes" [M]'),
      'over-temperature': notGiven<Interval>('over-temperature instrument calibration interval'),
    },
    sensorReplacement: [
      {
        appliesTo: { metal: 'base-metal', expendable: false },
        bands: table6Bands.map((b) => ({
          upToC: b.upToC,
          maxUses: r(b.maxUses),
          maxAge: b.maxAge ? r(b.maxAge) : notGiven<Interval>('age limit above 1260 °C; practice.md gives only "one use"'),
        })),
      },
    ],
    satProbeTipDistanceMaxMm: r(fact(76, 'practice.md §1.1 SAT: probe tips at most 76 mm (3 in) apart [S13, S14]', ['F', 'G'])),
    hotColdRelocationFraction: r(
      fact(0.5, 'practice.md §1.1 instrumentation types: hot/cold sensors stay if the survey is within half the class tolerance [S4 (H §3.5.15), S9 (E)]', [
        'E',
        'H',
      ]),
    ),
    tusMaxSampleIntervalS: r(
      fact(120, 'practice.md §1.1 TUS data collection: record at least every 2 minutes (a plant procedure written to AMS 2750D [S69])', ['D'], {
        changedIn: { H: 'AMS 2750H reworded data-collection clauses 3.5.10.1–2 [S3]' },
      }),
    ),
    reducedFrequency: notGiven<string>(
      'extensions after consecutive passes and SAT waivers exist (practice.md §1.1 [S3 mentions the clauses; values M]); no extension is applied',
    ),
    gracePeriod: notGiven<Interval>('AMS 2750 grace period after a due date; none is applied'),
    recorderReadabilityDeg:
      revision === 'G' || revision === 'H'
        ? r(fact(0.1, 'practice.md §1.1 instruments: readability 0.1° since revision G [S11, S16]', ['G', 'H']))
        : notGiven<number>(`AMS 2750${revision} recorder readability (0.1° became mandatory only with G)`),
    baseMetalRecalibrationAllowed: notGiven<boolean>('whether AMS 2750 lets base-metal sensors be recalibrated'),
    tusSingleTemperatureMaxRangeC: notGiven<number>('AMS 2750 single-temperature survey range (H revised 3.5.2.4 [S3]); practice.md gives only the CQI-9 value'),
  };
}

export const AMS2750E: PyrometryReference = deepFreeze(build('E'));
export const AMS2750F: PyrometryReference = deepFreeze(build('F'));
export const AMS2750G: PyrometryReference = deepFreeze(build('G'));
export const AMS2750H: PyrometryReference = deepFreeze(build('H'));
