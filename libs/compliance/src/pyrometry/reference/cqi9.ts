// AIAG CQI-9 (Heat Treat System Assessment) reference data, 3rd and 4th editions, as far as
// practice.md §1.2 gives it. CQI-9 borrows heavily from AMS 2750 but differs in the points listed
// in CQI9_DIFFERENCES_FROM_AMS2750; where practice.md gives no CQI-9 number the value is null and
// the plant enters it (usually from the process table of its CQI-9 edition).

import { ANNUAL, MONTHLY, QUARTERLY } from '../calendar.js';
import {
  INSTRUMENTATION_TYPES,
  SENSOR_USES,
  type AccuracyLimit,
  type CalibrationIntervalValue,
  type InstrumentationRequirement,
  type Interval,
  type PyrometryReference,
  type SensorUse,
  type Sourced,
  type UsesLimit,
} from '../types.js';
import { AMS2750G } from './ams2750.js';
import { deepFreeze, fact, forRevision, notGiven, type Fact } from './sourcing.js';

export const CQI9_EDITIONS = ['3', '4'] as const;
export type Cqi9Edition = (typeof CQI9_EDITIONS)[number];

// Sources whose CQI-9 edition practice.md does not state are treated as seen for both editions,
// with that caveat kept in the note.
const EDITION_NOT_STATED = 'the CQI-9 edition of that source is not stated in practice.md';

