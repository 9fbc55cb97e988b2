// Which lab results the running calibration leaves out: those of a load with an assignable cause.
//
// The SPC practice when a control chart's reference is estimated (or its limits revised): points with an
// assignable cause – a known, explained departure of the process – are left out, so the reference describes the
// process in its usual state only (Montgomery, Introduction to Statistical Quality Control, on revising control
// limits; common practice). Here the reference is the calibration (bias and spread of measured − raw predicted
// p50), and the assignable cause is a process-window deviation of the load: the process it actually saw broke its
// window (minimum hold, bath band, austenitize, transfer …) or its record of it is in doubt (a recording gap, a
// flat-lined or implausible signal), so its residual measures that departure, not the model's error under the
// process the product runs on. A load pulled early would otherwise inflate the spread and bands of every normal
// load after it.
//
// What counts: a rule of PROCESS_WINDOW_RULES, severity MAJOR or CRITICAL, its condition still present (a
// corrected record clears it), whatever its status (an acknowledged, dispositioned or closed deviation still
// happened to that load). Predicted-verdict deviations are no cause: they are the model's own output. Neither is
// a model-process mismatch (the comparison's own output) nor drift (a product/line signal, not one load's).
// The result is still judged against its own band (and can raise a mismatch); it only does not teach.

import { PROCESS_WINDOW_RULES } from '../process-window/types.js';

/** The deviation severities that make a process-window deviation an assignable cause. */
export const ASSIGNABLE_CAUSE_SEVERITIES = ['MAJOR', 'CRITICAL'] as const;

/** The part of a stored deviation the decision reads. */
export interface BatchDeviationLike {
  id: string;
  rule: string;
  severity: string;
  conditionPresent: boolean;
}

/** Status is not kept: it moves with the deviation's workflow and does not change whether the cause happened. */
export interface AssignableCause {
  deviationId: string;
  rule: string;
  severity: string;
}

/** Why a result was left out of the calibration (stored on its comparison). */
export interface CalibrationExclusion {
  reason: 'assignable-cause';
  causes: AssignableCause[];
}

export function isAssignableCause(d: BatchDeviationLike): boolean {
  return d.conditionPresent && (PROCESS_WINDOW_RULES as readonly string[]).includes(d.rule) && (ASSIGNABLE_CAUSE_SEVERITIES as readonly string[]).includes(d.severity);
}

/** The exclusion of a batch's lab results from the calibration, or null when the batch has no assignable cause. */
export function calibrationExclusion(deviations: readonly BatchDeviationLike[]): CalibrationExclusion | null {
  const causes = deviations
    .filter(isAssignableCause)
    .map((d) => ({ deviationId: d.id, rule: d.rule, severity: d.severity }))
    .sort((a, b) => (a.rule < b.rule ? -1 : a.rule > b.rule ? 1 : a.deviationId < b.deviationId ? -1 : 1));
  return causes.length ? { reason: 'assignable-cause', causes } : null;
}

/** Counts of excluded results, in all and by rule (a result with two causes counts once in all, once per rule). */
export interface ExclusionSummary {
  results: number;
  byRule: Record<string, number>;
}

export function summarizeExclusions(exclusions: readonly (CalibrationExclusion | null | undefined)[]): ExclusionSummary {
  const byRule: Record<string, number> = {};
  let results = 0;
  for (const e of exclusions) {
    if (!e) continue;
    results++;
    for (const rule of new Set(e.causes.map((c) => c.rule))) byRule[rule] = (byRule[rule] ?? 0) + 1;
  }
  return { results, byRule: Object.fromEntries(Object.entries(byRule).sort(([a], [b]) => (a < b ? -1 : 1))) };
}
