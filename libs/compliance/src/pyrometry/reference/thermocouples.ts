// Thermocouple facts that do not depend on a pyrometry standard's revision: which types are noble
// metal, and the tolerance of new wire (ASTM E230 / IEC 60584, as tabulated in practice.md §1.1).

import type { AccuracyLimit, SensorMetal, Sourced, ThermocoupleType } from '../types.js';
import { deepFreeze } from './sourcing.js';

/**
 * Noble-metal types are B, R and S (practice.md §1.2 [S25]: "Noble-metal TCs (B, R, S) may be
 * recalibrated"); the others are base metal.
 */
export const THERMOCOUPLE_METAL: Readonly<Record<ThermocoupleType, SensorMetal>> = deepFreeze({
  B: 'noble-metal',
  R: 'noble-metal',
  S: 'noble-metal',
  E: 'base-metal',
  J: 'base-metal',
  K: 'base-metal',
  N: 'base-metal',
  T: 'base-metal',
});

export type WireGrade = 'standard' | 'special';

const E230_SOURCE =
  'practice.md §1.1 sensors: tolerances for new thermocouple wire under ASTM E230 / IEC 60584 [S74] (revision of the table not stated; the larger of the two applies)';

const limit = (plusMinusC: number, pctOfReading: number, what: string): Sourced<AccuracyLimit | null> => ({
  value: { plusMinusC, plusMinusF: null, pctOfReading },
  confirmed: true,
  note: `${E230_SOURCE}: ${what}`,
});

const kOrNStandard = limit(2.2, 0.75, 'type K or N, standard limits ±2.2 °C or 0.75 %');
const kOrNSpecial = limit(1.1, 0.4, 'type K or N, special limits ±1.1 °C or 0.4 %');
const rOrS = limit(1.5, 0.25, 'types R and S ±1.5 °C or 0.25 %');
const notInTable = (type: ThermocoupleType): Sourced<AccuracyLimit | null> => ({
  value: null,
  confirmed: false,
  note: `not given in practice.md (type ${type} wire tolerance); enter it from the plant's copy of ASTM E230`,
});

/** Tolerance of new thermocouple wire by type and grade. */
export const THERMOCOUPLE_WIRE_TOLERANCE: Readonly<Record<ThermocoupleType, Readonly<Record<WireGrade, Sourced<AccuracyLimit | null>>>>> = deepFreeze({
  K: { standard: kOrNStandard, special: kOrNSpecial },
  N: { standard: kOrNStandard, special: kOrNSpecial },
  // "Type J: same as K" [S74].
  J: {
    standard: { ...kOrNStandard, note: `${E230_SOURCE}: type J same as K, standard limits ±2.2 °C or 0.75 %` },
    special: { ...kOrNSpecial, note: `${E230_SOURCE}: type J same as K, special limits ±1.1 °C or 0.4 %` },
  },
  // practice.md gives one R/S value without a grade; used for both grades.
  R: { standard: rOrS, special: rOrS },
  S: { standard: rOrS, special: rOrS },
  B: { standard: notInTable('B'), special: notInTable('B') },
  E: { standard: notInTable('E'), special: notInTable('E') },
  T: { standard: notInTable('T'), special: notInTable('T') },
});