function build(edition: Cqi9Edition): PyrometryReference {
  const r = <T>(f: Fact<T>): Sourced<T> => forRevision(f, 'CQI-9 edition', edition);

  // CQI-9 uses the AMS 2750 instrumentation letters; its own definitions are not in practice.md,
  // so the AMS 2750G requirements are reused and flagged as unconfirmed for CQI-9.
  const instrumentationTypes = Object.fromEntries(
    INSTRUMENTATION_TYPES.map((t) => {
      const ams = AMS2750G.instrumentationTypes[t];
      return [
        t,
        {
          value: ams.value,
          confirmed: false,
          note: `AMS 2750 definition reused (CQI-9's own is not in practice.md): ${ams.note}`,
        } satisfies Sourced<InstrumentationRequirement>,
      ];
    }),
  ) as PyrometryReference['instrumentationTypes'];

  const testSensorAccuracy = r(
    fact<AccuracyLimit>({ plusMinusC: 1.1, plusMinusF: null, pctOfReading: null }, 'practice.md §1.2 SAT: test thermocouple accuracy ±1.1 °C [S17]', ['3', '4'], {
      caveat: EDITION_NOT_STATED,
    }),
  );
  const sensorAccuracy = Object.fromEntries(
    SENSOR_USES.map((use) => [
      use,
      use === 'sat-test' || use === 'tus-test' ? testSensorAccuracy : notGiven<AccuracyLimit>(`CQI-9 accuracy limit for ${use} sensors`),
    ]),
  ) as PyrometryReference['sensorAccuracy'];

  // "Base-metal TCs are not recalibrated; they are replaced" [S25, 3rd edition].
  const baseMetalNotRecalibrated = r(
    fact<CalibrationIntervalValue>('not-required', 'practice.md §1.2 pyrometry: base-metal thermocouples are replaced, not recalibrated (3rd edition §3.1 [S25])', ['3']),
  );
  const sensorCalibrationInterval = Object.fromEntries(
    SENSOR_USES.map((use: SensorUse) => [
      use,
      {
        'base-metal': baseMetalNotRecalibrated,
        'noble-metal': notGiven<Interval>(`CQI-9 recalibration interval for noble-metal ${use} sensors (B, R, S may be recalibrated [S25])`),
      },
    ]),
  ) as PyrometryReference['sensorCalibrationInterval'];

  const tusAnnual = r(fact<Interval>(ANNUAL, 'practice.md §1.2: TUS at least annually (2nd edition errata [S20])', ['2'], { caveat: 'a floor; a process table may ask for more' }));

  return {
    id: `CQI-9-${edition}`,
    standard: 'CQI-9',
    revision: edition,
    title: `AIAG CQI-9 edition ${edition}, Special Process: Heat Treat System Assessment (values as summarised in practice.md §1.2)`,
    overlays: [],
    intervalCounting: r(
      fact(
        'weekly-7-days-monthly-same-date-clamped' as const,
        "practice.md gives no CQI-9 counting rule; the AMS 2750E §2.2.25 rule [S8] is used",
        [],
      ),
    ),
    uniformityTolerance: {
      basis: 'single',
      value: notGiven('CQI-9 sets the uniformity tolerance per process in its process tables'),
    },
    instrumentationTypes,
    sensorAccuracy,
    instrumentAccuracy: {
      'field-test': r(
        fact<AccuracyLimit>({ plusMinusC: 0.6, plusMinusF: null, pctOfReading: null }, 'practice.md §1.2 SAT: field test instrument accuracy ±0.6 °C [S17]', ['3', '4'], {
          caveat: EDITION_NOT_STATED,
        }),
      ),
      control: notGiven<AccuracyLimit>('CQI-9 control instrument accuracy'),
      recording: notGiven<AccuracyLimit>('CQI-9 recording instrument accuracy'),
      'over-temperature': notGiven<AccuracyLimit>('CQI-9 over-temperature instrument accuracy'),
    },
    satDifferenceLimit: {
      basis: 'sat-method',
      byMethod: {
        probe: r(
          fact<AccuracyLimit>({ plusMinusC: 5, plusMinusF: null, pctOfReading: null }, 'practice.md §1.2 SAT: probe method about ±5 °C (3rd edition §3.3.4.1 as quoted in [S18])', ['3']),
        ),
        comparative: r(fact<AccuracyLimit>({ plusMinusC: 1, plusMinusF: null, pctOfReading: null }, 'practice.md §1.2 SAT: comparative method ±1 °C [S18]', ['3'])),
      },
    },
    satInterval: {
      basis: 'sat-method',
      byMethod: {
        probe: r(
          fact<Interval>(QUARTERLY, 'practice.md §1.2 SAT: probe method quarterly [S17, S18]', ['3', '4'], {
            caveat: `${EDITION_NOT_STATED}; also after any maintenance that could affect the measurement (an event, not a date: not computed here)`,
          }),
        ),
        comparative: r(fact<Interval>(MONTHLY, 'practice.md §1.2 SAT: comparative method monthly [S18]', ['3'])),
      },
    },
    tusInterval: { basis: 'single', value: tusAnnual },
    satRequiredForSensorUses: {
      value: AMS2750G.satRequiredForSensorUses.value,
      confirmed: false,
      note: `AMS 2750 reading reused for CQI-9: ${AMS2750G.satRequiredForSensorUses.note}`,
    },
    sensorCalibrationInterval,
    instrumentCalibrationInterval: {
      'field-test': notGiven<Interval>('CQI-9 field test instrument calibration interval'),
      control: notGiven<Interval>('CQI-9 control instrument calibration interval'),
      recording: notGiven<Interval>('CQI-9 recording instrument calibration interval'),
      'over-temperature': notGiven<Interval>('CQI-9 over-temperature instrument calibration interval'),
    },
    sensorReplacement: [
      {
        appliesTo: { metal: 'base-metal', expendable: false },
        bands: [
          {
            upToC: 980,
            maxUses: notGiven<UsesLimit>('CQI-9 use limit for nonexpendable base-metal sensors up to 980 °C'),
            maxAge: notGiven<Interval>('CQI-9 age limit for nonexpendable base-metal sensors'),
          },
          {
            upToC: null,
            maxUses: r(
              fact<UsesLimit>(90, 'practice.md §1.2 pyrometry: nonexpendable base-metal thermocouple above 980 °C limited to 90 uses in total (3rd edition [S25])', ['3']),
            ),
            maxAge: notGiven<Interval>('CQI-9 age limit for nonexpendable base-metal sensors above 980 °C'),
          },
        ],
      },
    ],
    satProbeTipDistanceMaxMm: r(fact(50, 'practice.md §1.1 SAT: CQI-9 probe tips at most 50 mm apart [S14]', ['3', '4'], { caveat: EDITION_NOT_STATED })),
    hotColdRelocationFraction: notGiven<number>('CQI-9 hot/cold sensor relocation rule'),
    tusMaxSampleIntervalS: notGiven<number>('CQI-9 survey sampling interval'),
    reducedFrequency: notGiven<string>('CQI-9 interval extensions'),
    gracePeriod:
      edition === '4'
        ? notGiven<Interval>('the 4th edition added grace periods [S24] whose length practice.md does not give; none is applied')
        : notGiven<Interval>('CQI-9 3rd edition grace period; none is applied'),
    recorderReadabilityDeg: notGiven<number>('CQI-9 recorder readability'),
    baseMetalRecalibrationAllowed: r(fact(false, 'practice.md §1.2 pyrometry: base-metal thermocouples are replaced, not recalibrated [S25]', ['3'])),
    tusSingleTemperatureMaxRangeC: r(
      fact(170, 'practice.md §1.1 TUS: one survey temperature allowed if the qualified range is ≤170 °C wide (CQI-9 2nd edition errata [S20])', ['2']),
    ),
  };
}

