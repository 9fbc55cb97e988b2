import type { AcceptanceCriteria, ProcessWindow } from '@ausline/contracts';
import { checkChemistry, ELEMENTS, type Agitation, type BatchSetup, type Calibration, type ChemistryWtPct, type Section } from '@ausline/metallurgy';
import type { ProductCalibrations } from '../calibration/bands.js';
import type { LoadEventTimes, TemperatureChannelSeries } from '../process-window/types.js';

/**
 * From the records of a batch (heat, part section, load events, furnace zones, agitator, line, spec) to the setup of
 * the metallurgical model, plus what was assumed where a record was missing (each assumption is a warning).
 */

export type RecordMaterial = 'STEEL' | 'DUCTILE_IRON';
export type RecordSectionShape = 'PLATE' | 'CYLINDER' | 'SQUARE_BAR';

/** Prior-austenite grain size when the spec gives none: ASTM 8, a fine-grained austenitized steel (our assumption). */
export const DEFAULT_GRAIN_SIZE_ASTM = 8;
export const DEFAULT_AMBIENT_C = 20;
/** Agitator speeds at or below this are "stopped" (still bath). */
export const AGITATOR_STOPPED_RPM = 1;

export interface SetupRecords {
  heat: { material: RecordMaterial; chemistryWtPct: Readonly<Record<string, number>> };
  section: { shape: RecordSectionShape; sizeMm: number };
  window: ProcessWindow;
  criteria: AcceptanceCriteria;
  events: LoadEventTimes;
  /** Temperature channels of the line (furnace zones are read here). */
  channels: readonly TemperatureChannelSeries[];
  /** Agitator speed readings (rpm) of the bath, any order; empty when the bath has no agitator channel. */
  agitatorRpm: ReadonlyArray<{ tMs: number; value: number }>;
  /** Line's calibrated bath heat-transfer coefficients by agitation level (Line.hCoefficientByAgitation). */
  lineHeatTransfer: Readonly<Record<string, number>> | null;
  uncertainty: { samples: number; seed: number };
  /**
   * The product's running lab calibrations (per quantity; those not yet in force are ignored). Applied to each
   * evaluation's bands (evaluate.ts), not put in the setup: the engine state does not depend on them.
   */
  labCalibration?: ProductCalibrations;
}

export interface SetupBasis {
  material: 'steel' | 'ductile-iron';
  section: { shape: RecordSectionShape; sizeMm: number };
  austenitize: { tempC: number; minutes: number; source: 'furnace-zones' | 'spec' };
  transferS: { value: number; source: 'load-events' | 'spec-max' };
  agitation: Agitation;
  agitationSource: 'agitator' | 'assumed';
  heatTransferWPerM2K: number | null;
  grainSizeAstm: number;
  ambientC: number;
}

export interface BuiltSetup {
  setup: BatchSetup;
  basis: SetupBasis;
  warnings: string[];
}

export function engineMaterial(m: RecordMaterial): 'steel' | 'ductile-iron' {
  return m === 'DUCTILE_IRON' ? 'ductile-iron' : 'steel';
}

/** The model's section for a record's section. A square bar is taken as the round of the same side: same
 *  volume-to-surface ratio a/4 = d/4, which sets how fast the centre follows the surface (our assumption). */
export function engineSection(shape: RecordSectionShape, sizeMm: number): Section {
  if (shape === 'PLATE') return { shape: 'plate', thicknessMm: sizeMm };
  return { shape: 'cylinder', diameterMm: sizeMm };
}

/** Chemistry the model knows (other symbols, e.g. Mg, Sn, Sb of a ductile iron, are ignored with a warning). */
export function engineChemistry(chem: Readonly<Record<string, number>>, warnings: string[]): ChemistryWtPct {
  const known: ReadonlySet<string> = new Set(ELEMENTS);
  const out: ChemistryWtPct = {};
  const ignored: string[] = [];
  for (const [el, v] of Object.entries(chem)) {
    if (known.has(el)) (out as Record<string, number>)[el] = v;
    else ignored.push(el);
  }
  if (ignored.length) warnings.push(`chemistryWtPct: ${ignored.sort().join(', ')} not used by the model`);
  return out;
}

const AGITATION_KEYS: Record<Agitation, readonly string[]> = {
  still: ['still', 'none', 'off', 'stopped'],
  moderate: ['moderate', 'normal', 'medium', 'on'],
  strong: ['strong', 'high', 'vigorous'],
};

