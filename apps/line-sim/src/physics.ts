import type { SectionShape } from '@ausline/contracts';
import type { BathDef, FurnaceDef, FurnaceZoneDef, LineDef } from './plant.js';
import { gaussian, hashString, wander } from './rng.js';

/**
 * Physical models of the simulated equipment. Pure functions of time (milliseconds from the scenario
 * start) and of the loads and equipment faults on the line, so a reading never depends on when or how
 * often it is generated.
 *
 * Constants are textbook values, marked [M] (from memory) where no project source backs them.
 */

/** Mean specific heat of steel and cast iron from austenitizing down to the salt, kJ/(kg·K), including part
 *  of the transformation heat [M]. */
export const LOAD_SPECIFIC_HEAT_KJ_PER_KG_K = 0.65;
/** Specific heat of molten nitrite–nitrate salt, kJ/(kg·K) [M: about 1.5]. */
export const SALT_SPECIFIC_HEAT_KJ_PER_KG_K = 1.55;
/** ρ·c of steel/iron, J/(m³·K) [M: 7,800 kg/m³ × 650 J/(kg·K)]. */
export const LOAD_RHO_C_J_PER_M3_K = 7800 * 650;
/** A basket of parts does not give up its heat faster than the salt can circulate through it. */
export const BASKET_MIN_TAU_S = 20;
/** Temperature the load loses between furnace and salt (a few seconds in air). */
export const TRANSFER_LOSS_C = 10;

/**
 * The furnace PLC logs CHARGED when the loading sequence ends (load in, door closed). The door opened this
 * long before, and the zones have been dropping since (cold load, air).
 */
export const DOOR_OPEN_BEFORE_CHARGED_S = 75;

/** Furnace recovery after charging: a quick drop (door open, cold load), then full-power ramp, then the
 *  controller's approach over the last few degrees. */
const DROP_TAU_S = 25;
const DROP_PHASE_S = 90;
const APPROACH_BAND_C = 5;
const APPROACH_TAU_S = 180;

/** Longest time a load may spend from CHARGED to OUT_OF_BATH (the schedule never plans longer). */
export const MAX_LOAD_SPAN_MS = 8 * 3_600_000;

/** What the models need to know about one load. Times are ms from the scenario start. */
export interface LoadPhysics {
  weightKg: number;
  sectionShape: SectionShape;
  sectionSizeMm: number;
  chargedMs: number;
  outOfFurnaceMs: number;
  intoBathMs: number;
  outOfBathMs: number;
}

/** Equipment faults that the planted problems are made of. */
export type EquipmentFault =
  | {
      kind: 'bath-creep';
      line: string;
      /** The salt starts creeping up (cooling capacity lost: e.g. the heat-exchanger blower failing). */
      startMs: number;
      /** Maintenance restores the cooling; the salt settles back with fixTauS. */
      endMs: number;
      rateCPerH: number;
      fixTauS: number;
    }
  | {
      kind: 'thermocouple-drift';
      line: string;
      tc: string;
      /** The thermocouple starts reading away from the salt (e.g. a cracked sheath shunting the junction). */
      startMs: number;
      /** It is replaced; the reading steps back to the truth. */
      endMs: number;
      /** The error the reading settles at (first-order, time constant tauS). */
      finalOffsetC: number;
      tauS: number;
    };

/** Lumped cooling time constant of a part in the salt, s: τ = ρ·c·(V/A)/h (Bi small; a basket no faster than BASKET_MIN_TAU_S). */
export function loadCoolingTauS(shape: SectionShape, sizeMm: number, hWPerM2K: number): number {
  const sizeM = sizeMm / 1000;
  // V/A of an infinite plate is half the thickness; of a long cylinder or square bar a quarter of the diameter/side.
  const volumeToArea = shape === 'PLATE' ? sizeM / 2 : sizeM / 4;
  return Math.max(BASKET_MIN_TAU_S, (LOAD_RHO_C_J_PER_M3_K * volumeToArea) / hWPerM2K);
}

