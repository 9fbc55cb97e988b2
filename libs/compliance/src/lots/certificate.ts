// What a certificate states about the results and the release of a batch (practice.md §3.3): the lab results
// against the spec's acceptance criteria, and the batch's standing from its deviations and their
// dispositions. Pure; the API assembles the rest of the record (heat, process, prediction, people).

import type { AcceptanceCriteria } from '@ausline/contracts';
import { convertHardness, hardnessReadings, isHardnessScale, type LabResultLike } from '../calibration/lab.js';

export interface AcceptanceCheck {
  criterion: 'hardness' | 'tensile' | 'retained-austenite' | 'impact';
  /** The requirement in words with its numbers, e.g. 'HRC 50–55'. */
  requirement: string;
  /** What was measured (summary in the spec's unit). */
  measured: Record<string, number | string | null>;
  /** 'pass' | 'fail' on the readings; 'not-tested' when the spec asks and no result is there; 'not-comparable' when a scale cannot be converted. */
  verdict: 'pass' | 'fail' | 'not-tested' | 'not-comparable';
  labResultIds: string[];
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}
const num = (v: unknown): number | null => (typeof v === 'number' && Number.isFinite(v) ? v : null);
const round = (x: number, d = 2) => Math.round(x * 10 ** d) / 10 ** d;

/**
 * Every criterion the spec names that a lab result can show, judged on the results (every reading within the
 * band; hardness readings in another scale converted one by one with the ASTM E140 rows).
 */
export function acceptanceChecks(criteria: AcceptanceCriteria | null, results: readonly (LabResultLike & { kind: string })[]): AcceptanceCheck[] {
  const checks: AcceptanceCheck[] = [];
  if (!criteria) return checks;
  if (criteria.hardness) {
    const { scale, min, max } = criteria.hardness;
    const hardness = results.filter((r) => r.kind === 'HARDNESS');
    const readings: number[] = [];
    let convertible = true;
    for (const r of hardness) {
      if (!isHardnessScale(r.scale)) {
        convertible = false;
        continue;
      }
      for (const x of hardnessReadings(r.values)) {
        const c = convertHardness(x, r.scale, scale);
        if (c === null) convertible = false;
        else readings.push(c);
      }
    }
    const verdict = hardness.length === 0 ? 'not-tested' : !convertible ? 'not-comparable' : readings.every((x) => x >= min && x <= max) ? 'pass' : 'fail';
    checks.push({
      criterion: 'hardness',
      requirement: `${scale} ${min}–${max}`,
      measured: readings.length
        ? { scale, readings: readings.length, min: round(Math.min(...readings), 1), max: round(Math.max(...readings), 1), mean: round(readings.reduce((a, b) => a + b, 0) / readings.length, 1) }
        : { scale, readings: 0, min: null, max: null, mean: null },
      verdict,
      labResultIds: hardness.map((r) => r.id),
    });
  }
  const t = criteria.tensile;
  if (t && (t.minTensileMPa !== undefined || t.maxTensileMPa !== undefined || t.minYieldMPa !== undefined || t.minElongationPct !== undefined)) {
    const tensile = results.filter((r) => r.kind === 'TENSILE' && isRecord(r.values));
    const rm = tensile.map((r) => num((r.values as Record<string, unknown>).rmMPa)).filter((x): x is number => x !== null);
    const rp = tensile.map((r) => num((r.values as Record<string, unknown>).rp02MPa)).filter((x): x is number => x !== null);
    const el = tensile.map((r) => num((r.values as Record<string, unknown>).elongationPct)).filter((x): x is number => x !== null);
    const ok =
      (t.minTensileMPa === undefined || rm.every((x) => x >= t.minTensileMPa!)) &&
      (t.maxTensileMPa === undefined || rm.every((x) => x <= t.maxTensileMPa!)) &&
      (t.minYieldMPa === undefined || rp.every((x) => x >= t.minYieldMPa!)) &&
      (t.minElongationPct === undefined || el.every((x) => x >= t.minElongationPct!));
    const req = [
      t.minTensileMPa !== undefined ? `Rm ≥ ${t.minTensileMPa} MPa` : null,
      t.maxTensileMPa !== undefined ? `Rm ≤ ${t.maxTensileMPa} MPa` : null,
      t.minYieldMPa !== undefined ? `Rp0.2 ≥ ${t.minYieldMPa} MPa` : null,
      t.minElongationPct !== undefined ? `A ≥ ${t.minElongationPct} %` : null,
    ].filter(Boolean);
    checks.push({
      criterion: 'tensile',
      requirement: req.join(', '),
      measured: { tests: tensile.length, minRmMPa: rm.length ? Math.min(...rm) : null, minRp02MPa: rp.length ? Math.min(...rp) : null, minElongationPct: el.length ? Math.min(...el) : null },
      verdict: tensile.length === 0 ? 'not-tested' : ok ? 'pass' : 'fail',
      labResultIds: tensile.map((r) => r.id),
    });
  }
  if (criteria.maxRetainedAusteniteFraction !== undefined) {
    const ra = results.filter((r) => r.kind === 'RETAINED_AUSTENITE' && isRecord(r.values));
    const pcts = ra.map((r) => num((r.values as Record<string, unknown>).volumePct)).filter((x): x is number => x !== null);
    const maxPct = criteria.maxRetainedAusteniteFraction * 100;
    checks.push({
      criterion: 'retained-austenite',
      requirement: `≤ ${round(maxPct, 2)} vol%`,
      measured: { tests: ra.length, maxVolumePct: pcts.length ? Math.max(...pcts) : null },
      verdict: ra.length === 0 ? 'not-tested' : pcts.every((x) => x <= maxPct) ? 'pass' : 'fail',
      labResultIds: ra.map((r) => r.id),
    });
  }
  if (criteria.minImpactJ !== undefined) {
    const impact = results.filter((r) => r.kind === 'IMPACT' && isRecord(r.values));
    const energies = impact.flatMap((r) => {
      const e = (r.values as Record<string, unknown>).energiesJ;
      return Array.isArray(e) ? e.filter((x): x is number => typeof x === 'number') : [];
    });
    checks.push({
      criterion: 'impact',
      requirement: `≥ ${criteria.minImpactJ} J per specimen`,
      measured: { specimens: energies.length, minJ: energies.length ? Math.min(...energies) : null },
      verdict: impact.length === 0 ? 'not-tested' : energies.every((x) => x >= criteria.minImpactJ!) ? 'pass' : 'fail',
      labResultIds: impact.map((r) => r.id),
    });
  }
  return checks;
}