/** The line's calibrated coefficient for an agitation level, under any of its usual names; null when not given. */
export function lineHeatTransferFor(table: Readonly<Record<string, number>> | null, agitation: Agitation): number | null {
  if (!table) return null;
  for (const key of AGITATION_KEYS[agitation]) {
    const v = table[key];
    if (typeof v === 'number' && Number.isFinite(v) && v > 0) return v;
  }
  return null;
}

/** Records the model cannot work from (e.g. a heat without carbon); the message names the field. */
export class PredictionInputError extends Error {
  constructor(readonly issues: string[]) {
    super(`cannot predict: ${issues.join('; ')}`);
    this.name = 'PredictionInputError';
  }
}

export function buildBatchSetup(r: SetupRecords): BuiltSetup {
  const warnings: string[] = [];
  const material = engineMaterial(r.heat.material);
  const chemistryWtPct = engineChemistry(r.heat.chemistryWtPct, warnings);
  const errors = checkChemistry(chemistryWtPct, material).issues.filter((i) => i.severity === 'error');
  if (errors.length) throw new PredictionInputError(errors.map((i) => `heat ${i.field.startsWith('chemistryWtPct') ? i.field : `chemistryWtPct.${i.field}`}: ${i.message}`));
  if (!(r.section.sizeMm > 0)) throw new PredictionInputError([`section.sizeMm: must be more than 0; got ${r.section.sizeMm}`]);
  const settings = r.criteria.prediction ?? {};

  const austenitize = austenitizeFromZones(r, warnings);
  let transferS: SetupBasis['transferS'];
  if (r.events.outOfFurnaceMs !== undefined && r.events.intoBathMs !== undefined && r.events.intoBathMs >= r.events.outOfFurnaceMs) {
    transferS = { value: (r.events.intoBathMs - r.events.outOfFurnaceMs) / 1000, source: 'load-events' };
  } else {
    transferS = { value: r.window.maxTransferS, source: 'spec-max' };
    warnings.push(`transferS: no OUT_OF_FURNACE → INTO_BATH pair recorded; the spec's maximum transfer ${r.window.maxTransferS} s is assumed`);
  }

  const { agitation, source: agitationSource } = agitationFromRpm(r.agitatorRpm, r.events.intoBathMs);
  if (agitationSource === 'assumed') warnings.push("agitation: no agitator reading around the immersion; 'moderate' agitation is assumed");
  const h = lineHeatTransferFor(r.lineHeatTransfer, agitation);
  if (r.section.shape === 'SQUARE_BAR') warnings.push(`section: a ${r.section.sizeMm} mm square bar is modelled as a ${r.section.sizeMm} mm round (same volume-to-surface ratio)`);
  const grainSizeAstm = settings.grainSizeAstm ?? DEFAULT_GRAIN_SIZE_ASTM;
  if (settings.grainSizeAstm === undefined) warnings.push(`grainSizeAstm: not in the spec; ASTM ${DEFAULT_GRAIN_SIZE_ASTM} assumed`);
  const ambientC = settings.ambientC ?? DEFAULT_AMBIENT_C;

  const calibration: Calibration = {};
  if (settings.calibration?.bainiteTimeFactor !== undefined) calibration.bainiteTimeFactor = settings.calibration.bainiteTimeFactor;
  if (settings.calibration?.ferritePearliteTimeFactor !== undefined) calibration.ferritePearliteTimeFactor = settings.calibration.ferritePearliteTimeFactor;
  if (settings.calibration?.t0PrimeBiasWtPct !== undefined) calibration.t0PrimeBiasWtPct = settings.calibration.t0PrimeBiasWtPct;
  if (settings.calibration?.bainiteTimeLnSd !== undefined) calibration.bainiteTimeLnSd = settings.calibration.bainiteTimeLnSd;
  if (settings.calibration?.ferritePearliteTimeLnSd !== undefined) calibration.ferritePearliteTimeLnSd = settings.calibration.ferritePearliteTimeLnSd;
  if (settings.calibration?.t0PrimeSdWtPct !== undefined) calibration.t0PrimeSdWtPct = settings.calibration.t0PrimeSdWtPct;
  if (settings.calibration?.hardnessFactor !== undefined) calibration.hardnessFactor = settings.calibration.hardnessFactor;
  if (settings.calibration?.hardnessLnSd !== undefined) calibration.hardnessLnSd = settings.calibration.hardnessLnSd;

  const setup: BatchSetup = {
    material,
    chemistryWtPct,
    grainSizeAstm,
    section: engineSection(r.section.shape, r.section.sizeMm),
    austenitize: { tempC: round(austenitize.tempC, 1), minutes: round(austenitize.minutes, 1) },
    transferS: round(transferS.value, 1),
    agitation,
    ...(h !== null ? { heatTransferWPerM2K: h } : {}),
    ambientC,
    uncertainty: { samples: r.uncertainty.samples, seed: r.uncertainty.seed },
    ...(Object.keys(calibration).length ? { calibration } : {}),
  };
  return {
    setup,
    basis: {
      material,
      section: { ...r.section },
      austenitize: { tempC: setup.austenitize.tempC, minutes: setup.austenitize.minutes, source: austenitize.source },
      transferS: { value: setup.transferS, source: transferS.source },
      agitation,
      agitationSource,
      heatTransferWPerM2K: h,
      grainSizeAstm,
      ambientC,
    },
    warnings,
  };
}

