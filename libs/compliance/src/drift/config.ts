// Drift-chart parameters: defaults, per-spec overrides, validation.
//
// Defaults and why (ARL values are zero-state, normal individuals, shift δ in σ of one lot's value):
//   * EWMA λ = 0.2, L = 2.962, asymptotic limits: in-control ARL0 ≈ 500, 1σ shift ARL ≈ 10.5, 2σ ≈ 3.7
//     (Lucas & Saccucci 1990, Technometrics 32; as tabulated in Montgomery, Introduction to SQC, "ARLs
//     for several EWMA control schemes"; our Markov chain gives 499.6 / 10.54 / 3.74). λ = 0.2 sits in
//     the NIST/SEMATECH e-Handbook §6.3.2.4 range 0.2–0.3 and is near-optimal for a 1σ shift. The
//     asymptotic limits are the ones the table assumes; 'exact' limits are available (ARL0 494 with the
//     same L, by our chain checked against simulation).
//   * CUSUM k = 0.5, h = 4.77, no head start: two-sided ARL0 ≈ 370, matching the 3σ Shewhart chart,
//     1σ ≈ 9.9, 2σ ≈ 3.9 (Hawkins 1993 h-for-k table reproduced in Montgomery §9.1; our Brook & Evans
//     chain gives 368.5 / 9.92 / 3.86). k = 0.5 is tuned to a 1σ shift (practice.md §4.4).
//   * Run rules: WE1 only (a lot beyond 3σ on the individuals chart, ARL0 370.4). WE2–4 and the Nelson
//     rules are available per characteristic; all four WE rules together bring the individuals chart's
//     ARL0 down to about 92 (Champ & Woodall 1987, from memory; practice.md §4.5 [S59] "1 in 92"), too
//     many false drift deviations to be a default.
//   * Moving-range chart signals: off (the MR chart watches spread, and alone has ARL0 ≈ 120 by our
//     simulation; its data are always returned for the dashboard).
// The combined default scheme (EWMA + CUSUM + WE1) has an in-control ARL of about 190 lots per metric,
// and 9.1 / 3.3 lots for a 1σ / 2σ shift (seeded Monte-Carlo, arl.test.ts and bench/drift-arl.ts).

import type { EwmaLimitMode } from './ewma.js';
import type { NelsonRule, WesternElectricRule } from './run-rules.js';

export const DRIFT_METRICS = [
  'bainite-ceiling-margin',
  'blocky-austenite-margin',
  'predicted-hardness-p50',
  'measured-hardness',
  'bath-mean-temp-hold',
] as const;
export type DriftMetric = (typeof DRIFT_METRICS)[number];

/** Which direction of drift is bad for a metric: signals that way are flagged adverse. */
export type AdverseDirection = 'up' | 'down' | 'both';

/**
 * Default adverse direction per metric. A margin (to the bainite ceiling, or below the blocky-austenite
 * maximum) is bad when it shrinks; hardness and bath temperature are bad either way (two-sided bands).
 */
export const DEFAULT_ADVERSE_DIRECTION: Readonly<Record<DriftMetric, AdverseDirection>> = {
  'bainite-ceiling-margin': 'down',
  'blocky-austenite-margin': 'down',
  'predicted-hardness-p50': 'both',
  'measured-hardness': 'both',
  'bath-mean-temp-hold': 'both',
};

export interface DriftChartConfig {
  ewma: { enabled: boolean; lambda: number; L: number; limits: EwmaLimitMode };
  cusum: { enabled: boolean; k: number; h: number; headStart: number };
  /** Signals from the moving-range chart (a jump in spread between consecutive lots). */
  movingRange: { enabled: boolean };
  runRules: { westernElectric: WesternElectricRule[]; nelson: NelsonRule[] };
}

export interface DriftChartConfigOverrides {
  ewma?: Partial<DriftChartConfig['ewma']>;
  cusum?: Partial<DriftChartConfig['cusum']>;
  movingRange?: Partial<DriftChartConfig['movingRange']>;
  runRules?: Partial<DriftChartConfig['runRules']>;
}

export const DEFAULT_DRIFT_CHART_CONFIG: Readonly<DriftChartConfig> = Object.freeze<DriftChartConfig>({
  ewma: Object.freeze({ enabled: true, lambda: 0.2, L: 2.962, limits: 'asymptotic' as const }),
  cusum: Object.freeze({ enabled: true, k: 0.5, h: 4.77, headStart: 0 }),
  movingRange: Object.freeze({ enabled: false }),
  runRules: Object.freeze({ westernElectric: Object.freeze([1]) as unknown as WesternElectricRule[], nelson: Object.freeze([]) as unknown as NelsonRule[] }),
});

export interface DriftConfigIssue {
  path: string;
  message: string;
}

