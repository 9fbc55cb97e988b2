import type { AnnotationOptions } from 'chartjs-plugin-annotation';
import type { Line, Spec } from '../api/types.js';
import type { ViewFactory } from '../app/view.js';
import { setQuery } from '../app/router.js';
import { Chart, COLORS, setupCharts } from '../charts/setup.js';
import { fmtNum } from '../lib/format.js';
import { formatDateTime } from '../lib/time.js';
import { field, h, link, replace, select } from '../ui/dom.js';
import { infoBox, showError } from '../ui/notice.js';
import { loading, statusChip } from '../ui/widgets.js';

/**
 * Drift across lots, per product spec and line (issue 4 item 4; GET /v1/drift, /v1/drift/charts): one
 * value per load, on an individuals chart with its frozen Phase I limits, an EWMA and a tabular CUSUM,
 * the signals marked where they fired and the episodes with the drift deviations they opened. The API
 * recomputes the chart from the stored lot values with the worker's own functions, so what is drawn is
 * what raised the deviations.
 */

const METRICS: Array<{ id: string; label: string }> = [
  { id: 'bainite-ceiling-margin', label: 'Bainite ceiling margin over the minimum' },
  { id: 'blocky-austenite-margin', label: 'Blocky austenite margin below the maximum' },
  { id: 'predicted-hardness-p50', label: 'Predicted hardness (p50)' },
  { id: 'measured-hardness', label: 'Measured hardness' },
  { id: 'bath-mean-temp-hold', label: 'Mean bath temperature during hold' },
];

interface DriftPoint {
  index: number;
  lotId: string;
  batchId: string | null;
  value: number;
  individuals: { centre: number; ucl: number; lcl: number; movingRange: number | null; movingRangeUcl: number | null };
  ewma: { statistic: number; centre: number; ucl: number; lcl: number } | null;
  cusum: { upper: number; lower: number; h: number } | null;
  specBreach: 'above' | 'below' | null;
  signalKeys: string[];
}

interface DriftSignal {
  key: string;
  source: string;
  rule: string;
  description: string;
  message: string;
  direction: string;
  adverse: boolean;
  onset: boolean;
  index: number;
  lotId: string;
}

interface DriftChartReply {
  spec: { id: string; code: string; name: string };
  line: { id: string; code: string; name: string };
  metric: string;
  label: string;
  unit: string;
  status: 'monitoring' | 'collecting-phase-i' | 'phase-i-failed' | 'not-applicable' | 'disabled';
  reason?: string | null;
  lotCount: number;
  settings: { adverseDirection: string; phaseILots: number; config: { ewma?: { lambda: number; L: number; enabled?: boolean }; cusum?: { k: number; h: number; enabled?: boolean } } };
  specLimits: { lower: number | null; upper: number | null } | null;
  limits: { version: number; centre: number; sigma: number; individuals: { ucl: number; lcl: number }; source: string; createdAt: string; reason: string | null } | null;
  phaseI: { lots: unknown[]; need: number };
  pointsFrom?: number;
  points: DriftPoint[];
  signals: DriftSignal[];
  episodes: Array<{ onsetIndex: number; onsetLotId: string; ongoing: boolean; direction: string; keys: string[]; deviation: { id: string; status: string; severity: string; openedAt: string } | null }>;
  firstSpecBreach: { index: number; lotId: string; value: number; side: string; limit: number } | null;
  leadLotsBeforeSpecBreach?: number | null;
  evaluatedAt: string | null;
}

interface OverviewReply {
  spec: { id: string; code: string };
  charts: Array<{ lineId: string; lineCode: string; metric: string; status: string; limitsVersion: number | null; lotCount: number; evaluatedAt: string | null }>;
}

