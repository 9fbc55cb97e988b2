// Run rules on an individuals series (practice.md §4.5).
//
// Western Electric Statistical Quality Control Handbook (1956), zones in σ of the individuals chart:
//   WE1 one point beyond 3σ; WE2 2 of 3 consecutive beyond 2σ, same side; WE3 4 of 5 consecutive beyond
//   1σ, same side; WE4 8 consecutive on one side of the centre line.
// Nelson, "The Shewhart control chart – tests for special causes", J. Quality Technology 16(4) 1984:
//   N1 one point beyond 3σ; N2 9 in a row on one side; N3 6 in a row steadily increasing or decreasing;
//   N4 14 in a row alternating up and down; N5 2 of 3 beyond 2σ, same side; N6 4 of 5 beyond 1σ, same
//   side; N7 15 in a row within 1σ (either side); N8 8 in a row with none within 1σ (either side).
//
// Conventions, stated because the handbooks leave them implicit:
//   * "beyond" is strict (|z| > 2, not ≥); a point exactly on the centre line is on neither side and
//     breaks a one-side run; equal neighbours break a trend (N3) and an alternation (N4);
//   * a rule is tested on the window that ENDS at each point, and signals at that point. For the
//     "m of n" rules the newest point must itself be one of the m: otherwise the same window already
//     signalled at an earlier point (this does not change the run length to the first signal). At the
//     start of a series an "m of n" rule may hold on fewer than n points once m of them are there
//     (2 of the first 2 beyond 2σ is already 2 of 3); the "all n" rules need the full n;
//   * every point at which a rule holds is reported (a run of 10 on one side signals N2 at the 9th and
//     10th point); DriftMonitor marks the first of each episode as its onset;
//   * N8 counts points beyond 1σ on either side, as most software does; Nelson's wording "on both
//     sides" describes the mixture pattern it is meant to catch.

import type { SignalDirection } from './types.js';

export type WesternElectricRule = 1 | 2 | 3 | 4;
export type NelsonRule = 1 | 2 | 3 | 4 | 5 | 6 | 7 | 8;
export type RunRuleId = `WE${WesternElectricRule}` | `N${NelsonRule}`;

export interface RunRuleSelection {
  westernElectric: readonly WesternElectricRule[];
  nelson: readonly NelsonRule[];
}

export interface RunRuleHit {
  rule: RunRuleId;
  ruleSet: 'western-electric' | 'nelson';
  description: string;
  direction: SignalDirection;
  /** Number of points in the pattern: the newest point and the windowLength − 1 points before it. */
  windowLength: number;
}

export const RUN_RULE_DESCRIPTIONS: Readonly<Record<RunRuleId, string>> = {
  WE1: 'one point beyond 3σ',
  WE2: '2 of 3 consecutive points beyond 2σ on the same side',
  WE3: '4 of 5 consecutive points beyond 1σ on the same side',
  WE4: '8 consecutive points on one side of the centre line',
  N1: 'one point beyond 3σ',
  N2: '9 points in a row on one side of the centre line',
  N3: '6 points in a row steadily increasing or decreasing',
  N4: '14 points in a row alternating up and down',
  N5: '2 of 3 consecutive points beyond 2σ on the same side',
  N6: '4 of 5 consecutive points beyond 1σ on the same side',
  N7: '15 points in a row within 1σ of the centre line',
  N8: '8 points in a row with none within 1σ of the centre line',
};

/** Longest window any rule looks at (N7), i.e. how many recent points an incremental monitor must keep. */
export const RUN_RULE_MAX_WINDOW = 15;

type Check = (z: readonly number[]) => SignalDirection | false;
// Every check receives the window of standardized values z = (x − centre)/σ, oldest first, newest last,
// exactly as long as the rule needs.

function beyondOnSide(threshold: number, needed: number): Check {
  return (z) => {
    const newest = z[z.length - 1];
    if (newest > threshold && z.filter((v) => v > threshold).length >= needed) return 'up';
    if (newest < -threshold && z.filter((v) => v < -threshold).length >= needed) return 'down';
    return false;
  };
}

const oneBeyond3: Check = (z) => (z[0] > 3 ? 'up' : z[0] < -3 ? 'down' : false);

const allOneSide: Check = (z) => (z.every((v) => v > 0) ? 'up' : z.every((v) => v < 0) ? 'down' : false);

const trend: Check = (z) => {
  let up = true;
  let down = true;
  for (let i = 1; i < z.length; i++) {
    if (!(z[i] > z[i - 1])) up = false;
    if (!(z[i] < z[i - 1])) down = false;
  }
  return up ? 'up' : down ? 'down' : false;
};

const alternating: Check = (z) => {
  let previousSign = 0;
  for (let i = 1; i < z.length; i++) {
    const sign = Math.sign(z[i] - z[i - 1]);
    if (sign === 0 || sign === previousSign) return false;
    previousSign = sign;
  }
  return 'none';
};