/**
 * Austenitize temperature and time from the furnace zones: the soak starts when the mean of the zones first reaches
 * the spec's minimum after CHARGED and ends at OUT_OF_FURNACE; the temperature is the time-weighted mean of the zone
 * mean over the soak. Without zones or events the middle of the spec's band and its minimum soak are assumed.
 */
function austenitizeFromZones(r: SetupRecords, warnings: string[]): { tempC: number; minutes: number; source: 'furnace-zones' | 'spec' } {
  const w = r.window.austenitize;
  const fallback = { tempC: (w.minTempC + w.maxTempC) / 2, minutes: w.minMinutes, source: 'spec' as const };
  const { chargedMs, outOfFurnaceMs } = r.events;
  const zones = r.channels.filter((c) => c.role === 'furnace-zone' && c.samples.length > 0);
  if (chargedMs === undefined || outOfFurnaceMs === undefined || zones.length === 0) {
    warnings.push(`austenitize: no furnace record for the load; the spec's ${fallback.tempC} °C for ${fallback.minutes} min is assumed`);
    return fallback;
  }
  // Zone mean on a 10 s grid (each zone sample-and-hold within the spec's allowed gap).
  const stepMs = 10_000;
  const gapMs = r.window.maxChannelGapS * 1000;
  const sorted = zones.map((z) => [...z.samples].filter((s) => s.valueC >= r.window.plausible.minTempC && s.valueC <= r.window.plausible.maxTempC).sort((a, b) => a.tMs - b.tMs));
  const idx = sorted.map(() => 0);
  let soakStart: number | null = null;
  let sumT = 0;
  let sumDt = 0;
  for (let t = chargedMs; t <= outOfFurnaceMs; t += stepMs) {
    let sum = 0;
    let n = 0;
    sorted.forEach((rows, zi) => {
      while (idx[zi] + 1 < rows.length && rows[idx[zi] + 1].tMs <= t) idx[zi]++;
      const row = rows[idx[zi]];
      if (row && row.tMs <= t && t - row.tMs <= gapMs) {
        sum += row.valueC;
        n++;
      }
    });
    if (n === 0) continue;
    const mean = sum / n;
    if (soakStart === null && mean >= w.minTempC) soakStart = t;
    if (soakStart !== null) {
      sumT += mean * stepMs;
      sumDt += stepMs;
    }
  }
  if (soakStart === null || sumDt === 0) {
    warnings.push(`austenitize: the furnace zones never reached ${w.minTempC} °C with the load in; the spec's ${fallback.tempC} °C is assumed`);
    return fallback;
  }
  return { tempC: sumT / sumDt, minutes: (outOfFurnaceMs - soakStart) / 60_000, source: 'furnace-zones' };
}

/** Agitation during the quench (from 60 s before to 120 s after INTO_BATH): running → moderate, stopped → still. */
function agitationFromRpm(rows: ReadonlyArray<{ tMs: number; value: number }>, intoBathMs: number | undefined): { agitation: Agitation; source: 'agitator' | 'assumed' } {
  if (intoBathMs === undefined) return { agitation: 'moderate', source: 'assumed' };
  const around = rows.filter((r) => r.tMs >= intoBathMs - 60_000 && r.tMs <= intoBathMs + 120_000 && Number.isFinite(r.value));
  if (around.length === 0) return { agitation: 'moderate', source: 'assumed' };
  const mean = around.reduce((s, r) => s + r.value, 0) / around.length;
  return { agitation: mean <= AGITATOR_STOPPED_RPM ? 'still' : 'moderate', source: 'agitator' };
}

function round(x: number, digits: number): number {
  const k = 10 ** digits;
  return Math.round(x * k) / k;
}
