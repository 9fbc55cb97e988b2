import type { Heat, Page } from '../api/types.js';
import type { ViewFactory } from '../app/view.js';
import { fmtNum } from '../lib/format.js';
import { formatDateTime } from '../lib/time.js';
import { button, field, h, link, replace, select } from '../ui/dom.js';
import { infoBox, showError } from '../ui/notice.js';
import { loading } from '../ui/widgets.js';

/** Heats, newest first, with a heat-number search and the main elements at a glance. */
export const heatsView: ViewFactory = (ctx, route) => {
  const zone = ctx.plantZone;
  const number = h('input', { attrs: { type: 'search', placeholder: 'exact heat number' }, props: { value: route.query.get('heatNumber') ?? '' } });
  const material = select([{ value: '', label: 'All' }, { value: 'STEEL', label: 'Steel' }, { value: 'DUCTILE_IRON', label: 'Ductile iron' }], route.query.get('material') ?? '');
  const errors = h('div');
  const body = h('tbody');
  const more = h('div');
  const count = h('p', { class: 'muted', attrs: { role: 'status' } });
  const el = h(
    'section',
    { class: 'heats' },
    h('div', { class: 'page-head' }, h('h1', null, 'Heats')),
    h('form', { class: 'filters row', on: { submit: (e) => { e.preventDefault(); void load(true); } } }, field('Heat number', number), field('Material', material), h('div', { class: 'filter-actions' }, button('Search', () => undefined, { kind: 'primary', type: 'submit' }))),
    errors,
    count,
    h('div', { class: 'table-wrap' }, h('table', { class: 'list' },
      h('thead', null, h('tr', null, ...['Heat', 'Material', 'Grade', 'C (wt%)', 'Si (wt%)', 'Mn (wt%)', 'Rev.', `Received (${zone})`].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
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
      const page = await ctx.api.get<Page<Heat>>('/v1/heats', { query: { heatNumber: number.value.trim() || undefined, material: material.value || undefined, limit: 50, cursor: cursor ?? undefined } });
      replace(errors);
      count.textContent = `${page.total} heat${page.total === 1 ? '' : 's'}`;
      for (const heat of page.items) {
        const c = heat.chemistryWtPct;
        body.append(h('tr', null,
          h('td', null, link(`/heats/${heat.id}`, heat.heatNumber)),
          h('td', null, heat.material === 'STEEL' ? 'steel' : 'ductile iron'),
          h('td', null, heat.grade ?? '—'),
          h('td', { class: 'num' }, fmtNum(c['C'], 3)),
          h('td', { class: 'num' }, fmtNum(c['Si'], 2)),
          h('td', { class: 'num' }, fmtNum(c['Mn'], 2)),
          h('td', { class: 'num' }, String(heat.revision)),
          h('td', null, formatDateTime(heat.createdAt, zone))));
      }
      cursor = page.nextCursor;
      replace(more, cursor ? button('Show more', () => void load(false)) : page.total === 0 ? infoBox('No heats found.') : null);
    } catch (error) {
      replace(more);
      showError(errors, error, 'Reading heats');
    }
  }
  void load(true);
  return { el, title: 'Heats' };
};
