import type { AnnotationOptions } from 'chartjs-plugin-annotation';
import { ApiError } from '../api/client.js';
import type { BatchDetail, BatchListItem, HeatAdvice, HeatDiagram, HeatWithRevisions, Page, Spec, SpecVersion } from '../api/types.js';
import type { ViewFactory } from '../app/view.js';
import { Chart, COLORS, setupCharts } from '../charts/setup.js';
import { checkChemistry, chemistryConforms, type ElementCheck } from '../lib/chemistry.js';
import { fmtBatchStatus, fmtC, fmtLimits, fmtNum, fmtWtPct } from '../lib/format.js';
import { readPrediction } from '../lib/prediction.js';
import { formatDateTime } from '../lib/time.js';
import { plainWarnings } from '../lib/warnings.js';
import { h, link, replace, select } from '../ui/dom.js';
import { showError } from '../ui/notice.js';
import { facts, loading } from '../ui/widgets.js';

/**
 * One heat: its chemistry (every revision) against a product spec's limits, the receipt check, and the
 * temperature–carbon diagram of this heat: T0 and T0′ (how much carbon austenite can take before
 * bainite stops), Ae3, the Bs and Ms levels, the heat's carbon and the bath window.
 *
 * The curves come from GET /v1/heats/:id/diagram and the advised window and hardenability check from
 * POST /v1/heats/:id/advice (issue 4). Where the API does not answer them (404: not there yet), the
 * diagram shows what exists: the heat's carbon, the spec's bath window and the Ae3/Bs/Ms/T0 values found
 * in the predictions of the heat's loads, and says the curves are missing rather than drawing invented ones.
 */