/** Salt temperature rise if all of the load's heat went into the salt at once (no cooling), °C. */
export function immersionRiseMaxC(load: Pick<LoadPhysics, 'weightKg'>, austenitizeC: number, bath: BathDef): number {
  const heatKJ = load.weightKg * LOAD_SPECIFIC_HEAT_KJ_PER_KG_K * (austenitizeC - TRANSFER_LOSS_C - bath.setpointC);
  return heatKJ / (bath.saltMassKg * SALT_SPECIFIC_HEAT_KJ_PER_KG_K);
}

/**
 * Salt temperature rise s seconds after immersion: the load gives its heat with time constant τ_in and the
 * bath sheds it with τ_b (two first-order lags in series):
 *   ΔT(s) = ΔT_max · τ_b / (τ_b − τ_in) · (e^(−s/τ_b) − e^(−s/τ_in)).
 */
export function immersionRiseC(sinceS: number, riseMaxC: number, tauInS: number, tauBathS: number): number {
  if (sinceS <= 0) return 0;
  if (Math.abs(tauBathS - tauInS) < 1e-6) return riseMaxC * (sinceS / tauBathS) * Math.exp(-sinceS / tauBathS);
  return ((riseMaxC * tauBathS) / (tauBathS - tauInS)) * (Math.exp(-sinceS / tauBathS) - Math.exp(-sinceS / tauInS));
}

/** Furnace temperature deficit s seconds after a disturbance of size dropC (door open + cold load), for a
 *  zone recovering at rampCPerMin. */
export function furnaceDeficitC(sinceS: number, dropC: number, rampCPerMin: number): number {
  if (sinceS <= 0) return 0;
  const atEndOfDrop = dropC * (1 - Math.exp(-DROP_PHASE_S / DROP_TAU_S));
  if (sinceS < DROP_PHASE_S) return dropC * (1 - Math.exp(-sinceS / DROP_TAU_S));
  if (atEndOfDrop <= APPROACH_BAND_C) return atEndOfDrop * Math.exp(-(sinceS - DROP_PHASE_S) / APPROACH_TAU_S);
  const rampEndS = DROP_PHASE_S + (60 * (atEndOfDrop - APPROACH_BAND_C)) / rampCPerMin;
  if (sinceS < rampEndS) return atEndOfDrop - (rampCPerMin * (sinceS - DROP_PHASE_S)) / 60;
  return APPROACH_BAND_C * Math.exp(-(sinceS - rampEndS) / APPROACH_TAU_S);
}

/** Seconds after charging until the zone reads at least `deficitC` below its steady value again. */
export function furnaceRecoveryS(dropC: number, rampCPerMin: number, deficitC: number): number {
  const atEndOfDrop = dropC * (1 - Math.exp(-DROP_PHASE_S / DROP_TAU_S));
  if (deficitC >= atEndOfDrop) return DROP_PHASE_S;
  if (atEndOfDrop <= APPROACH_BAND_C) return DROP_PHASE_S + APPROACH_TAU_S * Math.log(atEndOfDrop / deficitC);
  const rampEndS = DROP_PHASE_S + (60 * (atEndOfDrop - APPROACH_BAND_C)) / rampCPerMin;
  if (deficitC >= APPROACH_BAND_C) return DROP_PHASE_S + (60 * (atEndOfDrop - deficitC)) / rampCPerMin;
  return rampEndS + APPROACH_TAU_S * Math.log(APPROACH_BAND_C / deficitC);
}

export function chargeDropC(furnace: FurnaceDef, weightKg: number): number {
  return furnace.chargeDrop.baseC + furnace.chargeDrop.perKgC * weightKg;
}

/**
 * Minutes from CHARGED until every zone reads at least `minTempC + marginC` (what a furnace operator waits
 * for before starting the soak clock).
 */
export function furnaceReachMin(furnace: FurnaceDef, weightKg: number, minTempC: number, marginC: number): number {
  const drop = chargeDropC(furnace, weightKg);
  let worstS = 0;
  for (const zone of furnace.zones) {
    const allowedDeficit = furnace.setpointC + zone.offsetC - minTempC - marginC;
    if (allowedDeficit <= 0) throw new Error(`furnace ${furnace.code} ${zone.code} never reaches ${minTempC + marginC} °C`);
    worstS = Math.max(worstS, furnaceRecoveryS(drop, zone.rampCPerMin, allowedDeficit));
  }
  return (worstS - DOOR_OPEN_BEFORE_CHARGED_S) / 60;
}

