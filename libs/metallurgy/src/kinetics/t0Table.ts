/**
 * T0/T0′ over the temperatures a batch actually visits, on a fixed absolute grid (multiples of 10 °C), with the
 * columns the ensemble needs to perturb T0′ without re-solving CALPHAD per member:
 *   T0 (calphad), T0′ (calphad, 400 J/mol), T0′ (the constructed 'alt' spread), ∂T0′/∂w_i for each perturbed substitutional.
 * A member's T0′ is then  T0′ + Σ ∂T0′/∂w_i·Δw_i + mix·(T0′alt − T0′) + (E/400 − 1)·(T0′ − T0)  (+ calibration bias):
 * linear in the chemistry deviation (tolerances are small), linear in the stored energy (ΔG_m is close to linear in
 * x_C over that span) and a straight mix between CALPHAD and the constructed 'alt' spread (§9.1).
 *
 * The grid is absolute and each node's values depend only on the chemistry, so a table grown lazily in pieces
 * holds exactly the numbers a table built at once would: incremental and from-scratch runs agree. T0′ varies
 * smoothly with T (≈ −0.003 wt% per K, curvature ≈ 1e−6 wt%/K²), so linear interpolation over 10 °C errs by < 1e−4 wt%.
 */
import type { ChemistryWtPct, Element } from '../chemistry.js';
import { t0Curve, t0PrimeCarbonWtPct } from '../thermo/index.js';

export const T0_GRID_STEP_C = 10;
/** Composition step for the finite-difference sensitivities, wt%. */
const SENSITIVITY_STEP_WT_PCT = 0.1;

export interface T0Table {
  stepC: number;
  fromC: number;
  t0Calphad: number[];
  t0PrimeCalphad: number[];
  t0PrimeAlt: number[];
  /** ∂T0′/∂w per element, wt% C per wt%, aligned with the model's t0Elements. */
  sensitivity: number[][];
}

function nodeValues(chem: ChemistryWtPct, elements: readonly Element[], tempC: number): { t0: number; t0p: number; alt: number; sens: number[] } {
  const [row] = t0Curve(chem, tempC, tempC, 1);
  const alt = t0PrimeCarbonWtPct(chem, tempC, { description: 'alt' });
  const sens = elements.map((el) => {
    const bumped = { ...chem, [el]: (chem[el] ?? 0) + SENSITIVITY_STEP_WT_PCT };
    return (t0PrimeCarbonWtPct(bumped, tempC) - row.t0PrimeCarbonWtPct) / SENSITIVITY_STEP_WT_PCT;
  });
  return { t0: row.t0CarbonWtPct, t0p: row.t0PrimeCarbonWtPct, alt, sens };
}

/** Returns `table` itself when it already covers [loC, hiC], otherwise a new, extended table. */
export function ensureT0Table(table: T0Table | null, chem: ChemistryWtPct, elements: readonly Element[], loC: number, hiC: number): T0Table {
  const step = T0_GRID_STEP_C;
  const lo = Math.floor(Math.max(-50, loC) / step) * step;
  const hi = Math.ceil(Math.min(900, Math.max(hiC, loC + step)) / step) * step;
  if (table) {
    const top = table.fromC + (table.t0Calphad.length - 1) * step;
    if (table.fromC <= lo && top >= hi) return table;
  }
  const newFrom = table ? Math.min(table.fromC, lo) : lo;
  const oldTop = table ? table.fromC + (table.t0Calphad.length - 1) * step : -Infinity;
  const newTop = table ? Math.max(oldTop, hi) : hi;
  const count = Math.round((newTop - newFrom) / step) + 1;
  const out: T0Table = {
    stepC: step,
    fromC: newFrom,
    t0Calphad: new Array(count),
    t0PrimeCalphad: new Array(count),
    t0PrimeAlt: new Array(count),
    sensitivity: elements.map(() => new Array(count)),
  };
  for (let j = 0; j < count; j++) {
    const tempC = newFrom + j * step;
    if (table && tempC >= table.fromC && tempC <= oldTop) {
      const i = Math.round((tempC - table.fromC) / step);
      out.t0Calphad[j] = table.t0Calphad[i];
      out.t0PrimeCalphad[j] = table.t0PrimeCalphad[i];
      out.t0PrimeAlt[j] = table.t0PrimeAlt[i];
      elements.forEach((_, e) => (out.sensitivity[e][j] = table.sensitivity[e][i]));
    } else {
      const v = nodeValues(chem, elements, tempC);
      out.t0Calphad[j] = v.t0;
      out.t0PrimeCalphad[j] = v.t0p;
      out.t0PrimeAlt[j] = v.alt;
      v.sens.forEach((s, e) => (out.sensitivity[e][j] = s));
    }
  }
  return out;
}

/** Linear interpolation of one column at tempC (clamped to the table's ends). */
export function t0TableAt(table: T0Table, column: number[], tempC: number): number {
  const n = column.length;
  let p = (tempC - table.fromC) / table.stepC;
  if (p <= 0) return column[0];
  if (p >= n - 1) return column[n - 1];
  const j = Math.floor(p);
  p -= j;
  return column[j] + p * (column[j + 1] - column[j]);
}
