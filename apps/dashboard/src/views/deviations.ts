import type { DeviationListItem, DeviationWithAudit, Line, Page, Spec } from '../api/types.js';
import type { AppContext } from '../app/context.js';
import { setQuery } from '../app/router.js';
import type { ViewFactory } from '../app/view.js';
import { toCsv } from '../lib/csv.js';
import { fmtDisposition, fmtRule } from '../lib/format.js';
import { formatClock, formatDateTime, formatIsoInZone, msToWallInput, wallTimeToMs } from '../lib/time.js';
import { deviationPanel } from '../ui/deviation-panel.js';
import { button, field, h, link, replace } from '../ui/dom.js';
import { infoBox, showError } from '../ui/notice.js';
import { loading, severityChip, statusChip } from '../ui/widgets.js';

/**
 * Deviation history for quality: filter by time (plant wall clock), line, product, rule, severity and
 * status; counts by rule and by line; each deviation's audit trail and actions; the filtered list as
 * CSV. The API pages by 500; the screen reads every page up to EXPORT_CAP rows so counts and the
 * export cover the whole filter, and says so when the cap cuts it short.
 */

const PAGE = 500;
const EXPORT_CAP = 5000;
const SHOW_ROWS = 200;
const SEVERITIES = ['CRITICAL', 'MAJOR', 'MINOR'] as const;
const STATUSES = ['OPEN', 'ACKNOWLEDGED', 'DISPOSITIONED', 'CLOSED', 'CLEARED'] as const;
const KNOWN_RULES = [
  'austenitize-temp', 'austenitize-time', 'transfer-time', 'bath-band-excursion', 'thermocouple-disagreement',
  'channel-gap', 'signal-flatline', 'signal-implausible', 'load-event-order', 'hold-min', 'hold-max',
];