// ---------------------------------------------------------------------------------------------
// Signals
// ---------------------------------------------------------------------------------------------

const SHARED_SALT_WANDER = [
  { amplitude: 0.35, periodS: 41 * 60 },
  { amplitude: 0.2, periodS: 97 * 60 },
];
const TC_OWN_WANDER = [{ amplitude: 0.12, periodS: 23 * 60 }];
const ZONE_WANDER = [
  { amplitude: 0.2, periodS: 47 * 60 },
  { amplitude: 0.1, periodS: 131 * 60 },
];

/** White noise of one reading (standard deviations), °C or rpm. */
export const NOISE = {
  bathTcC: 0.12,
  furnaceZoneC: 0.1,
  agitationRpm: 3,
  carbonPotentialPct: 0.004,
} as const;

/** Largest amount the deterministic wander of one thermocouple can add on top of the salt's (for margins). */
export const TC_OWN_WANDER_MAX_C = TC_OWN_WANDER.reduce((s, c) => s + c.amplitude, 0);

/**
 * One line's equipment as a set of signal functions. `loads` must be sorted by chargedMs and cover every
 * load that can influence the times asked for (the simulator extends its schedule ahead of the clock).
 */
export class LinePhysics {
  private readonly seed: number;
  private readonly hWPerM2K: number;

  constructor(
    readonly line: LineDef,
    private readonly loads: readonly LoadPhysics[],
    private readonly faults: readonly EquipmentFault[],
    scenarioSeed: number,
  ) {
    this.seed = (hashString(line.code) ^ scenarioSeed) >>> 0;
    this.hWPerM2K = line.hCoefficientByAgitation.normal ?? Object.values(line.hCoefficientByAgitation)[0] ?? 1400;
  }

  /** Loads whose effect may still be felt at tMs (rises decay within ~10 τ; furnace drops within an hour or two). */
  private recentLoads(tMs: number, lookbackMs: number, key: 'chargedMs' | 'intoBathMs' | 'outOfFurnaceMs'): LoadPhysics[] {
    // Loads are sorted by chargedMs and no load spends more than MAX_LOAD_SPAN_MS between charging and
    // leaving the bath, so only a window of them can matter: binary search for its start.
    const earliestCharge = tMs - lookbackMs - MAX_LOAD_SPAN_MS;
    let lo = 0;
    let hi = this.loads.length;
    while (lo < hi) {
      const mid = (lo + hi) >>> 1;
      if (this.loads[mid]!.chargedMs < earliestCharge) lo = mid + 1;
      else hi = mid;
    }
    const out: LoadPhysics[] = [];
    for (let i = lo; i < this.loads.length; i++) {
      const load = this.loads[i]!;
      if (load.chargedMs > tMs) break;
      const at = load[key];
      if (at <= tMs && at >= tMs - lookbackMs) out.push(load);
    }
    return out;
  }

  // --- bath ---------------------------------------------------------------------------------

  /** The mean salt temperature without white noise: setpoint + immersion rises + faults + slow wander. */
  saltC(tMs: number): number {
    const bath = this.line.bath;
    let value = bath.setpointC;
    const tauBathS = bath.recoveryTauS;
    for (const load of this.recentLoads(tMs, 20 * tauBathS * 1000, 'intoBathMs')) {
      const riseMax = immersionRiseMaxC(load, this.line.furnace.setpointC, bath);
      const tauIn = loadCoolingTauS(load.sectionShape, load.sectionSizeMm, this.hWPerM2K);
      value += immersionRiseC((tMs - load.intoBathMs) / 1000, riseMax, tauIn, tauBathS);
    }
    for (const fault of this.faults) {
      if (fault.kind !== 'bath-creep' || fault.line !== this.line.code || tMs <= fault.startMs) continue;
      const creptC = (fault.rateCPerH * (Math.min(tMs, fault.endMs) - fault.startMs)) / 3_600_000;
      value += tMs <= fault.endMs ? creptC : creptC * Math.exp(-(tMs - fault.endMs) / 1000 / fault.fixTauS);
    }
    return value + wander(this.seed ^ 0x5a17, tMs / 1000, SHARED_SALT_WANDER);
  }

