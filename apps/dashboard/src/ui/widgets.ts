import type { DeviationSeverity, DeviationStatus } from '../api/types.js';
import { fmtDeviationStatus } from '../lib/format.js';
import { VERDICT_TEXT, type VerdictLevel } from '../lib/prediction.js';
import { h, type Child } from './dom.js';

/** Verdict as a badge: colour plus a word and a shape, so it reads without colour too. */
export function verdictBadge(level: VerdictLevel | null, emptyText = 'No prediction yet'): HTMLElement {
  if (!level) return h('span', { class: 'badge none', dataset: { verdict: 'none' } }, emptyText);
  const icon = level === 'conforming' ? '●' : level === 'at-risk' ? '▲' : '■';
  return h('span', { class: `badge ${level}`, dataset: { verdict: level } }, h('span', { attrs: { 'aria-hidden': 'true' } }, `${icon} `), VERDICT_TEXT[level]);
}

/** Deviations still waiting for people: open or acknowledged (not yet dispositioned, closed or cleared). */
export function isOpenDeviation(d: { status: DeviationStatus }): boolean {
  return d.status === 'OPEN' || d.status === 'ACKNOWLEDGED';
}

export function worstSeverity(list: ReadonlyArray<{ severity: DeviationSeverity }>): 'critical' | 'major' | 'minor' {
  if (list.some((d) => d.severity === 'CRITICAL')) return 'critical';
  if (list.some((d) => d.severity === 'MAJOR')) return 'major';
  return 'minor';
}

export function severityChip(severity: DeviationSeverity): HTMLElement {
  return h('span', { class: `sev ${severity.toLowerCase()}` }, severity.toLowerCase());
}

export function statusChip(status: DeviationStatus): HTMLElement {
  return h('span', { class: `dstatus ${status.toLowerCase()}` }, fmtDeviationStatus(status));
}

/** A definition list of label/value pairs. */
export function facts(rows: Array<[string, Child]>): HTMLElement {
  return h('dl', { class: 'facts' }, ...rows.flatMap(([k, v]) => [h('dt', null, k), h('dd', null, v)]));
}

export function card(title: Child, ...children: Child[]): HTMLElement {
  return h('section', { class: 'card' }, h('h2', null, title), ...children);
}

export function loading(text = 'Loading…'): HTMLElement {
  return h('p', { class: 'loading', attrs: { role: 'status' } }, text);
}

/**
 * A horizontal gauge: `value` against `max` of a 0..scaleMax scale, with optional limit ticks.
 * Used for bainite fraction vs its ceiling.
 */
export function gauge(options: { value: number | null; ceiling: number | null; scaleMax: number; limit?: number | null; label: string }): HTMLElement {
  const pct = (v: number): string => `${Math.max(0, Math.min(100, (v / options.scaleMax) * 100)).toFixed(2)}%`;
  const bar = h('div', { class: 'gauge', attrs: { role: 'img', 'aria-label': options.label } });
  if (options.ceiling !== null) bar.append(h('div', { class: 'gauge-ceiling' }));
  const fill = h('div', { class: 'gauge-fill' });
  const ceiling = bar.querySelector<HTMLElement>('.gauge-ceiling');
  // Widths set through the CSSOM (allowed by the page's CSP), not inline style attributes.
  if (options.value !== null) fill.style.width = pct(options.value);
  else fill.style.width = '0';
  bar.append(fill);
  if (ceiling && options.ceiling !== null) ceiling.style.width = pct(options.ceiling);
  if (options.limit !== null && options.limit !== undefined) {
    const tick = h('div', { class: 'gauge-limit', attrs: { title: 'spec minimum' } });
    tick.style.left = pct(options.limit);
    bar.append(tick);
  }
  return bar;
}
