/**
 * Grossmann ideal critical diameter from the ASTM A255 multiplying factors (metallurgy.md §7.1, [F2]: a public
 * document reproducing ASTM A255-10(2014) with its worked example). Grain size 7, non-boron steels. DI is the
 * bar diameter whose centre reaches 50 % martensite under an ideal (infinite-severity) quench – for austempering
 * it is used as a cross-check of the section against the steel's hardenability, never as the answer.
 */
import type { ChemistryWtPct, Element } from './chemistry.js';

/** ASTM grain size the A255 multiplying factors are defined for (§7.1). */
export const A255_GRAIN_SIZE_ASTM = 7;

export interface IdealCriticalDiameter {
  inches: number;
  mm: number;
  factors: Record<'C' | 'Mn' | 'Si' | 'Ni' | 'Cr' | 'Mo' | 'Cu' | 'V', number>;
  /** Elements outside the ranges the factors are defined for (C 0.01–0.90, Si ≤ 2.0, Mn ≤ 1.95, …). */
  outOfRange: string[];
}

const FACTOR_LIMITS: Array<[Element, number, number]> = [
  ['C', 0.01, 0.9],
  ['Mn', 0, 1.95],
  ['Si', 0, 2.0],
  ['Cr', 0, 2.5],
  ['Ni', 0, 3.5],
  ['Cu', 0, 0.55],
  ['Mo', 0, 0.55],
  ['V', 0, 0.2],
];

export function carbonFactor(c: number): number {
  if (c <= 0.39) return 0.54 * c;
  if (c <= 0.55) return 0.171 + 0.001 * c + 0.265 * c * c;
  if (c <= 0.65) return 0.115 + 0.268 * c - 0.038 * c * c;
  if (c <= 0.75) return 0.143 + 0.2 * c;
  return 0.062 + 0.409 * c - 0.135 * c * c;
}

export function idealCriticalDiameter(chem: ChemistryWtPct): IdealCriticalDiameter {
  const w = (el: Element) => chem[el] ?? 0;
  const mn = w('Mn');
  const ni = w('Ni');
  const factors = {
    C: carbonFactor(Math.min(Math.max(w('C'), 0.01), 0.9)),
    Mn: mn <= 1.2 ? 1 + 3.3333 * mn : 5.1 * mn - 1.12,
    Si: 1 + 0.7 * w('Si'),
    Ni: ni <= 1.5 ? 1 + 0.363 * ni : 0.3211 + 1.4501 * ni - 0.6119 * ni * ni + 0.1253 * ni * ni * ni,
    Cr: 1 + 2.16 * w('Cr'),
    Mo: 1 + 3.0 * w('Mo'),
    Cu: 1 + 0.365 * w('Cu'),
    V: 1 + 1.73 * w('V'),
  };
  const inches = Object.values(factors).reduce((a, b) => a * b, 1);
  const outOfRange: string[] = [];
  for (const [el, lo, hi] of FACTOR_LIMITS) {
    const v = w(el);
    if (v < lo || v > hi) outOfRange.push(`${el} ${v} wt% (A255 factors defined for ${lo}–${hi})`);
  }
  return { inches, mm: inches * 25.4, factors, outOfRange };
}
