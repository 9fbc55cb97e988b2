/**
 * The microstructure after the hold and the cool to ambient (metallurgy.md §3.5, §5).
 *
 *   pool A         = austenite that enters the hold = 1 − upper products − martensite formed in the bath (if any)
 *   bainitic ferrite V_b = A · v      (v: bainite as a fraction of the pool, from the kinetics)
 *   austenite at the end of the hold V_γ = A − V_b, carbon C_γ = (C̄·A − V_b·s_b)/(A − V_b)   (§5.1 mass balance)
 *   film V_film = min(k_film·V_b, V_γ), k_film ≈ 0.15 (Bhadeshia & Edmonds 1983, number [M]); blocky = V_γ − V_film
 *   Ms(C_γ) by van Bohemen 2012 (§1.2) with the enriched carbon; α_m by van Bohemen (§3.5)
 *   fresh martensite = blocky · (1 − exp[−α_m (Ms(C_γ) − T_ambient)]) when Ms(C_γ) > T_ambient (Koistinen & Marburger
 *   1959); applied to the blocky austenite only – films are size-stabilised (§5.4)
 */
import type { ChemistryWtPct } from './chemistry.js';
import { msC } from './temperatures.js';

/** Koistinen & Marburger 1959 (Acta Metall. 7, 59): martensite fraction of the austenite cooled to tempC. */
export function koistinenMarburger(msCelsius: number, tempC: number, alphaPerK = 0.011): number {
  const under = msCelsius - tempC;
  return under > 0 ? 1 - Math.exp(-alphaPerK * under) : 0;
}

/** Substitutional part of van Bohemen's α_m, 1/K (§3.5, [F2]): 1e−3·[27.2 − (0.14Mn + 0.21Si + 0.11Cr + 0.08Ni + 0.05Mo)]. */
export function vanBohemenAlphaSubstitutionalPerK(chem: ChemistryWtPct): number {
  const w = (el: keyof ChemistryWtPct) => chem[el] ?? 0;
  return 1e-3 * (27.2 - (0.14 * w('Mn') + 0.21 * w('Si') + 0.11 * w('Cr') + 0.08 * w('Ni') + 0.05 * w('Mo')));
}

/** van Bohemen α_m (1/K) for austenite of carbon `carbonWtPct`: the carbon term is −19.8e−3·(1 − exp(−1.56 C)). */
export function vanBohemenAlphaPerK(chem: ChemistryWtPct, carbonWtPct: number): number {
  return vanBohemenAlphaSubstitutionalPerK(chem) - 19.8e-3 * (1 - Math.exp(-1.56 * carbonWtPct));
}

/**
 * Ms of austenite with the bulk substitutionals and `carbonWtPct` carbon: van Bohemen 2012, written as the
 * carbon-free value from temperatures.ts plus the exponential carbon term 600·(1 − exp(−0.96 C)) (the same
 * formula; splitting it lets the ensemble evaluate it without building a chemistry object per member).
 */
export function msSubstitutionalC(chem: ChemistryWtPct): number {
  return msC({ ...chem, C: 0 }, 'van-bohemen');
}
export function vanBohemenCarbonTermC(carbonWtPct: number): number {
  return 600 * (1 - Math.exp(-0.96 * carbonWtPct));
}

/** Everything the final state needs, as plain numbers (one ensemble member or the nominal case). */
export interface FinalStateParams {
  upperProducts: number;
  bathMartensite: number;
  /** Bainite as a fraction of the austenite pool, 0..1. */
  bainitePoolFraction: number;
  carbonWtPct: number;
  carbonInBainiticFerriteWtPct: number;
  filmCoefficient: number;
  /** van Bohemen Ms without the carbon term (plus any model offset), °C. */
  msSubstitutionalC: number;
  /** Substitutional part of α_m, 1/K (times any model factor is applied by the caller). */
  alphaSubstitutionalPerK: number;
  alphaFactor: number;
  ambientC: number;
}

export interface FinalState {
  bainiticFerrite: number;
  filmAustenite: number;
  /** Blocky austenite retained at ambient (after fresh martensite formed in it). */
  blockyAustenite: number;
  freshMartensite: number;
  upperProducts: number;
  bathMartensite: number;
  /** Film / blocky austenite at the end of the hold (§5.2); null when there is no blocky austenite. */
  filmToBlockyRatio: number | null;
  /** Blocky austenite at the end of the hold, before cooling. */
  blockyAtHoldEnd: number;
  austeniteCarbonWtPct: number;
  residualAusteniteMsC: number;
}

export function finalMicrostructure(p: FinalStateParams): FinalState {
  const pool = Math.max(0, 1 - p.upperProducts - p.bathMartensite);
  const v = Math.min(1, Math.max(0, p.bainitePoolFraction));
  const bainite = pool * v;
  const austenite = pool - bainite;
  const carbon = austenite > 1e-12 ? (p.carbonWtPct * pool - bainite * p.carbonInBainiticFerriteWtPct) / austenite : p.carbonWtPct;
  const film = Math.min(p.filmCoefficient * bainite, austenite);
  const blocky = austenite - film;
  const ms = p.msSubstitutionalC - vanBohemenCarbonTermC(carbon);
  const alpha = Math.max(1e-4, (p.alphaSubstitutionalPerK - 19.8e-3 * (1 - Math.exp(-1.56 * carbon))) * p.alphaFactor);
  const fresh = blocky * koistinenMarburger(ms, p.ambientC, alpha);
  return {
    bainiticFerrite: bainite,
    filmAustenite: film,
    blockyAustenite: blocky - fresh,
    freshMartensite: fresh,
    upperProducts: p.upperProducts,
    bathMartensite: p.bathMartensite,
    filmToBlockyRatio: blocky > 1e-9 ? film / blocky : null,
    blockyAtHoldEnd: blocky,
    austeniteCarbonWtPct: carbon,
    residualAusteniteMsC: ms,
  };
}