export const driftView: ViewFactory = (ctx, route) => {
  setupCharts();
  const q = route.query;
  const zone = ctx.plantZone;
  const specSel = h('select', { attrs: { name: 'specId' } });
  const lineSel = h('select', { attrs: { name: 'lineId' } });
  const metricSel = select(METRICS.map((m) => ({ value: m.id, label: m.label })), q.get('metric') ?? 'bainite-ceiling-margin');
  const errors = h('div');
  const overview = h('div');
  const body = h('div');
  const el = h(
    'section',
    { class: 'drift' },
    h('div', { class: 'page-head' }, h('h1', null, 'Drift across lots'), h('span', { class: 'muted small' }, 'one value per load, in production order')),
    h('form', { class: 'filters row', on: { change: () => void show(), submit: (e) => e.preventDefault() } }, field('Product', specSel), field('Line', lineSel), field('Metric', metricSel)),
    errors,
    overview,
    body,
  );
  const charts: Chart[] = [];

  function params(): URLSearchParams {
    const p = new URLSearchParams();
    if (specSel.value) p.set('specId', specSel.value);
    if (lineSel.value) p.set('lineId', lineSel.value);
    p.set('metric', metricSel.value);
    return p;
  }

  async function show(): Promise<void> {
    setQuery(params());
    if (!specSel.value || !lineSel.value) {
      replace(body, infoBox('Choose a product and a line.'));
      return;
    }
    replace(body, loading());
    try {
      const [ov, chart] = await Promise.all([
        ctx.api.get<OverviewReply>('/v1/drift/charts', { query: { specId: specSel.value, lineId: lineSel.value } }),
        ctx.api.get<DriftChartReply>('/v1/drift', { query: { specId: specSel.value, lineId: lineSel.value, metric: metricSel.value, last: 500 } }),
      ]);
      replace(errors);
      renderOverview(ov);
      renderChart(chart);
    } catch (error) {
      replace(body);
      showError(errors, error, 'Reading the drift charts');
    }
  }

  function renderOverview(ov: OverviewReply): void {
    if (ov.charts.length === 0) {
      replace(overview, infoBox('The worker has not charted this product on this line yet (charts start with the first loads that have predictions or lab results).'));
      return;
    }
    replace(
      overview,
      h('table', { class: 'compact drift-overview' },
        h('thead', null, h('tr', null, ...['Metric', 'Status', 'Lots', 'Limits', `Evaluated (${zone})`].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
        h('tbody', null, ...ov.charts.map((c) =>
          h('tr', { class: c.metric === metricSel.value ? 'current' : '' },
            h('td', null, h('a', { attrs: { href: `#/drift?specId=${specSel.value}&lineId=${lineSel.value}&metric=${c.metric}` } }, METRICS.find((m) => m.id === c.metric)?.label ?? c.metric)),
            h('td', null, statusWord(c.status)),
            h('td', { class: 'num' }, String(c.lotCount)),
            h('td', null, c.limitsVersion !== null ? `v${c.limitsVersion}` : '—'),
            h('td', null, formatDateTime(c.evaluatedAt, zone)))))),
    );
  }

  function renderChart(c: DriftChartReply): void {
    for (const ch of charts.splice(0)) ch.destroy();
    const unit = c.unit === 'volume fraction' ? 'vol%' : c.unit;
    const scale = c.unit === 'volume fraction' ? 100 : 1;
    const v = (x: number) => x * scale;
    const head = h('div', { class: 'card' },
      h('h2', null, `${c.label.charAt(0).toUpperCase()}${c.label.slice(1)} — ${c.spec.code} on ${c.line.code}`),
      h('p', null, statusLine(c)),
      c.limits
        ? h('p', { class: 'muted small' },
            `Frozen limits v${c.limits.version} (${c.limits.source}): centre ${fmtNum(v(c.limits.centre), 2)} ${unit}, σ ${fmtNum(v(c.limits.sigma), 3)} ${unit}, individuals ${fmtNum(v(c.limits.individuals.lcl), 2)}–${fmtNum(v(c.limits.individuals.ucl), 2)} ${unit}` +
              `${c.settings.config.ewma ? `; EWMA λ ${c.settings.config.ewma.lambda}, L ${c.settings.config.ewma.L}` : ''}${c.settings.config.cusum ? `; CUSUM k ${c.settings.config.cusum.k}σ, h ${c.settings.config.cusum.h}σ` : ''}; adverse direction ${c.settings.adverseDirection}.`)
        : null,
      c.firstSpecBreach
        ? h('p', { class: 'warn' }, `First spec breach at lot ${c.firstSpecBreach.lotId} (${fmtNum(v(c.firstSpecBreach.value), 2)} ${unit} ${c.firstSpecBreach.side} ${fmtNum(v(c.firstSpecBreach.limit), 2)} ${unit})` +
            (c.leadLotsBeforeSpecBreach != null ? `; the charts signalled ${c.leadLotsBeforeSpecBreach} lot${c.leadLotsBeforeSpecBreach === 1 ? '' : 's'} earlier.` : '.'))
        : null,
    );
    if (c.points.length === 0) {
      replace(body, head);
      return;
    }
    const x = (p: DriftPoint) => p.index + 1;
    const signalled = c.points.filter((p) => p.signalKeys.length > 0);
    const lotTitle = (items: Array<{ parsed: { x: number | null } }>) => {
      const at = items[0]?.parsed.x;
      const p = c.points.find((pt) => x(pt) === at);
      return p ? `lot ${x(p)}: ${p.lotId}` : '';
    };

    const spec: Record<string, AnnotationOptions> = {};
    if (c.specLimits?.lower != null) spec['specLo'] = specLine(v(c.specLimits.lower), `spec min ${fmtNum(v(c.specLimits.lower), 2)}`);
    if (c.specLimits?.upper != null) spec['specHi'] = specLine(v(c.specLimits.upper), `spec max ${fmtNum(v(c.specLimits.upper), 2)}`);

    const build: Array<() => Chart> = [];
    const individuals = chartBox('individuals', 'Individuals with frozen limits');
    build.push(() => new Chart(individuals.canvas, {
      type: 'line',
      data: {
        datasets: [
          { label: `value (${unit})`, data: c.points.map((p) => ({ x: x(p), y: v(p.value) })), borderColor: COLORS.bainite, backgroundColor: COLORS.bainite, pointRadius: 2, borderWidth: 1.2, parsing: false } as never,
          { label: 'centre', data: c.points.map((p) => ({ x: x(p), y: v(p.individuals.centre) })), borderColor: COLORS.muted, pointRadius: 0, borderWidth: 1, parsing: false } as never,
          { label: 'UCL / LCL', data: c.points.map((p) => ({ x: x(p), y: v(p.individuals.ucl) })), borderColor: COLORS.ceiling, borderDash: [6, 4], pointRadius: 0, borderWidth: 1, parsing: false } as never,
          { label: '', data: c.points.map((p) => ({ x: x(p), y: v(p.individuals.lcl) })), borderColor: COLORS.ceiling, borderDash: [6, 4], pointRadius: 0, borderWidth: 1, parsing: false } as never,
          { label: 'signal', data: signalled.map((p) => ({ x: x(p), y: v(p.value) })), borderColor: COLORS.nonconforming, backgroundColor: COLORS.nonconforming, showLine: false, pointRadius: 5, pointStyle: 'triangle', parsing: false } as never,
        ],
      },
      options: chartOptions(`Lot (production order)`, `${c.label} (${unit})`, spec, lotTitle),
    }));

    const blocks: HTMLElement[] = [individuals.el];
    if (c.points.some((p) => p.ewma)) {
      const ewma = chartBox('ewma', 'EWMA');
      const pts = c.points.filter((p) => p.ewma);
      build.push(() => new Chart(ewma.canvas, {
        type: 'line',
        data: {
          datasets: [
            { label: `EWMA (${unit})`, data: pts.map((p) => ({ x: x(p), y: v(p.ewma!.statistic) })), borderColor: COLORS.bath[0], pointRadius: 1.5, borderWidth: 1.4, parsing: false } as never,
            { label: 'limits', data: pts.map((p) => ({ x: x(p), y: v(p.ewma!.ucl) })), borderColor: COLORS.ceiling, borderDash: [6, 4], pointRadius: 0, borderWidth: 1, parsing: false } as never,
            { label: '', data: pts.map((p) => ({ x: x(p), y: v(p.ewma!.lcl) })), borderColor: COLORS.ceiling, borderDash: [6, 4], pointRadius: 0, borderWidth: 1, parsing: false } as never,
            { label: 'centre', data: pts.map((p) => ({ x: x(p), y: v(p.ewma!.centre) })), borderColor: COLORS.muted, pointRadius: 0, borderWidth: 1, parsing: false } as never,
            { label: 'EWMA signal', data: pts.filter((p) => p.signalKeys.some((k) => k.startsWith('ewma'))).map((p) => ({ x: x(p), y: v(p.ewma!.statistic) })), borderColor: COLORS.nonconforming, backgroundColor: COLORS.nonconforming, showLine: false, pointRadius: 5, pointStyle: 'triangle', parsing: false } as never,
          ],
        },
        options: chartOptions('Lot (production order)', `EWMA (${unit})`, {}, lotTitle),
      }));
      blocks.push(ewma.el);
    }
    if (c.points.some((p) => p.cusum)) {
      const cusum = chartBox('cusum', 'Tabular CUSUM');
      const pts = c.points.filter((p) => p.cusum);
      const hVal = pts[0]!.cusum!.h;
      build.push(() => new Chart(cusum.canvas, {
        type: 'line',
        data: {
          datasets: [
            { label: 'C⁺ (σ)', data: pts.map((p) => ({ x: x(p), y: p.cusum!.upper })), borderColor: COLORS.furnace[0], pointRadius: 1.5, borderWidth: 1.4, parsing: false } as never,
            { label: '−C⁻ (σ)', data: pts.map((p) => ({ x: x(p), y: -p.cusum!.lower })), borderColor: COLORS.bainite, pointRadius: 1.5, borderWidth: 1.4, parsing: false } as never,
            { label: 'CUSUM signal', data: pts.filter((p) => p.signalKeys.some((k) => k.startsWith('cusum'))).map((p) => ({ x: x(p), y: p.signalKeys.some((k) => k === 'cusum:down') ? -p.cusum!.lower : p.cusum!.upper })), borderColor: COLORS.nonconforming, backgroundColor: COLORS.nonconforming, showLine: false, pointRadius: 5, pointStyle: 'triangle', parsing: false } as never,
          ],
        },
        options: chartOptions('Lot (production order)', 'Cumulative sum (σ)', { hUp: specLine(hVal, `+h ${fmtNum(hVal, 1)}σ`, COLORS.ceiling), hDown: specLine(-hVal, `−h ${fmtNum(hVal, 1)}σ`, COLORS.ceiling) }, lotTitle),
      }));
      blocks.push(cusum.el);
    }

    const onsets = c.signals.filter((s) => s.onset);
    replace(
      body,
      head,
      h('div', { class: 'drift-charts' }, ...blocks),
      h('section', { class: 'card' },
        h('h2', null, `Signals (${c.signals.length}; ${onsets.length} onset${onsets.length === 1 ? '' : 's'})`),
        onsets.length === 0 ? h('p', { class: 'muted' }, 'No chart has signalled.') :
          h('ul', { class: 'signals' }, ...onsets.slice(-30).reverse().map((s) => h('li', { class: s.adverse ? 'adverse' : '' }, h('strong', null, `lot ${s.index + 1} (${s.lotId}) · ${s.description}`), s.adverse ? h('span', { class: 'warn' }, ' adverse') : null, h('div', { class: 'small' }, s.message)))),
        c.episodes.length > 0
          ? h('div', null, h('h3', null, 'Episodes'), h('ul', null, ...c.episodes.map((e) => h('li', null,
              `From lot ${e.onsetIndex + 1} (${e.onsetLotId}), ${e.direction}${e.ongoing ? ', ongoing' : ''}: ${e.keys.join(', ')}`,
              e.deviation ? [' — ', link(`/deviations/${e.deviation.id}`, 'drift deviation'), ' ', statusChip(e.deviation.status as never)] : ''))))
          : null,
      ),
    );
    // Charts are made only once their canvases are in the page: chart.js sizes a canvas from its
    // container, and one made on a detached canvas stays blank until a later resize callback.
    for (const make of build) charts.push(make());
    el.dataset['drawnAt'] = String(Date.now());
  }

  function chartBox(name: string, title: string): { el: HTMLElement; canvas: HTMLCanvasElement } {
    const canvas = h('canvas', { attrs: { role: 'img', 'aria-label': `${title} chart` } });
    return { el: h('section', { class: 'card charts' }, h('h2', null, title), h('div', { class: 'chart-box', dataset: { chart: `drift-${name}` } }, canvas)), canvas };
  }

  void Promise.all([ctx.specs(), ctx.lines()])
    .then(([specs, lines]: [Spec[], Line[]]) => {
      for (const s of specs) specSel.append(h('option', { props: { value: s.id, selected: q.get('specId') === s.id } }, `${s.code} ${s.name}`));
      for (const l of lines) lineSel.append(h('option', { props: { value: l.id, selected: q.get('lineId') === l.id } }, `${l.code} ${l.name}`));
      if (specs.length === 0 || lines.length === 0) {
        replace(body, infoBox('No product specs or lines yet.'));
        return;
      }
      void show();
    })
    .catch((error) => showError(errors, error, 'Reading products and lines'));

  const off = ctx.stream.onEvent((e) => {
    if (e.type === 'deviation.changed' && e.rule === 'drift') void show();
  });

  return {
    el,
    title: 'Drift',
    dispose() {
      off();
      for (const ch of charts) ch.destroy();
    },
  };
};

function statusWord(s: string): string {
  return (
    { monitoring: 'monitoring', 'collecting-phase-i': 'collecting Phase I lots', 'phase-i-failed': 'Phase I failed', 'not-applicable': 'not applicable', disabled: 'disabled' } as Record<string, string>
  )[s] ?? s;
}

function statusLine(c: DriftChartReply): string {
  switch (c.status) {
    case 'monitoring':
      return `Monitoring: ${c.lotCount} lots charted${c.pointsFrom ? ` (showing the newest ${c.points.length})` : ''}.`;
    case 'collecting-phase-i':
      return `Collecting Phase I: ${c.lotCount} of the ${c.phaseI.need} lots needed before limits are frozen. Nothing is judged until then.`;
    case 'phase-i-failed':
      return `Phase I failed: ${c.reason ?? 'the first lots were not in control'}. Limits are not frozen; review the process before charting.`;
    case 'not-applicable':
      return 'Not applicable to this spec (it does not name the limit this metric is measured against).';
    case 'disabled':
      return 'Disabled in the spec\u2019s drift settings.';
  }
}

function specLine(y: number, label: string, color: string = COLORS.spec): AnnotationOptions {
  return { type: 'line', yMin: y, yMax: y, borderColor: color, borderWidth: 1.5, borderDash: [8, 4], label: { display: true, content: label, position: 'end', backgroundColor: 'rgba(16,20,24,0.85)', color } };
}

function chartOptions(xTitle: string, yTitle: string, annotations: Record<string, AnnotationOptions>, title: (items: Array<{ parsed: { x: number | null } }>) => string) {
  return {
    animation: false as const,
    parsing: false as const,
    interaction: { mode: 'nearest' as const, axis: 'x' as const, intersect: false },
    scales: { x: { type: 'linear' as const, title: { display: true, text: xTitle }, ticks: { precision: 0 } }, y: { type: 'linear' as const, title: { display: true, text: yTitle } } },
    plugins: {
      legend: { position: 'top' as const, align: 'end' as const, labels: { filter: (item: { text: string }) => item.text !== '' } },
      tooltip: { callbacks: { title } },
      annotation: { annotations },
    },
  };
}
