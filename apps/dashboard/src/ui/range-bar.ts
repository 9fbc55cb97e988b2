import { fmtNum } from '../lib/format.js';
import { h } from './dom.js';

/**
 * One property on one scale: the spec's limits (shaded acceptable zone, edges marked), the predicted
 * p05–p95 band with its median, and measured values as dots. Drawn with positioned elements (widths
 * and offsets through the CSSOM, which the page's CSP allows) so it scales with the text and prints.
 */

export interface RangeBarInput {
  label: string;
  unit: string;
  digits?: number;
  spec?: { min?: number | null; max?: number | null } | null;
  band?: { p05: number; p50: number; p95: number } | null;
  /** A predicted value without a spread (the model gives no p05–p95 for it): drawn as one marker, not a band. */
  predicted?: number | null;
  measured?: number[];
  /** Where a measurement is summarised (e.g. mean of readings) a marker label. */
  measuredLabel?: string;
}

export function rangeBar(input: RangeBarInput): HTMLElement {
  const digits = input.digits ?? 0;
  const values = [
    input.spec?.min,
    input.spec?.max,
    input.band?.p05,
    input.band?.p95,
    input.predicted,
    ...(input.measured ?? []),
  ].filter((v): v is number => typeof v === 'number' && Number.isFinite(v));
  if (values.length === 0) return h('div', { class: 'range-row' }, h('span', { class: 'range-label' }, input.label), h('span', { class: 'muted' }, 'nothing to compare'));
  let lo = Math.min(...values);
  let hi = Math.max(...values);
  const pad = Math.max((hi - lo) * 0.15, Math.abs(hi) * 0.02, 1e-6);
  lo -= pad;
  hi += pad;
  const pos = (v: number): string => `${(((v - lo) / (hi - lo)) * 100).toFixed(2)}%`;
  const track = h('div', { class: 'range-track' });

  const specMin = input.spec?.min ?? null;
  const specMax = input.spec?.max ?? null;
  if (specMin !== null || specMax !== null) {
    const zone = h('div', { class: 'range-spec', attrs: { title: 'acceptable per spec' } });
    zone.style.left = pos(specMin ?? lo);
    zone.style.right = `${(100 - parseFloat(pos(specMax ?? hi))).toFixed(2)}%`;
    track.append(zone);
    for (const [v, name] of [[specMin, 'min'], [specMax, 'max']] as const) {
      if (v === null) continue;
      // One label for a two-sided spec (centred over the zone), so close limits never overprint.
      const label = specMin !== null && specMax !== null ? null : h('span', null, `${name} ${fmtNum(v, digits)}`);
      const edge = h('div', { class: 'range-limit', attrs: { title: `spec ${name} ${fmtNum(v, digits)} ${input.unit}` } }, label);
      edge.style.left = pos(v);
      track.append(edge);
    }
    if (specMin !== null && specMax !== null) {
      const label = h('div', { class: 'range-spec-label' }, `spec ${fmtNum(specMin, digits)}–${fmtNum(specMax, digits)}`);
      label.style.left = pos((specMin + specMax) / 2);
      track.append(label);
    }
  }
  if (input.band && input.band.p95 - input.band.p05 > 0) {
    const outside = (specMin !== null && input.band.p05 < specMin) || (specMax !== null && input.band.p95 > specMax);
    const band = h('div', { class: `range-band ${outside ? 'outside' : ''}`, attrs: { title: `predicted p05–p95 ${fmtNum(input.band.p05, digits)}–${fmtNum(input.band.p95, digits)} ${input.unit}` } });
    band.style.left = pos(input.band.p05);
    band.style.width = `${((Math.max(input.band.p95 - input.band.p05, 0) / (hi - lo)) * 100).toFixed(2)}%`;
    const median = h('div', { class: 'range-median' });
    median.style.left = pos(input.band.p50);
    track.append(band, median);
  }
  // A band whose ends meet has no spread to show: the single value is what the model gives.
  const single = input.predicted ?? (input.band && input.band.p95 - input.band.p05 <= 0 ? input.band.p50 : null);
  if (single !== null && single !== undefined && Number.isFinite(single)) {
    const point = h('div', { class: 'range-point', attrs: { title: `predicted ${fmtNum(single, digits)} ${input.unit} (single value, no spread computed)` } },
      h('span', null, `predicted ${fmtNum(single, digits)}`));
    point.style.left = pos(single);
    track.append(point);
  }
  for (const m of input.measured ?? []) {
    const dot = h('div', { class: 'range-measured', attrs: { title: `${input.measuredLabel ?? 'measured'} ${fmtNum(m, digits)} ${input.unit}` } });
    dot.style.left = pos(m);
    track.append(dot);
  }
  const axis = h('div', { class: 'range-axis' }, h('span', null, `${fmtNum(lo, digits)} ${input.unit}`), h('span', null, `${fmtNum(hi, digits)} ${input.unit}`));
  return h('div', { class: 'range-row' }, h('span', { class: 'range-label' }, input.label), h('div', { class: 'range-body' }, track, axis));
}