  /** A bath thermocouple's reading without white noise: salt + position offset + own wander + drift fault. */
  bathTcTrendC(tcCode: string, tMs: number): number {
    const tc = this.line.bath.tcs.find((t) => t.code === tcCode);
    if (!tc) throw new Error(`no thermocouple ${tcCode} on ${this.line.bath.code}`);
    let value = this.saltC(tMs) + tc.offsetC + wander(this.seed ^ hashString(tcCode), tMs / 1000, TC_OWN_WANDER);
    for (const fault of this.faults) {
      if (fault.kind !== 'thermocouple-drift' || fault.line !== this.line.code || fault.tc !== tcCode) continue;
      if (tMs > fault.startMs && tMs < fault.endMs) value += fault.finalOffsetC * (1 - Math.exp(-(tMs - fault.startMs) / 1000 / fault.tauS));
    }
    return value;
  }

  bathTcC(tcCode: string, tMs: number): number {
    return this.bathTcTrendC(tcCode, tMs) + NOISE.bathTcC * gaussian(this.seed, hashString(tcCode), tMs);
  }

  agitationRpm(tMs: number): number {
    const bath = this.line.bath;
    // A basket going in drags on the impeller for a minute or so.
    let drag = 0;
    for (const load of this.recentLoads(tMs, 5 * 60_000, 'intoBathMs')) drag += 12 * Math.exp(-(tMs - load.intoBathMs) / 40_000);
    return bath.agitationRpm - drag + NOISE.agitationRpm * gaussian(this.seed, 0xa61, tMs);
  }

  // --- furnace ------------------------------------------------------------------------------

  zoneTrendC(zone: FurnaceZoneDef, tMs: number): number {
    const furnace = this.line.furnace;
    let deficit = 0;
    const doorOpenMs = DOOR_OPEN_BEFORE_CHARGED_S * 1000;
    for (const load of this.recentLoads(tMs + doorOpenMs, 3 * 3_600_000, 'chargedMs')) {
      const sinceDoorOpenS = (tMs - load.chargedMs + doorOpenMs) / 1000;
      deficit += furnaceDeficitC(sinceDoorOpenS, chargeDropC(furnace, load.weightKg), zone.rampCPerMin);
    }
    for (const load of this.recentLoads(tMs, 3_600_000, 'outOfFurnaceMs')) {
      deficit += furnaceDeficitC((tMs - load.outOfFurnaceMs) / 1000, furnace.unloadDropC, zone.rampCPerMin);
    }
    return furnace.setpointC + zone.offsetC - deficit + wander(this.seed ^ hashString(zone.code), tMs / 1000, ZONE_WANDER);
  }

  zoneC(zoneCode: string, tMs: number): number {
    const zone = this.line.furnace.zones.find((z) => z.code === zoneCode);
    if (!zone) throw new Error(`no zone ${zoneCode} on ${this.line.furnace.code}`);
    return this.zoneTrendC(zone, tMs) + NOISE.furnaceZoneC * gaussian(this.seed, hashString(zoneCode), tMs);
  }

  carbonPotentialPct(tMs: number): number {
    let dip = 0;
    // Air comes in with the door open; the atmosphere recovers within tens of minutes.
    const doorOpenMs = DOOR_OPEN_BEFORE_CHARGED_S * 1000;
    for (const load of this.recentLoads(tMs + doorOpenMs, 2 * 3_600_000, 'chargedMs')) {
      const sinceMs = tMs - load.chargedMs + doorOpenMs;
      if (sinceMs > 0) dip += 0.12 * Math.exp(-sinceMs / 600_000);
    }
    return this.line.furnace.carbonPotentialPct - dip + NOISE.carbonPotentialPct * gaussian(this.seed, 0xc9, tMs);
  }

  /** The value of a channel (by equipment kind and code) at tMs, before the recorder's rounding. */
  channelValue(equipment: 'FURNACE' | 'BATH', channelCode: string, tMs: number): number {
    if (equipment === 'BATH') {
      if (channelCode === 'agitator') return this.agitationRpm(tMs);
      return this.bathTcC(channelCode, tMs);
    }
    if (channelCode === 'cp') return this.carbonPotentialPct(tMs);
    return this.zoneC(channelCode, tMs);
  }
}
