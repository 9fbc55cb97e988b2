import { LinePhysics, NOISE } from './physics.js';
import { BATH_TC_INTERVAL_S, productByCode, specInForce } from './plant.js';
import type { PlantedProblem } from './scenario.js';
import type { Schedule, ScheduledLoad } from './schedule.js';

/**
 * Robustness check of a scenario: does each load land clearly on one side of every process-window limit,
 * whatever the white noise does? The deterministic part of each signal (setpoint, immersion rise, faults,
 * slow wander) is compared with the limits widened and narrowed by a margin that covers the noise
 * (4 standard deviations plus the recorder's 0.1 °C rounding). A load is
 *  - 'breaks' a rule when even the narrowed limit is broken for clearly longer than allowed,
 *  - 'keeps' it when even the widened limit is kept except for clearly shorter than allowed,
 *  - 'ambiguous' otherwise (the noise would decide; the scenario must not contain such loads).
 */

export type Verdict = 'breaks' | 'keeps' | 'ambiguous';

export interface LoadCheck {
  code: string;
  line: string;
  seq: number;
  planted: PlantedProblem | null;
  bathBand: Record<string, Verdict>;
  twin: Verdict;
  /** The actual hold against the spec's minimum and maximum (never ambiguous: event times are exact). */
  holdMinBroken: boolean;
  holdMaxBroken: boolean;
  transferBroken: boolean;
  /** Planned soak shorter than the spec minimum plus a minute. */
  soakShort: boolean;
}

/** Run lengths are measured on the 2 s sampling grid; one sample either way must not flip a verdict. */
const SLACK_S = 10;
const BAND_MARGIN_C = 4 * NOISE.bathTcC + 0.05;
const TWIN_MARGIN_C = 4 * Math.SQRT2 * NOISE.bathTcC + 0.1;

function longestRunS(tS: number[], bad: boolean[]): number {
  let best = 0;
  let from: number | null = null;
  for (let i = 0; i < tS.length; i++) {
    if (bad[i]) {
      if (from === null) from = tS[i]!;
      best = Math.max(best, tS[i]! - from + BATH_TC_INTERVAL_S);
    } else {
      from = null;
    }
  }
  return best;
}

function verdict(breakRunS: number, keepRunS: number, allowedS: number, inclusive: boolean): Verdict {
  const breaks = inclusive ? breakRunS >= allowedS + SLACK_S : breakRunS > allowedS + SLACK_S;
  if (breaks) return 'breaks';
  if (keepRunS < allowedS - SLACK_S) return 'keeps';
  return 'ambiguous';
}

export function checkLoad(load: ScheduledLoad, physics: LinePhysics): LoadCheck {
  const window = specInForce(productByCode(load.plan.product)).processWindow;
  const tcs = physics.line.bath.tcs.map((t) => t.code);
  const tS: number[] = [];
  const trends: number[][] = tcs.map(() => []);
  for (let t = load.intoBathMs; t <= load.outOfBathMs; t += BATH_TC_INTERVAL_S * 1000) {
    tS.push(t / 1000);
    tcs.forEach((code, i) => trends[i]!.push(physics.bathTcTrendC(code, t)));
  }
  const { minTempC, maxTempC, maxExcursionS } = window.bath;
  const bathBand: Record<string, Verdict> = {};
  tcs.forEach((code, i) => {
    const v = trends[i]!;
    const surelyOut = v.map((x) => x > maxTempC + BAND_MARGIN_C || x < minTempC - BAND_MARGIN_C);
    const maybeOut = v.map((x) => x > maxTempC - BAND_MARGIN_C || x < minTempC + BAND_MARGIN_C);
    bathBand[code] = verdict(longestRunS(tS, surelyOut), longestRunS(tS, maybeOut), maxExcursionS, false);
  });
  const { maxDiffC, minDurationS } = window.twinTolerance;
  const diff = trends[0]!.map((x, i) => Math.abs(x - trends[1]![i]!));
  const twin = verdict(
    longestRunS(tS, diff.map((d) => d > maxDiffC + TWIN_MARGIN_C)),
    longestRunS(tS, diff.map((d) => d > maxDiffC - TWIN_MARGIN_C)),
    minDurationS,
    true,
  );
  const holdMin = (load.outOfBathMs - load.intoBathMs) / 60_000;
  return {
    code: load.code,
    line: load.line,
    seq: load.seq,
    planted: load.plan.planted ?? null,
    bathBand,
    twin,
    holdMinBroken: holdMin < window.bath.minHoldMin,
    holdMaxBroken: holdMin > window.bath.maxHoldMin,
    transferBroken: load.plan.transferS > window.maxTransferS,
    soakShort: load.plan.soakMin < window.austenitize.minMinutes + 1,
  };
}

export function checkSchedule(schedule: Schedule, seed: number): LoadCheck[] {
  const out: LoadCheck[] = [];
  for (const line of schedule.lines) {
    const physics = new LinePhysics(line.line, line.loads, schedule.faults, seed);
    for (const load of line.loads) out.push(checkLoad(load, physics));
  }
  return out;
}