const allWithin1: Check = (z) => (z.every((v) => Math.abs(v) < 1) ? 'none' : false);

const noneWithin1: Check = (z) => {
  if (!z.every((v) => Math.abs(v) > 1)) return false;
  return z.every((v) => v > 0) ? 'up' : z.every((v) => v < 0) ? 'down' : 'none';
};

interface RuleDef {
  id: RunRuleId;
  ruleSet: RunRuleHit['ruleSet'];
  window: number;
  /** Fewest points the rule can hold on: the full window, except for the "m of n" rules at the start of a series. */
  minPoints: number;
  check: Check;
}

const RULES: Readonly<Record<RunRuleId, RuleDef>> = {
  WE1: { id: 'WE1', ruleSet: 'western-electric', window: 1, minPoints: 1, check: oneBeyond3 },
  WE2: { id: 'WE2', ruleSet: 'western-electric', window: 3, minPoints: 2, check: beyondOnSide(2, 2) },
  WE3: { id: 'WE3', ruleSet: 'western-electric', window: 5, minPoints: 4, check: beyondOnSide(1, 4) },
  WE4: { id: 'WE4', ruleSet: 'western-electric', window: 8, minPoints: 8, check: allOneSide },
  N1: { id: 'N1', ruleSet: 'nelson', window: 1, minPoints: 1, check: oneBeyond3 },
  N2: { id: 'N2', ruleSet: 'nelson', window: 9, minPoints: 9, check: allOneSide },
  N3: { id: 'N3', ruleSet: 'nelson', window: 6, minPoints: 6, check: trend },
  N4: { id: 'N4', ruleSet: 'nelson', window: 14, minPoints: 14, check: alternating },
  N5: { id: 'N5', ruleSet: 'nelson', window: 3, minPoints: 2, check: beyondOnSide(2, 2) },
  N6: { id: 'N6', ruleSet: 'nelson', window: 5, minPoints: 4, check: beyondOnSide(1, 4) },
  N7: { id: 'N7', ruleSet: 'nelson', window: 15, minPoints: 15, check: allWithin1 },
  N8: { id: 'N8', ruleSet: 'nelson', window: 8, minPoints: 8, check: noneWithin1 },
};

/** Rule ids of a selection in a fixed order (WE first, then Nelson), without duplicates. */
export function selectedRuleIds(selection: RunRuleSelection): RunRuleId[] {
  const ids: RunRuleId[] = [];
  for (const r of [1, 2, 3, 4] as const) if (selection.westernElectric.includes(r)) ids.push(`WE${r}`);
  for (const r of [1, 2, 3, 4, 5, 6, 7, 8] as const) if (selection.nelson.includes(r)) ids.push(`N${r}`);
  return ids;
}

/**
 * Rules that hold at the NEWEST point of `recentZ` (standardized values, oldest first). This is the
 * incremental form; pass at least RUN_RULE_MAX_WINDOW recent values (fewer near the start of a series).
 */
export function runRuleHitsAtNewest(recentZ: readonly number[], rules: readonly RunRuleId[]): RunRuleHit[] {
  const hits: RunRuleHit[] = [];
  for (const id of rules) {
    const def = RULES[id];
    if (recentZ.length < def.minPoints) continue;
    const windowLength = Math.min(def.window, recentZ.length);
    const direction = def.check(recentZ.slice(recentZ.length - windowLength));
    if (direction !== false) {
      hits.push({ rule: id, ruleSet: def.ruleSet, description: RUN_RULE_DESCRIPTIONS[id], direction, windowLength });
    }
  }
  return hits;
}

export interface RunRuleSignal {
  rule: RunRuleId;
  ruleSet: RunRuleHit['ruleSet'];
  description: string;
  direction: SignalDirection;
  /** Index of the point at which the rule holds (the newest point of the pattern). */
  index: number;
  /** Indices of all points of the pattern, oldest first. */
  pointIndices: number[];
}

/** Batch form: every point of a series at which each selected rule holds. */
export function evaluateRunRules(values: readonly number[], centre: number, sigma: number, selection: RunRuleSelection): RunRuleSignal[] {
  if (!(sigma > 0)) throw new RangeError('evaluateRunRules: sigma must be positive');
  const ids = selectedRuleIds(selection);
  const z = values.map((v) => (v - centre) / sigma);
  const out: RunRuleSignal[] = [];
  for (let i = 0; i < z.length; i++) {
    const recent = z.slice(Math.max(0, i + 1 - RUN_RULE_MAX_WINDOW), i + 1);
    for (const hit of runRuleHitsAtNewest(recent, ids)) {
      const first = i - hit.windowLength + 1;
      out.push({
        rule: hit.rule,
        ruleSet: hit.ruleSet,
        description: hit.description,
        direction: hit.direction,
        index: i,
        pointIndices: Array.from({ length: hit.windowLength }, (_, j) => first + j),
      });
    }
  }
  return out;
}