export const CQI9_3: PyrometryReference = deepFreeze(build('3'));
export const CQI9_4: PyrometryReference = deepFreeze(build('4'));

/** Where CQI-9 and AMS 2750 differ, as practice.md §1.1–1.2 gives it; for screens and reviews. */
export const CQI9_DIFFERENCES_FROM_AMS2750: readonly { topic: string; cqi9: string; ams2750: string; source: string }[] = deepFreeze([
  { topic: 'SAT probe tip distance', cqi9: 'at most 50 mm', ams2750: 'at most 76 mm (3 in)', source: 'practice.md §1.1 SAT [S13, S14]' },
  {
    topic: 'SAT limit',
    cqi9: 'by method: probe about ±5 °C, comparative ±1 °C',
    ams2750: 'by furnace class: about ±1.1 to ±5.6 °C',
    source: 'practice.md §1.2 SAT [S18]; §1.1 SAT [M, class 2 S9]',
  },
  {
    topic: 'SAT interval',
    cqi9: 'by method: probe quarterly (and after maintenance), comparative monthly',
    ams2750: 'by class × instrumentation type, weekly to semi-annual',
    source: 'practice.md §1.2 SAT [S17, S18]; §1.1 SAT [S8, M]',
  },
  { topic: 'TUS interval', cqi9: 'at least annually', ams2750: 'by class × instrumentation type, monthly to annual', source: 'practice.md §1.2 [S20]; §1.1 TUS [S10, M]' },
  {
    topic: 'TUS temperatures',
    cqi9: 'one temperature if the qualified range is ≤170 °C wide (2nd edition errata)',
    ams2750: 'lowest and highest temperatures of the qualified range (H revised 3.5.2.4)',
    source: 'practice.md §1.1 TUS [S20, S3]',
  },
  {
    topic: 'Base-metal thermocouples',
    cqi9: 'replaced, not recalibrated; nonexpendable above 980 °C at most 90 uses (3rd edition)',
    ams2750: 'replacement by use temperature band: quarterly or 270/180/90/10 uses (G Table 6)',
    source: 'practice.md §1.2 pyrometry [S25]; §1.1 sensors [S11]',
  },
  { topic: 'Grace periods', cqi9: 'added in the 4th edition (length not given)', ams2750: 'none in practice.md', source: 'practice.md §1.1 SAT [S24]' },
  { topic: 'RTDs', cqi9: 'allowed since the 4th edition', ams2750: 'not covered in practice.md', source: 'practice.md §1.2 [S24]' },
  {
    topic: 'Uniformity tolerance',
    cqi9: 'per process in the process tables',
    ams2750: 'by furnace class 1–6 (±3 to ±28 °C)',
    source: 'practice.md §1.2 process tables [S21, S23]; §1.1 furnace classes [S2, S70]',
  },
]);
