import type { BatchListItem, Page } from '../api/types.js';
import type { ViewFactory } from '../app/view.js';
import { fmtBatchStatus } from '../lib/format.js';
import { formatDateTime } from '../lib/time.js';
import { button, field, h, link, replace, select } from '../ui/dom.js';
import { infoBox, showError } from '../ui/notice.js';
import { loading } from '../ui/widgets.js';

/** Loads, newest first, by line, status or load number. */
export const batchesView: ViewFactory = (ctx, route) => {
  const zone = ctx.plantZone;
  const code = h('input', { attrs: { type: 'search', placeholder: 'exact load number' }, props: { value: route.query.get('code') ?? '' } });
  const line = select([{ value: '', label: 'All lines' }], route.query.get('lineId') ?? '');
  const status = select(
    [{ value: '', label: 'Any' }, ...['PLANNED', 'IN_FURNACE', 'IN_TRANSFER', 'IN_BATH', 'DONE'].map((s) => ({ value: s, label: fmtBatchStatus(s) })), { value: 'IN_FURNACE,IN_TRANSFER,IN_BATH', label: 'Any in progress' }],
    route.query.get('status') ?? '',
  );
  const errors = h('div');
  const body = h('tbody');
  const more = h('div');
  const count = h('p', { class: 'muted', attrs: { role: 'status' } });
  const el = h(
    'section',
    { class: 'batches' },
    h('div', { class: 'page-head' }, h('h1', null, 'Loads')),
    h('form', { class: 'filters row', on: { submit: (e) => { e.preventDefault(); void load(true); } } }, field('Load number', code), field('Line', line), field('Status', status), h('div', { class: 'filter-actions' }, button('Search', () => undefined, { kind: 'primary', type: 'submit' }))),
    errors,
    count,
    h('div', { class: 'table-wrap' }, h('table', { class: 'list' },
      h('thead', null, h('tr', null, ...['Load', 'Line', 'Heat', 'Spec', 'Status', 'Parts', `Created (${zone})`].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
      body)),
    more,
  );
  let cursor: string | null = null;

  async function load(reset: boolean): Promise<void> {
    if (reset) {
      cursor = null;
      replace(body);
    }
    replace(more, loading());
    try {
      const page = await ctx.api.get<Page<BatchListItem>>('/v1/batches', { query: { code: code.value.trim() || undefined, lineId: line.value || undefined, status: status.value || undefined, limit: 50, cursor: cursor ?? undefined } });
      replace(errors);
      count.textContent = `${page.total} load${page.total === 1 ? '' : 's'}`;
      for (const b of page.items) {
        body.append(h('tr', null,
          h('td', null, link(`/batches/${b.id}`, b.code), b.stale ? h('span', { class: 'warn small', attrs: { title: 'waiting for a recompute' } }, ' ⚠ stale') : null),
          h('td', null, b.line.code),
          h('td', null, link(`/heats/${b.heatId}`, b.heat.heatNumber)),
          h('td', null, `${b.specVersion.spec.code} v${b.specVersion.version}`),
          h('td', null, fmtBatchStatus(b.status)),
          h('td', { class: 'num' }, String(b.partCount)),
          h('td', null, formatDateTime(b.createdAt, zone))));
      }
      cursor = page.nextCursor;
      replace(more, cursor ? button('Show more', () => void load(false)) : page.total === 0 ? infoBox('No loads found.') : null);
    } catch (error) {
      replace(more);
      showError(errors, error, 'Reading loads');
    }
  }
  void ctx.lines().then((lines) => {
    for (const l of lines) line.append(h('option', { props: { value: l.id, selected: route.query.get('lineId') === l.id } }, `${l.code} ${l.name}`));
  }).catch((error) => showError(errors, error, 'Reading lines'));
  void load(true);
  return { el, title: 'Loads' };
};