export interface DeviationStanding {
  rule: string;
  severity: 'MINOR' | 'MAJOR' | 'CRITICAL';
  status: 'OPEN' | 'ACKNOWLEDGED' | 'DISPOSITIONED' | 'CLOSED' | 'CLEARED';
  disposition: 'USE_AS_IS' | 'RETREAT' | 'SCRAP' | 'CONCESSION' | null;
  dispositionRef: string | null;
}

export type ReleaseStatus =
  | 'conforming'
  | 'conforming-under-concession'
  | 'accepted-use-as-is'
  | 'pending-disposition'
  | 'failed-acceptance'
  | 'retreat'
  | 'scrap'
  | 'in-process';

export interface BatchRelease {
  status: ReleaseStatus;
  reasons: string[];
  concessions: string[];
}

/**
 * The batch's standing as the record shows it (not an authorization to ship: the authorized signatory signs
 * the printed certificate). Worst first: scrap, retreat, failed acceptance, a deviation still without
 * disposition, in process; then use-as-is, concession, conforming. A CLEARED deviation (the condition went
 * away before anyone acknowledged it) does not count; drift deviations (a process change, practice.md §4.1)
 * are listed on the certificate but do not hold a batch.
 */
export function batchRelease(input: { complete: boolean; deviations: readonly DeviationStanding[]; checks: readonly AcceptanceCheck[] }): BatchRelease {
  const relevant = input.deviations.filter((d) => d.status !== 'CLEARED' && d.rule !== 'drift');
  const reasons: string[] = [];
  const concessions = [...new Set(relevant.filter((d) => d.disposition === 'CONCESSION' && d.dispositionRef).map((d) => d.dispositionRef!))].sort();
  const pending = relevant.filter((d) => d.status === 'OPEN' || d.status === 'ACKNOWLEDGED');
  const failed = input.checks.filter((c) => c.verdict === 'fail');
  let status: ReleaseStatus = 'conforming';
  if (relevant.some((d) => d.disposition === 'SCRAP')) status = 'scrap';
  else if (relevant.some((d) => d.disposition === 'RETREAT')) status = 'retreat';
  else if (failed.length > 0) status = 'failed-acceptance';
  else if (pending.length > 0) status = 'pending-disposition';
  else if (!input.complete) status = 'in-process';
  else if (relevant.some((d) => d.disposition === 'USE_AS_IS')) status = 'accepted-use-as-is';
  else if (concessions.length > 0) status = 'conforming-under-concession';
  for (const f of failed) reasons.push(`${f.criterion} ${f.requirement}: fail`);
  for (const p of pending) reasons.push(`${p.rule} (${p.severity}) awaiting disposition`);
  for (const d of relevant.filter((x) => x.disposition)) reasons.push(`${d.rule}: ${d.disposition}${d.dispositionRef ? ` (${d.dispositionRef})` : ''}`);
  if (!input.complete) reasons.push('the load has not left the bath');
  return { status, reasons, concessions };
}
