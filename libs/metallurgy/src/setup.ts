/**
 * What a batch is, before any bath sample arrives: the heat's chemistry, the parts, the austenitize and transfer,
 * the bath line, the uncertainty settings and any per-product calibration. A plain JSON-serialisable object that
 * the live worker stores inside the batch state.
 */
import type { ChemistryWtPct, Element, Material } from './chemistry.js';
import type { Agitation } from './cooling/conduction.js';

export type Section = { shape: 'plate'; thicknessMm: number } | { shape: 'cylinder'; diameterMm: number } | { shape: 'sphere'; diameterMm: number };

/** Quantities that carry p05/p50/p95 bands (every quantity a rule may judge). */
export const BAND_QUANTITIES = [
  'ceilingFraction',
  'fractionAtEnd',
  'timeTo95PctS',
  'upperProductsFraction',
  'coreReachesBathS',
  'bainiticFerrite',
  'filmAustenite',
  'blockyAustenite',
  'freshMartensite',
  'filmToBlockyRatio',
  'austeniteCarbonWtPct',
  'residualAusteniteMsC',
  't0PrimeCarbonWtPct',
  'hardnessHV',
  'hardnessHRC',
  'hardnessHBW',
  'tensileMPa',
  // Appended (not inserted) so the calibration spreads of the quantities above keep their random streams.
  'retainedAusteniteFraction',
] as const;
export type BandQuantity = (typeof BAND_QUANTITIES)[number];

/**
 * Per-product calibration learned later from lab results (the hook; nothing learns it here).
 * - bainiteTimeFactor multiplies Li's bainite τ̂ (e.g. fitted to dilatometry of the product): > 1 = slower.
 * - ferritePearliteTimeFactor multiplies Li's ferrite and pearlite τ̂ on the quench path (e.g. fitted to
 *   metallography of sections that did or did not show upper products).
 * - t0PrimeBiasWtPct is added to the T0′ carbon (§9.1: per-grade calibration to XRD retained-austenite carbon).
 * - bainiteTimeLnSd, ferritePearliteTimeLnSd, t0PrimeSdWtPct: the scatter left after such a calibration (the
 *   product's own trials), used in place of the generic model error of that quantity: the ln-sd of the bainite
 *   time (default MODEL_ERRORS.bainiteLnTimeSd), of the ferrite/pearlite times (default 1.0), and a normal sd of
 *   T0′ that replaces the spread between the two T0′ descriptions and of the stored energy (the calibrated T0′ is
 *   the CALPHAD one plus the bias; the XRD data fix it, not the choice of description).
 * - hardnessFactor multiplies the predicted hardness of every member (a per-grade fit of the phase-mixture model to
 *   the product's own hardness, §9.7), and hardnessLnSd replaces its ln-sd (default MODEL_ERRORS.hardnessLnSd); the
 *   tensile estimate follows the hardness.
 * - bands: for any banded quantity, a bias added to every ensemble member and an extra normal spread (sd, same
 *   unit), drawn from the batch's seed, so calibrated bands stay reproducible.
 */
export interface Calibration {
  bainiteTimeFactor?: number;
  ferritePearliteTimeFactor?: number;
  t0PrimeBiasWtPct?: number;
  bainiteTimeLnSd?: number;
  ferritePearliteTimeLnSd?: number;
  t0PrimeSdWtPct?: number;
  hardnessFactor?: number;
  hardnessLnSd?: number;
  bands?: Partial<Record<BandQuantity, { bias?: number; sd?: number }>>;
}

export interface UncertaintySettings {
  samples: number;
  seed: number;
  /** 1σ of the bath thermocouple's systematic error, °C (default DEFAULT_THERMOCOUPLE_SD_C). */
  thermocoupleSdC?: number;
  /** 1σ of each element's analysis/tolerance error, wt% (defaults DEFAULT_CHEMISTRY_SD_WT_PCT). */
  chemistrySdWtPct?: Partial<Record<Element, number>>;
}

export interface BatchSetup {
  material: Material;
  chemistryWtPct: ChemistryWtPct;
  grainSizeAstm: number;
  section: Section;
  austenitize: { tempC: number; minutes: number };
  transferS: number;
  agitation: Agitation;
  /** Per-line calibrated bath heat-transfer coefficient, W/(m² K); overrides the agitation default. */
  heatTransferWPerM2K?: number;
  ambientC: number;
  uncertainty: UncertaintySettings;
  calibration?: Calibration;
}

/** Half-thickness (plate) or radius (cylinder, sphere), m. */
export function sectionHalfSizeM(section: Section): number {
  return section.shape === 'plate' ? section.thicknessMm / 2000 : section.diameterMm / 2000;
}

export function sectionSizeMm(section: Section): number {
  return section.shape === 'plate' ? section.thicknessMm : section.diameterMm;
}