export const heatView: ViewFactory = (ctx, route) => {
  const id = route.parts[1]!;
  const zone = ctx.plantZone;
  const head = h('div', { class: 'page-head' }, h('h1', null, 'Heat'), loading());
  const errors = h('div');
  const chemCard = h('section', { class: 'card' });
  const diagramCard = h('section', { class: 'card charts' });
  const batchesCard = h('section', { class: 'card' });
  const revCard = h('section', { class: 'card' });
  const el = h('section', { class: 'heat', dataset: { heatId: id } }, head, errors, h('div', { class: 'heat-grid' }, diagramCard, chemCard), batchesCard, revCard);

  setupCharts();
  const canvas = h('canvas', { attrs: { role: 'img', 'aria-label': 'Temperature against carbon: T0, T0′ and Ae3 lines, Bs and Ms levels, the heat\u2019s carbon and the bath window' } });
  const chartBox = h('div', { class: 'chart-box tall', dataset: { chart: 'diagram' } }, canvas);
  let chart: Chart | null = null;
  let heat: HeatWithRevisions | null = null;
  let specs: Spec[] = [];
  let batches: BatchListItem[] = [];
  let diagram: HeatDiagram | null = null;
  let diagramProblem: string | null = null;
  let advice: HeatAdvice | null = null;
  let adviceProblem: string | null = null;
  let adviceFor: string | null = null;
  let predictions: Array<{ code: string; p: NonNullable<ReturnType<typeof readPrediction>> }> = [];
  let specId = route.query.get('spec');

  async function load(): Promise<void> {
    try {
      const [hh, sp, bl] = await Promise.all([
        ctx.api.get<HeatWithRevisions>(`/v1/heats/${id}`),
        ctx.specs(),
        ctx.api.get<Page<BatchListItem>>('/v1/batches', { query: { heatId: id, limit: 50 } }),
      ]);
      heat = hh;
      specs = sp;
      batches = bl.items;
      if (!specId || !specs.some((s) => s.id === specId)) {
        specId = batches[0]?.specVersion.spec.id ?? specs.find((s) => s.material === hh.material)?.id ?? null;
      }
      await loadDiagram();
      // Values the model computed for loads of this heat (newest first, at most five).
      const details = await Promise.all(batches.slice(0, 5).map((b) => ctx.api.get<BatchDetail>(`/v1/batches/${b.id}`)));
      predictions = details.flatMap((d) => {
        const p = readPrediction(d.latestPrediction);
        return p ? [{ code: d.code, p }] : [];
      });
      render();
      void loadAdvice();
    } catch (error) {
      showError(errors, error, 'Loading the heat');
      replace(head, h('h1', null, 'Heat'));
    }
  }

  const problemOf = (error: unknown): string => (error instanceof ApiError && error.status === 404 ? 'missing' : error instanceof Error ? error.message : String(error));

  /** The heat's curves for the chosen spec (matrix carbon of iron depends on the spec's austenitize). */
  async function loadDiagram(): Promise<void> {
    try {
      diagram = await ctx.api.get<HeatDiagram>(`/v1/heats/${id}/diagram`, { query: { fromC: 150, toC: 950, stepC: 10, ...(specId ? { specId } : {}) } });
      diagramProblem = null;
    } catch (error) {
      diagram = null;
      diagramProblem = problemOf(error);
    }
  }

  /** Heat advice for the chosen spec: asked once per spec (it runs the model over a temperature scan). */
  async function loadAdvice(): Promise<void> {
    if (!specId || adviceFor === specId) return;
    adviceFor = specId;
    advice = null;
    adviceProblem = 'loading';
    render();
    try {
      advice = await ctx.api.post<HeatAdvice>(`/v1/heats/${id}/advice`, { specId });
      adviceProblem = null;
    } catch (error) {
      adviceProblem = problemOf(error);
    }
    render();
  }

  function approvedVersion(spec: Spec | undefined): SpecVersion | null {
    if (!spec) return null;
    return spec.versions.find((v) => v.status === 'APPROVED') ?? spec.versions[spec.versions.length - 1] ?? null;
  }

  function render(): void {
    if (!heat) return;
    const spec = specs.find((s) => s.id === specId);
    const version = approvedVersion(spec);
    replace(head, h('h1', null, `Heat ${heat.heatNumber}`), h('span', { class: 'muted' }, `${heat.material === 'STEEL' ? 'steel' : 'ductile iron'}${heat.grade ? `, ${heat.grade}` : ''} · revision ${heat.revision} · source ${heat.source}`));
    renderChemistry(spec, version);
    renderDiagram(version);
    renderBatches();
    renderRevisions();
  }

  function renderChemistry(spec: Spec | undefined, version: SpecVersion | null): void {
    const chooser = select(
      [{ value: '', label: 'No spec' }, ...specs.map((s) => ({ value: s.id, label: `${s.code} ${s.name}` }))],
      specId ?? '',
      (v) => {
        specId = v || null;
        const q = new URLSearchParams(route.query);
        if (specId) q.set('spec', specId); else q.delete('spec');
        history.replaceState(null, '', `#/heats/${id}${q.toString() ? `?${q}` : ''}`);
        void loadDiagram().then(() => {
          render();
          void loadAdvice();
        });
      },
    );
    chooser.id = 'heat-spec';
    const checks = checkChemistry(heat!.chemistryWtPct, version?.chemistryLimits ?? null);
    const conforms = chemistryConforms(checks);
    const siAl = (heat!.chemistryWtPct['Si'] ?? 0) + (heat!.chemistryWtPct['Al'] ?? 0);
    const minSiAl = version?.acceptanceCriteria.minSiPlusAlWtPct;
    const limited = checks.some((c) => c.status !== 'not-limited');
    replace(
      chemCard,
      h('h2', null, 'Chemistry (wt%) against the spec'),
      h('div', { class: 'field inline' }, h('label', { attrs: { for: 'heat-spec' } }, 'Spec'), chooser, version ? h('span', { class: 'muted small' }, ` v${version.version} ${version.status.toLowerCase()}`) : null),
      h('table', { class: 'compact chem' },
        h('thead', null, h('tr', null, ...['Element', 'Heat', 'Limits', 'Check'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
        h('tbody', null, ...checks.map((c) => chemRow(c)))),
      h('div', { class: `receipt ${!version ? 'none' : conforms ? 'ok' : 'bad'}`, attrs: { role: 'status' } },
        h('strong', null, 'Receipt check: '),
        !version ? 'choose a spec to check the chemistry against.' : !limited ? `${spec!.code} limits no element.` : conforms ? `chemistry inside every limit of ${spec!.code} v${version.version}.` : `chemistry NOT inside the limits of ${spec!.code} v${version.version}: ${checks.filter((c) => c.status === 'below' || c.status === 'above' || c.status === 'missing').map((c) => `${c.element} ${c.status}`).join(', ')}.`,
        minSiAl !== undefined ? h('div', null, `Si + Al = ${fmtWtPct(siAl, 2)} against the minimum of ${fmtWtPct(minSiAl, 2)} that keeps cementite out: `, h('strong', null, siAl >= minSiAl ? 'met' : 'NOT met')) : null,
        hardenabilityLine(),
      ),
    );
  }

  function hardenabilityLine(): HTMLElement {
    if (advice) {
      const hd = advice.receipt.hardenability;
      const word = { ok: 'enough', 'at-risk': 'at risk', insufficient: 'NOT enough' }[hd.verdict];
      return h('div', { class: hd.verdict === 'ok' ? '' : 'warn' }, `Hardenability for the section: ${word}. ${hd.message}`);
    }
    const why = adviceProblem === 'loading' ? 'asking the model…' : adviceProblem === 'missing' ? 'the heat advice is not available from the API yet' : adviceProblem ? `the heat advice failed: ${adviceProblem}` : 'choose a spec';
    return h('div', { class: 'muted small' }, `Hardenability against the section: not checked (${why}).`);
  }

  function adviceBlock(): HTMLElement | null {
    if (!advice) return null;
    const w = advice.window;
    const edge = (e: HeatAdvice['edges']['lower'], side: string) => (e ? h('li', null, `${side} edge ${fmtC(e.tempC, 0)}: ${e.messages.join('; ') || e.reasons.join(', ')}`) : null);
    return h('div', { class: 'advice' },
      h('h3', null, `Advised bath window (${Math.round(advice.confidence * 100)} % confidence, spec v${advice.specVersion})${w ? '' : ': none for this heat and section'}`),
      w ? h('p', null, `${fmtC(w.minTempC, 0)} to ${fmtC(w.maxTempC, 0)}, hold at least ${fmtNum(w.minHoldMin, 0)} min${w.maxHoldMin !== null ? ` and at most ${fmtNum(w.maxHoldMin, 0)} min` : ''}${advice.recommended ? `; recommended ${fmtC(advice.recommended.tempC, 0)} for ${fmtNum(advice.recommended.holdMin, 0)} min` : ''}.`)
        // The advice's own warning says this with the numbers (shown once below); the plain line only stands in
        // when there is none.
        : plainWarnings(diagram?.warnings, advice.warnings).length > 0 ? null : h('p', { class: 'warn' }, 'No bath temperature meets every criterion with that confidence for this heat and section.'),
      h('ul', { class: 'small' }, edge(advice.edges.lower, 'Lower'), edge(advice.edges.upper, 'Upper')),
    );
  }

  /** The diagram's and the advice's warnings, in plain words, each once (the diagram repeats the advice's). */
  function warningList(): HTMLElement | null {
    const warnings = plainWarnings(diagram?.warnings, advice?.warnings);
    return warnings.length > 0 ? h('ul', { class: 'warnings' }, ...warnings.map((x) => h('li', null, '⚠ ', x))) : null;
  }

  function chemRow(c: ElementCheck): HTMLElement {
    const word: Record<ElementCheck['status'], string> = { inside: 'inside', below: 'below min', above: 'above max', missing: 'not stated', 'not-limited': '' };
    return h('tr', { class: c.status, dataset: { element: c.element } },
      h('th', { attrs: { scope: 'row' } }, c.element),
      h('td', { class: 'num' }, c.wtPct !== null ? fmtNum(c.wtPct, 3) : '—'),
      h('td', null, c.minWtPct !== null || c.maxWtPct !== null ? fmtLimits(c.minWtPct, c.maxWtPct, 'wt%', 3) : ''),
      h('td', null, c.status === 'inside' ? '✓ inside' : c.status === 'not-limited' ? '' : `✗ ${word[c.status]}`));
  }

  function renderDiagram(version: SpecVersion | null): void {
    const isIron = heat!.material === 'DUCTILE_IRON';
    // The austenite's carbon: the diagram's (for iron the matrix carbon); the heat's bulk C for steel otherwise.
    const carbon = diagram?.meanCarbonWtPct ?? (isIron ? null : (heat!.chemistryWtPct['C'] ?? null));
    const datasets: Array<Record<string, unknown>> = [];
    const annotations: Record<string, AnnotationOptions> = {};
    const notes: string[] = [];

    const bs = diagram?.bsC ?? predictions[0]?.p.temperaturesC.bs ?? null;
    const ms = diagram?.msC ?? predictions[0]?.p.temperaturesC.ms ?? null;
    // Where austenite can take no carbon at all (T0 or T0′ clamped at 0 wt%, high up) there is no line to draw:
    // those rows would stack into a vertical stroke on the axis.
    const lineData = (pts: Array<{ x: number; y: number }>) => pts.filter((p) => p.x > 0).sort((a, b) => a.y - b.y);

    if (diagram) {
      datasets.push(
        { label: 'T0', data: lineData(diagram.t0.map((r) => ({ x: r.t0CarbonWtPct, y: r.tempC }))), borderColor: COLORS.t0, backgroundColor: COLORS.t0, showLine: true, pointRadius: 0, borderWidth: 2 },
        { label: 'T0′ (T0 with stored energy)', data: lineData(diagram.t0.map((r) => ({ x: r.t0PrimeCarbonWtPct, y: r.tempC }))), borderColor: COLORS.t0Prime, backgroundColor: COLORS.t0Prime, showLine: true, pointRadius: 0, borderWidth: 2, borderDash: [6, 4] },
        { label: 'Ae3', data: diagram.ae3.map((r) => ({ x: r.carbonWtPct, y: r.tempC })).sort((a, b) => a.x - b.x), borderColor: COLORS.ae3, backgroundColor: COLORS.ae3, showLine: true, pointRadius: 0, borderWidth: 2 },
      );
    } else {
      notes.push(
        diagramProblem === 'missing'
          ? 'The T0, T0′ and Ae3 curves of this heat are not available from the API yet (GET /v1/heats/:id/diagram). Shown: the values the model computed for loads of this heat, the heat\u2019s carbon and the spec\u2019s bath window.'
          : `The diagram curves could not be read (${diagramProblem ?? 'unknown problem'}).`,
      );
      const t0Points = predictions.filter((x) => x.p.t0.bathTempC !== null && x.p.t0.t0CarbonWtPct !== null).map((x) => ({ x: x.p.t0.t0CarbonWtPct!, y: x.p.t0.bathTempC!, code: x.code }));
      const t0pPoints = predictions.filter((x) => x.p.t0.bathTempC !== null && x.p.t0.t0PrimeCarbonWtPct !== null).map((x) => ({ x: x.p.t0.t0PrimeCarbonWtPct!, y: x.p.t0.bathTempC!, code: x.code }));
      if (t0Points.length > 0) datasets.push({ label: 'T0 at a load\u2019s bath temperature', data: t0Points, borderColor: '#0b0f12', borderWidth: 1.5, backgroundColor: COLORS.t0, pointRadius: 7, pointHoverRadius: 9, pointStyle: 'circle', showLine: false });
      if (t0pPoints.length > 0) datasets.push({ label: 'T0\u2032 at a load\u2019s bath temperature', data: t0pPoints, borderColor: '#0b0f12', borderWidth: 1.5, backgroundColor: COLORS.t0Prime, pointRadius: 8, pointHoverRadius: 10, pointStyle: 'triangle', showLine: false });
      const ae3 = predictions.find((x) => x.p.temperaturesC.ae3 !== null)?.p.temperaturesC.ae3 ?? null;
      if (ae3 !== null && carbon !== null) datasets.push({ label: 'Ae3 at the heat\u2019s carbon', data: [{ x: carbon, y: ae3 }], borderColor: '#0b0f12', borderWidth: 1.5, backgroundColor: COLORS.ae3, pointRadius: 8, pointStyle: 'rectRot', showLine: false });
      if (predictions.length === 0) notes.push('No load of this heat has a prediction yet.');
    }
    const level = (key: string, value: number | null, label: string, color: string) => {
      if (value === null) return;
      annotations[key] = { type: 'line', yMin: value, yMax: value, borderColor: color, borderWidth: 1.5, borderDash: [8, 4], label: { display: true, content: `${label} ${fmtC(value, 0)}`, position: 'end', yAdjust: -12, backgroundColor: 'rgba(16,20,24,0.85)', color } };
    };
    level('bs', bs, 'Bs', COLORS.bs);
    level('ms', ms, 'Ms', COLORS.ms);
    if (carbon !== null) {
      annotations['carbon'] = { type: 'line', xMin: carbon, xMax: carbon, borderColor: COLORS.text, borderWidth: 1.5, label: { display: true, content: `${isIron ? 'matrix' : 'heat'} C ${fmtNum(carbon, 2)} wt%`, position: 'start', backgroundColor: 'rgba(16,20,24,0.85)', color: COLORS.text } };
    } else if (isIron) {
      notes.push('For ductile iron the heat\u2019s total carbon (graphite included) is not the austenite carbon; the matrix carbon comes with the diagram.');
    }
    const advised = advice?.window ?? diagram?.advisedBath ?? null;
    const bath = advised ?? (version ? { minTempC: version.processWindow.bath.minTempC, maxTempC: version.processWindow.bath.maxTempC } : null);
    if (bath) {
      annotations['bath'] = {
        type: 'box', yMin: bath.minTempC, yMax: bath.maxTempC, backgroundColor: COLORS.band, borderColor: COLORS.bandEdge, borderWidth: 1,
        label: { display: true, content: `${advised ? 'advised' : 'spec'} bath window ${fmtNum(bath.minTempC, 0)}–${fmtNum(bath.maxTempC, 0)} °C`, position: { x: 'start', y: 'start' }, yAdjust: -16, color: COLORS.bandEdge, font: { size: 12 } },
        drawTime: 'beforeDatasetsDraw',
      };
    }
    const ys = [bs, ms, bath?.minTempC, bath?.maxTempC, ...datasets.flatMap((d) => (d['data'] as Array<{ y: number }>).map((p) => p.y))].filter((v): v is number => typeof v === 'number');
    const xs = [carbon && !isIron ? carbon : null, ...datasets.flatMap((d) => (d['data'] as Array<{ x: number }>).map((p) => p.x))].filter((v): v is number => typeof v === 'number');
    const xMax = Math.max(1.6, ...xs.map((x) => x * 1.1));
    // From a little below Ms (or the bath) to a little above Ae3 (or Bs): the range where the decisions are.
    const yMin = Math.max(0, Math.floor((Math.min(...ys, 250) - 60) / 100) * 100);
    const yMax = Math.ceil((Math.max(...ys, 600) + 60) / 100) * 100;

    replace(
      diagramCard,
      h('h2', null, 'Temperature (°C) against carbon (wt%)'),
      chartBox,
      notes.length > 0 ? h('ul', { class: 'muted small chart-note' }, ...notes.map((n) => h('li', null, n))) : null,
      adviceBlock(),
      warningList(),
      h('p', { class: 'muted small' }, 'Bainite stops when the austenite around it reaches the T0′ carbon at the bath temperature: the further T0′ lies right of the heat\u2019s carbon, the more bainite can form. Keep the bath between Ms and Bs with the spec\u2019s margins.'),
    );
    const config = {
      type: 'scatter' as const,
      data: { datasets: datasets as never },
      options: {
        animation: false as const,
        scales: {
          x: { type: 'linear' as const, min: 0, max: Math.ceil(xMax * 10) / 10, title: { display: true, text: 'Carbon in austenite (wt%)' } },
          y: { type: 'linear' as const, min: yMin, max: yMax, ticks: { stepSize: 50 }, title: { display: true, text: 'Temperature (°C)' } },
        },
        plugins: {
          legend: { position: 'top' as const, align: 'end' as const },
          tooltip: { callbacks: { label: (item: { dataset: { label?: string }; parsed: { x: number | null; y: number | null } }) => `${item.dataset.label ?? ''}: ${fmtNum(item.parsed.x, 3)} wt% at ${fmtNum(item.parsed.y, 0)} °C` } },
          annotation: { annotations },
        },
      },
    };
    if (chart) chart.destroy();
    chart = new Chart(canvas, config as never);
    // What the chart drew, for anyone checking it without reading pixels: the legend as chart.js laid it out,
    // the points of each line, and the levels and window marked.
    chartBox.dataset['legend'] = (chart.legend?.legendItems ?? []).map((i) => i.text).join(' | ');
    chartBox.dataset['points'] = JSON.stringify(Object.fromEntries(datasets.map((d) => [String(d['label']), (d['data'] as unknown[]).length])));
    chartBox.dataset['levels'] = JSON.stringify({ bsC: bs, msC: ms, carbonWtPct: carbon, bath: bath ? { ...bath, advised: advised !== null } : null });
    chartBox.dataset['drawnAt'] = String(Date.now());
    chartBox.dataset['source'] = diagram ? 'api-diagram' : 'predictions';
  }

  function renderBatches(): void {
    replace(
      batchesCard,
      h('h2', null, `Loads of this heat (${batches.length})`),
      batches.length === 0
        ? h('p', { class: 'muted' }, 'No loads yet.')
        : h('table', { class: 'compact' },
            h('thead', null, h('tr', null, ...['Load', 'Line', 'Spec', 'Status', `Created (${zone})`].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
            h('tbody', null, ...batches.map((b) => h('tr', null, h('td', null, link(`/batches/${b.id}`, b.code)), h('td', null, b.line.code), h('td', null, `${b.specVersion.spec.code} v${b.specVersion.version}`), h('td', null, fmtBatchStatus(b.status)), h('td', null, formatDateTime(b.createdAt, zone)))))),
    );
  }

  function renderRevisions(): void {
    const revs = heat!.revisions;
    replace(
      revCard,
      h('h2', null, 'Chemistry revisions'),
      revs.length === 0
        ? h('p', { class: 'muted' }, 'No revision history recorded.')
        : h('table', { class: 'compact' },
            h('thead', null, h('tr', null, ...['Rev.', `When (${zone})`, 'By', 'Reason', 'Chemistry (wt%)'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
            h('tbody', null, ...revs.map((r) => h('tr', null, h('td', null, String(r.revision)), h('td', { class: 'nowrap' }, formatDateTime(r.changedAt, zone)), h('td', null, r.changedBy), h('td', null, r.reason), h('td', { class: 'small' }, Object.entries(r.chemistryWtPct).map(([k, v]) => `${k} ${v}`).join(', ')))))),
      facts([['Current revision', String(heat!.revision)], ['Source', heat!.source]]),
    );
  }

  void load();
  return {
    el,
    title: 'Heat',
    dispose() {
      chart?.destroy();
    },
  };
};

