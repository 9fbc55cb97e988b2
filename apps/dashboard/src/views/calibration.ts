import type { QuantityCalibration, SpecCalibration } from '../api/types.js';
import type { AppContext } from '../app/context.js';
import { navigate } from '../app/router.js';
import type { ViewFactory } from '../app/view.js';
import { exclusionCauses, fmtNarrowed, fmtQuantityBand, fmtQuantityDelta, fmtQuantityValue, QUANTITY_LABEL, quantityCounts } from '../lib/calibration.js';
import { fmtRule } from '../lib/format.js';
import { formatDateTime } from '../lib/time.js';
import { field, h, link, replace, select, type Child } from '../ui/dom.js';
import { infoBox, showError } from '../ui/notice.js';
import { loading, severityChip } from '../ui/widgets.js';

/**
 * Model calibration of one product (#/calibration/<specId>): per lab-measured quantity, how many lab results
 * taught the model and how many were left out (and by which deviation of which load), the bias and spread
 * learned, whether the correction is in force, and how much it narrowed or moved the latest loads' bands.
 * Read-only, for anyone signed in (the API's rule); it changes no lab result and no disposition.
 */
export const calibrationView: ViewFactory = (ctx, route) => {
  const specId = route.parts[1] ?? '';
  const picker = h('div', { class: 'filters row' });
  const body = h('div', null, loading());
  const el = h('section', { class: 'calibration' }, h('div', { class: 'page-head' }, h('h1', null, 'Model calibration')), picker, body);
  void renderPicker(ctx, picker, specId);
  if (specId) void load();
  else replace(body, infoBox('Choose a product to see how lab results have calibrated the model\u2019s predicted bands.'));

  async function load(): Promise<void> {
    try {
      const data = await ctx.api.get<SpecCalibration>(`/v1/specs/${specId}/calibration`);
      el.querySelector('h1')!.textContent = `Model calibration — ${data.spec.code}`;
      replace(body, calibrationPanel(ctx, data));
      el.dataset['calibrationReady'] = 'true';
    } catch (error) {
      showError(body, error, 'Reading the model calibration');
    }
  }
  return { el, title: 'Model calibration' };
};

async function renderPicker(ctx: AppContext, slot: HTMLElement, specId: string): Promise<void> {
  try {
    const specs = await ctx.specs();
    const options = [{ value: '', label: 'Choose a product…' }, ...specs.map((s) => ({ value: s.id, label: `${s.code} — ${s.name}` }))];
    replace(slot, field('Product', select(options, specId, (value) => value && navigate(`/calibration/${value}`))));
  } catch (error) {
    showError(slot, error, 'Reading product specs');
  }
}