export class DriftConfigError extends Error {
  constructor(readonly issues: DriftConfigIssue[]) {
    super(`invalid drift chart configuration: ${issues.map((i) => `${i.path}: ${i.message}`).join('; ')}`);
    this.name = 'DriftConfigError';
  }
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

const KNOWN_KEYS: Record<keyof DriftChartConfig, readonly string[]> = {
  ewma: ['enabled', 'lambda', 'L', 'limits'],
  cusum: ['enabled', 'k', 'h', 'headStart'],
  movingRange: ['enabled'],
  runRules: ['westernElectric', 'nelson'],
};

/**
 * Validate overrides as they arrive from a product spec (untyped JSON). Returns every problem with its
 * field path, e.g. { path: 'ewma.lambda', message: 'must be in (0, 1]' }; empty when valid.
 */
export function validateDriftChartOverrides(raw: unknown, pathPrefix = ''): DriftConfigIssue[] {
  const issues: DriftConfigIssue[] = [];
  const at = (p: string) => (pathPrefix ? `${pathPrefix}.${p}` : p);
  if (raw === undefined || raw === null) return issues;
  if (!isRecord(raw)) return [{ path: pathPrefix || '(root)', message: 'must be an object' }];
  for (const key of Object.keys(raw)) {
    if (!(key in KNOWN_KEYS)) issues.push({ path: at(key), message: 'unknown chart section' });
  }
  for (const section of Object.keys(KNOWN_KEYS) as (keyof DriftChartConfig)[]) {
    const v = raw[section];
    if (v === undefined) continue;
    if (!isRecord(v)) {
      issues.push({ path: at(section), message: 'must be an object' });
      continue;
    }
    for (const key of Object.keys(v)) {
      if (!KNOWN_KEYS[section].includes(key)) issues.push({ path: at(`${section}.${key}`), message: 'unknown field' });
    }
    if ('enabled' in v && typeof v.enabled !== 'boolean') issues.push({ path: at(`${section}.enabled`), message: 'must be a boolean' });
  }
  const num = (section: string, key: string, ok: (x: number) => boolean, rule: string) => {
    const s = raw[section];
    if (!isRecord(s) || !(key in s)) return;
    const x = s[key];
    if (typeof x !== 'number' || !Number.isFinite(x) || !ok(x)) issues.push({ path: at(`${section}.${key}`), message: rule });
  };
  num('ewma', 'lambda', (x) => x > 0 && x <= 1, 'must be a number in (0, 1]');
  num('ewma', 'L', (x) => x > 0 && x <= 10, 'must be a number in (0, 10]');
  num('cusum', 'k', (x) => x >= 0 && x <= 5, 'must be a number in [0, 5] (σ units)');
  num('cusum', 'h', (x) => x > 0 && x <= 50, 'must be a number in (0, 50] (σ units)');
  num('cusum', 'headStart', (x) => x >= 0, 'must be a number ≥ 0 (σ units)');
  const ewma = raw.ewma;
  if (isRecord(ewma) && 'limits' in ewma && ewma.limits !== 'exact' && ewma.limits !== 'asymptotic') {
    issues.push({ path: at('ewma.limits'), message: "must be 'exact' or 'asymptotic'" });
  }
  const rr = raw.runRules;
  if (isRecord(rr)) {
    const list = (key: 'westernElectric' | 'nelson', max: number) => {
      if (!(key in rr)) return;
      const v = rr[key];
      if (!Array.isArray(v)) {
        issues.push({ path: at(`runRules.${key}`), message: `must be an array of rule numbers 1–${max}` });
        return;
      }
      v.forEach((r, i) => {
        if (!Number.isInteger(r) || (r as number) < 1 || (r as number) > max) issues.push({ path: at(`runRules.${key}[${i}]`), message: `must be an integer 1–${max}` });
        else if (v.indexOf(r) !== i) issues.push({ path: at(`runRules.${key}[${i}]`), message: `duplicate rule ${r}` });
      });
    };
    list('westernElectric', 4);
    list('nelson', 8);
  }
  return issues;
}

/** Defaults merged with a spec's overrides; throws DriftConfigError (with field paths) when invalid. */
export function resolveDriftChartConfig(overrides?: DriftChartConfigOverrides | null, pathPrefix = ''): DriftChartConfig {
  const issues = validateDriftChartOverrides(overrides, pathPrefix);
  const d = DEFAULT_DRIFT_CHART_CONFIG;
  const o = overrides ?? {};
  const config: DriftChartConfig = {
    ewma: { ...d.ewma, ...o.ewma },
    cusum: { ...d.cusum, ...o.cusum },
    movingRange: { ...d.movingRange, ...o.movingRange },
    runRules: {
      westernElectric: [...(o.runRules?.westernElectric ?? d.runRules.westernElectric)],
      nelson: [...(o.runRules?.nelson ?? d.runRules.nelson)],
    },
  };
  if (issues.length === 0 && !(config.cusum.headStart < config.cusum.h)) {
    issues.push({ path: pathPrefix ? `${pathPrefix}.cusum.headStart` : 'cusum.headStart', message: `must be below h (${config.cusum.h})` });
  }
  if (issues.length > 0) throw new DriftConfigError(issues);
  return config;
}
