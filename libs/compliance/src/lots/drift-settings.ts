// Reading a spec version's stored JSON for the drift charts (the worker and the API read it the same way).

import { AcceptanceCriteria, DriftChartsSettings, ProcessWindow } from '@ausline/contracts';
import { resolveDriftSettings, type ResolvedDriftSettings } from './drift-chart.js';
import type { DriftSpecContext } from './metric-values.js';

/** Acceptance criteria and process window of a spec version; a part that does not parse counts as absent. */
export function driftSpecContext(version: { acceptanceCriteria: unknown; processWindow: unknown } | null): DriftSpecContext {
  if (!version) return { acceptance: null, processWindow: null };
  const a = AcceptanceCriteria.safeParse(version.acceptanceCriteria);
  const w = ProcessWindow.safeParse(version.processWindow);
  return { acceptance: a.success ? a.data : null, processWindow: w.success ? w.data : null };
}

/** Drift settings of a spec version (null column = defaults); a stored value that no longer parses falls back to defaults. */
export function driftSettingsOf(version: { driftCharts: unknown } | null): { settings: ResolvedDriftSettings; problem: string | null } {
  if (!version || version.driftCharts === null || version.driftCharts === undefined) return { settings: resolveDriftSettings(null), problem: null };
  const parsed = DriftChartsSettings.safeParse(version.driftCharts);
  if (!parsed.success) {
    return { settings: resolveDriftSettings(null), problem: `stored driftCharts do not parse (${parsed.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ')}); defaults used` };
  }
  return { settings: resolveDriftSettings(parsed.data), problem: null };
}