export const deviationsView: ViewFactory = (ctx, route) => {
  if (route.parts[1]) return deviationDetail(ctx, route.parts[1]);
  const q = route.query;
  const zone = ctx.plantZone;

  const from = h('input', { attrs: { type: 'datetime-local', name: 'from' }, props: { value: q.get('from') ?? msToWallInput(Date.now() - 30 * 86_400_000, zone).slice(0, 10) + 'T00:00' } });
  const to = h('input', { attrs: { type: 'datetime-local', name: 'to' }, props: { value: q.get('to') ?? '' } });
  const lineSel = h('select', { attrs: { name: 'lineId' } }, h('option', { props: { value: '' } }, 'All lines'));
  const specSel = h('select', { attrs: { name: 'productSpecId' } }, h('option', { props: { value: '' } }, 'All products'));
  const rule = h('input', { attrs: { type: 'text', name: 'rule', list: 'rule-ids', placeholder: 'e.g. bath-band-excursion' }, props: { value: q.get('rule') ?? '' } });
  const ruleList = h('datalist', { id: 'rule-ids' }, ...KNOWN_RULES.map((r) => h('option', { props: { value: r } }, fmtRule(r))));
  const checks = (name: string, values: readonly string[], selected: string[]) =>
    h('fieldset', { class: 'checks' }, h('legend', null, name === 'severity' ? 'Severity' : 'Status'),
      ...values.map((v) => h('label', null, h('input', { attrs: { type: 'checkbox', name, value: v }, props: { checked: selected.includes(v) } }), ` ${v.toLowerCase()}`)));
  const severitySet = checks('severity', SEVERITIES, (q.get('severity') ?? '').split(',').filter(Boolean));
  const statusSet = checks('status', STATUSES, (q.get('status') ?? '').split(',').filter(Boolean));

  const errors = h('div');
  const summary = h('div', { class: 'dev-summary', attrs: { 'aria-live': 'polite' } });
  const table = h('div', { class: 'table-wrap' });
  const exportBtn = button('Export CSV', () => exportCsv());
  exportBtn.disabled = true;
  const form = h(
    'form',
    { class: 'filters', on: { submit: (e) => { e.preventDefault(); apply(); } } },
    field(`From (${zone})`, from),
    field(`To (${zone})`, to, 'empty = now'),
    field('Line', lineSel),
    field('Product', specSel),
    field('Rule', rule, 'comma-separated rule ids'),
    ruleList,
    severitySet,
    statusSet,
    h('div', { class: 'filter-actions' }, button('Apply filters', () => undefined, { kind: 'primary', type: 'submit' }), exportBtn),
  );
  const el = h('section', { class: 'deviations' }, h('div', { class: 'page-head' }, h('h1', null, 'Deviation history'), h('span', { class: 'muted small' }, `Times in ${zone}`)), form, errors, summary, table);

  let items: DeviationListItem[] = [];
  let total = 0;
  let lines: Line[] = [];
  let specs: Spec[] = [];
  let disposed = false;

  function selected(name: string): string[] {
    return [...form.querySelectorAll<HTMLInputElement>(`input[name="${name}"]:checked`)].map((i) => i.value);
  }

  function currentFilters(): URLSearchParams {
    const p = new URLSearchParams();
    if (from.value) p.set('from', from.value);
    if (to.value) p.set('to', to.value);
    if (lineSel.value) p.set('lineId', lineSel.value);
    if (specSel.value) p.set('productSpecId', specSel.value);
    if (rule.value.trim()) p.set('rule', rule.value.split(',').map((r) => r.trim()).filter(Boolean).join(','));
    if (selected('severity').length) p.set('severity', selected('severity').join(','));
    if (selected('status').length) p.set('status', selected('status').join(','));
    return p;
  }

  function apiQuery(p: URLSearchParams): Record<string, string> | null {
    const out: Record<string, string> = {};
    for (const key of ['lineId', 'productSpecId', 'rule', 'severity', 'status']) if (p.get(key)) out[key] = p.get(key)!;
    for (const key of ['from', 'to'] as const) {
      const v = p.get(key);
      if (!v) continue;
      const ms = wallTimeToMs(v, zone);
      if (ms === null) {
        showError(errors, new Error(`'${key}' is not a date and time`), 'Filtering');
        return null;
      }
      out[key] = new Date(ms).toISOString();
    }
    return out;
  }

  function apply(): void {
    const p = currentFilters();
    setQuery(p);
    void load(p);
  }

  async function load(p: URLSearchParams): Promise<void> {
    const query = apiQuery(p);
    if (!query) return;
    replace(errors);
    replace(summary, loading('Reading deviations…'));
    exportBtn.disabled = true;
    try {
      const got: DeviationListItem[] = [];
      let cursor: string | null = null;
      let count = 0;
      do {
        const page: Page<DeviationListItem> = await ctx.api.get<Page<DeviationListItem>>('/v1/deviations', { query: { ...query, limit: PAGE, ...(cursor ? { cursor } : {}) } });
        got.push(...page.items);
        count = page.total;
        cursor = page.nextCursor;
      } while (cursor && got.length < EXPORT_CAP && !disposed);
      if (disposed) return;
      items = got;
      total = count;
      render();
    } catch (error) {
      replace(summary);
      showError(errors, error, 'Reading deviations');
    }
  }

  function render(): void {
    const byRule = countBy(items, (d) => d.rule);
    const byLine = countBy(items, (d) => d.line.code);
    const capped = items.length < total;
    replace(
      summary,
      h('p', { class: 'result-count', dataset: { total: String(total), loaded: String(items.length) } },
        h('strong', null, `${total} deviation${total === 1 ? '' : 's'}`), ' match the filters',
        capped ? ` (the counts and the export cover the newest ${items.length}; narrow the time range for the rest)` : '', '.'),
      total === 0 ? null : h('div', { class: 'counts' }, countList('By rule', byRule, fmtRule, 'rule'), countList('By line', byLine, (x) => x, 'line')),
    );
    exportBtn.disabled = items.length === 0;
    if (items.length === 0) {
      replace(table, infoBox('Nothing matches. Widen the time range or clear some filters.'));
      return;
    }
    const shown = items.slice(0, SHOW_ROWS);
    replace(
      table,
      h('table', { class: 'list', attrs: { 'aria-label': 'Deviations' } },
        h('thead', null, h('tr', null, ...[`Opened (${zone})`, 'Line', 'Load', 'Rule', 'Severity', 'Status', 'Message', 'Disposition'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
        h('tbody', null, ...shown.map((d) =>
          h('tr', { dataset: { deviationId: d.id } },
            h('td', { class: 'nowrap' }, link(`/deviations/${d.id}`, formatDateTime(d.openedAt, zone))),
            h('td', { class: 'short' }, d.line.code),
            h('td', { class: 'short' }, d.batch && d.batchId ? link(`/batches/${d.batchId}`, d.batch.code) : '—', d.channel ? h('span', { class: 'muted small' }, ` ${d.channel.code}`) : null),
            h('td', null, fmtRule(d.rule)),
            h('td', null, severityChip(d.severity)),
            h('td', null, statusChip(d.status)),
            h('td', { class: 'msg' }, d.message),
            h('td', null, d.disposition ? `${fmtDisposition(d.disposition)}${d.signer ? ` (${d.signer})` : ''}` : '—'),
          ))),
      ),
      items.length > SHOW_ROWS ? h('p', { class: 'muted' }, `Showing the newest ${SHOW_ROWS} of ${items.length}; the CSV export has all of them.`) : null,
    );
  }

  function countList(title: string, counts: Map<string, number>, label: (k: string) => string, kind: string): HTMLElement {
    const max = Math.max(1, ...counts.values());
    return h('div', { class: 'count-list', dataset: { counts: kind } },
      h('h2', null, title),
      h('ul', null, ...[...counts.entries()].sort((a, b) => b[1] - a[1]).map(([k, n]) => {
        const bar = h('span', { class: 'count-bar' });
        bar.style.width = `${(n / max) * 100}%`;
        return h('li', { dataset: { key: k, count: String(n) } }, h('span', { class: 'count-label' }, label(k)), h('span', { class: 'count-track' }, bar), h('span', { class: 'count-n' }, String(n)));
      })));
  }

  function exportCsv(): void {
    const header = [
      `opened_at (${zone})`, 'line', 'load', 'rule', 'severity', 'status', 'message', 'channel', 'condition_present',
      'disposition', 'permit_ref', 'signer', `dispositioned_at (${zone})`, 'disposition_reason', `acknowledged_at (${zone})`, `closed_at (${zone})`, 'deviation_id',
    ];
    const rows = items.map((d) => [
      formatIsoInZone(d.openedAt, zone), d.line.code, d.batch?.code ?? '', d.rule, d.severity, d.status, d.message, d.channel?.code ?? '', d.conditionPresent,
      d.disposition ?? '', d.dispositionRef ?? '', d.signer ?? '', formatIsoInZone(d.dispositionedAt, zone), d.dispositionReason ?? '', formatIsoInZone(d.acknowledgedAt, zone), formatIsoInZone(d.closedAt, zone), d.id,
    ]);
    const csv = toCsv(header, rows);
    const stamp = formatIsoInZone(Date.now(), zone).slice(0, 16).replace(/[-:T]/g, '');
    const a = h('a', { attrs: { href: URL.createObjectURL(new Blob(['\uFEFF', csv], { type: 'text/csv;charset=utf-8' })), download: `ausline-deviations-${stamp}.csv` } });
    document.body.append(a);
    a.click();
    a.remove();
    window.setTimeout(() => URL.revokeObjectURL(a.href), 10_000);
  }

  // Lines and products for the selects; then the first load with the filters from the URL.
  void Promise.all([ctx.lines(), ctx.specs()])
    .then(([l, s]) => {
      lines = l;
      specs = s;
      for (const line of lines) lineSel.append(h('option', { props: { value: line.id, selected: q.get('lineId') === line.id } }, `${line.code} ${line.name}`));
      for (const spec of specs) specSel.append(h('option', { props: { value: spec.id, selected: q.get('productSpecId') === spec.id } }, `${spec.code} ${spec.name}`));
    })
    .catch((error) => showError(errors, error, 'Reading lines and products'))
    .finally(() => void load(currentFilters()));

  const off = ctx.stream.onEvent((e) => {
    if (e.type === 'deviation.changed' && items.some((d) => d.id === e.deviationId)) void load(currentFilters());
  });

  return {
    el,
    title: 'Deviations',
    dispose() {
      disposed = true;
      off();
    },
  };
};

function deviationDetail(ctx: AppContext, id: string) {
  const body = h('div', null, loading());
  const el = h('section', { class: 'deviation-detail' }, h('div', { class: 'page-head' }, h('h1', null, 'Deviation'), link('/deviations', '← back to the list')), body);
  let disposed = false;
  // What this person last did here stays said (re-reads after live events must not wipe it), with its time.
  let flash: string | undefined;
  async function load(): Promise<void> {
    try {
      const d = await ctx.api.get<DeviationWithAudit>(`/v1/deviations/${id}`);
      if (disposed) return;
      replace(body, deviationPanel(ctx, d, (u) => {
        flash = `Saved at ${formatClock(Date.now(), ctx.plantZone, true)}: the deviation is now ${u.status.toLowerCase()}.`;
        void load();
      }, flash));
    } catch (error) {
      showError(body, error, 'Loading the deviation');
    }
  }
  const off = ctx.stream.onEvent((e) => {
    if (e.type === 'deviation.changed' && e.deviationId === id) void load();
  });
  void load();
  return {
    el,
    title: 'Deviation',
    dispose() {
      disposed = true;
      off();
    },
  };
}

function countBy<T>(list: readonly T[], key: (x: T) => string): Map<string, number> {
  const m = new Map<string, number>();
  for (const x of list) m.set(key(x), (m.get(key(x)) ?? 0) + 1);
  return m;
}