function calibrationPanel(ctx: AppContext, data: SpecCalibration): HTMLElement {
  const zone = ctx.plantZone;
  const minResults = data.method.minResults;
  const head = ['Quantity', 'Results used', 'Left out', 'Bias (measured − predicted)', 'Spread (s)', 'In force', 'Latest load: model band → calibrated band', `Effect on the last loads`, `Updated (${zone})`];
  return h(
    'div',
    null,
    h('p', { class: 'notice info calibration-note' },
      'Calibration corrects the model\u2019s predicted bands, not the lab results; whether a load is released is a human disposition, never the calibration\u2019s.'),
    h('section', { class: 'card' },
      h('h2', null, `${data.spec.code} `, h('span', { class: 'muted' }, data.spec.name)),
      h('div', { class: 'table-wrap' }, h('table', { class: 'compact calibration-table' },
        h('thead', null, h('tr', null, ...head.map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
        h('tbody', null, ...data.quantities.map((q) => quantityRow(q, minResults, zone))))),
      h('p', { class: 'muted small' },
        `Bias and spread are of measured − predicted median (p50) over the product\u2019s lab results, newest weighted most (about the last ${data.method.effectiveMemoryResults} results count). `,
        `The correction applies from ${minResults} results on; until then the model\u2019s own band stands. `,
        'A result is left out when its load had a major or critical process-window deviation still present (an assignable cause): it is still judged against its band, but does not teach the model.')),
    ...data.quantities.map((q) => leftOutBlock(q)).filter((x): x is HTMLElement => x !== null),
    ...data.quantities.filter((q) => q.history.length > 0).map((q) => historyBlock(q, zone)),
  );
}

function quantityRow(q: QuantityCalibration, minResults: number, zone: string): HTMLElement {
  const counts = quantityCounts(q, minResults);
  const cal = q.calibration;
  const latest = q.effect.batches[0] ?? null;
  const cell = (name: string, ...children: Child[]) => h('td', { dataset: { field: name } }, ...children);
  return h('tr', { dataset: { quantity: q.quantity } },
    h('th', { attrs: { scope: 'row' } }, QUANTITY_LABEL[q.quantity]),
    cell('used', `${counts.used}`),
    cell('excluded', counts.excluded === 0 ? '0' : h('a', { attrs: { href: `#excluded-${q.quantity}` } }, `${counts.excluded}`)),
    cell('bias', cal ? fmtQuantityDelta(q.quantity, cal.bias) : '—'),
    cell('spread', cal ? fmtQuantityValue(q.quantity, cal.sd) : '—'),
    cell('in-force', h('span', { class: `badge ${counts.inForce ? 'in-force' : 'none'}` }, counts.inForce ? 'In force' : 'Not in force'), h('div', { class: 'muted small' }, counts.status)),
    cell('band', latest
      ? [link(`/batches/${latest.batchId}`, latest.batchCode), ': ', h('span', { dataset: { band: 'raw' } }, fmtQuantityBand(q.quantity, latest.raw)), ' → ',
          h('span', { dataset: { band: 'calibrated' } }, latest.applied ? fmtQuantityBand(q.quantity, latest.calibrated) : 'unchanged (not in force)')]
      : h('span', { class: 'muted' }, 'no predicted load yet')),
    cell('effect', q.effect.batches.length === 0 ? '—' : !q.effect.batches.some((b) => b.applied) ? h('span', { class: 'muted' }, 'none yet: not in force') : [
      h('span', { dataset: { figure: 'narrowed' } }, fmtNarrowed(q.effect.meanNarrowedPct)), ', ',
      'median moved ', h('span', { dataset: { figure: 'shift' } }, fmtQuantityDelta(q.quantity, q.effect.meanShift)),
      h('div', { class: 'muted small' }, `mean over ${q.effect.batches.length} load${q.effect.batches.length === 1 ? '' : 's'}; width ${fmtQuantityValue(q.quantity, q.effect.meanRawWidth)} → ${fmtQuantityValue(q.quantity, q.effect.meanCalibratedWidth)} (p05–p95)`)]),
    cell('updated', cal ? formatDateTime(cal.updatedAt, zone) : '—'),
  );
}

/** Which results were left out and why: the deviation (linked) and the loads (linked) it took out. */
function leftOutBlock(q: QuantityCalibration): HTMLElement | null {
  if (q.excluded.results === 0) return null;
  const causes = exclusionCauses(q);
  return h('section', { class: 'card', id: `excluded-${q.quantity}`, dataset: { excluded: q.quantity } },
    h('h2', null, `${QUANTITY_LABEL[q.quantity]}: ${q.excluded.results} result${q.excluded.results === 1 ? '' : 's'} left out`),
    h('p', { class: 'muted small' }, 'By rule: ', Object.entries(q.excluded.byRule).map(([rule, n]) => `${fmtRule(rule)}: ${n}`).join(', ')),
    h('ul', null, ...causes.map((c) => h('li', { dataset: { deviationId: c.deviationId } },
      severityChip(c.severity as never), ' ', link(`/deviations/${c.deviationId}`, fmtRule(c.rule)), ' on load ',
      ...c.batches.flatMap((b, i) => [i > 0 ? ', ' : '', link(`/batches/${b.id}`, b.code)])))));
}

/** Every lab comparison of the quantity, in calibration order: what was measured against which band. */
function historyBlock(q: QuantityCalibration, zone: string): HTMLElement {
  const head = ['Load', 'Lab ref', 'Measured', 'Judged against', 'Measured − model median', 'Verdict', 'Calibration', `Compared (${zone})`];
  return h('details', { class: 'card', dataset: { history: q.quantity } },
    h('summary', null, `${QUANTITY_LABEL[q.quantity]}: ${q.history.length} lab comparison${q.history.length === 1 ? '' : 's'}`),
    h('div', { class: 'table-wrap' }, h('table', { class: 'compact' },
      h('thead', null, h('tr', null, ...head.map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
      h('tbody', null, ...q.history.map((r) => h('tr', null,
        h('td', null, link(`/batches/${r.batchId}`, r.batchCode)),
        h('td', null, r.externalRef ?? '—'),
        h('td', { class: 'num' }, fmtQuantityValue(q.quantity, r.measured)),
        h('td', null, fmtQuantityBand(q.quantity, r.band), r.calibrationApplied ? h('span', { class: 'muted small' }, ' (calibrated)') : null),
        h('td', { class: 'num' }, fmtQuantityDelta(q.quantity, r.residual)),
        h('td', null, r.verdict),
        h('td', null, r.excludedBy ? ['left out: ', ...r.excludedBy.causes.flatMap((c, i) => [i > 0 ? ', ' : '', link(`/deviations/${c.deviationId}`, fmtRule(c.rule))])] : 'used'),
        h('td', { class: 'nowrap' }, formatDateTime(r.firstComparedAt, zone))))))));
}
