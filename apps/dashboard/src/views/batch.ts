import type { AcceptanceCriteria, BatchDetail, BatchSeries, ChannelSeries, DeviationWithAudit, LabResult, ProcessWindow, Spec, SpecVersion } from '../api/types.js';
import type { ChartDataset } from 'chart.js';
import type { XY } from '../lib/decimate.js';
import type { ViewFactory } from '../app/view.js';
import { setQuery } from '../app/router.js';
import { TimeChart, type Marker, type TimeSeries } from '../charts/time-chart.js';
import { COLORS } from '../charts/setup.js';
import { batchState, type BatchState } from '../lib/batch-state.js';
import { toColumns } from '../lib/decimate.js';
import { findExcursions, type Excursion } from '../lib/excursions.js';
import { fmtLabKind, labResultText } from '../lib/lab-text.js';
import { plainWarning, plainWarnings } from '../lib/warnings.js';
import { fmtBand, fmtBatchStatus, fmtC, fmtKg, fmtLimits, fmtMin, fmtMPa, fmtNum, fmtRule, fmtS, fmtSection, fmtVolPct } from '../lib/format.js';
import { criterionName, type PredictionView } from '../lib/prediction.js';
import { formatClock, formatDateTime, formatDuration } from '../lib/time.js';
import { deviationPanel } from '../ui/deviation-panel.js';
import { h, link, replace } from '../ui/dom.js';
import { bathSafetyNotes, infoBox, releaseCaution, showError } from '../ui/notice.js';
import { rangeBar } from '../ui/range-bar.js';
import { card, facts, isOpenDeviation, loading, severityChip, statusChip, verdictBadge, worstSeverity } from '../ui/widgets.js';

/**
 * One load: what the furnace and bath did against the spec, what the model predicts (bainite against
 * its ceiling, the final phase mix, property bands) against the acceptance criteria and the lab, and
 * the load's deviations with the actions the signed-in person may take. Updates live.
 */

const FULL_RESOLUTION_POINTS = 200_000;

export const batchView: ViewFactory = (ctx, route) => {
  const id = route.parts[1]!;
  const full = route.query.get('resolution') === 'full';
  const zone = ctx.plantZone;

  const errors = h('div');
  const head = h('div', { class: 'page-head' }, h('h1', null, 'Load'), loading());
  const summary = h('div', { class: 'batch-summary' });
  const tempCard = h('section', { class: 'card charts' });
  const bainiteCard = h('section', { class: 'card charts' });
  const furnaceCard = h('section', { class: 'card charts' });
  const verdictCard = h('section', { class: 'card' });
  const phaseCard = h('section', { class: 'card' });
  const propsCard = h('section', { class: 'card' });
  const labCard = h('section', { class: 'card' });
  const devCard = h('section', { class: 'card deviations-card' });
  const el = h(
    'section',
    { class: 'batch', dataset: { batchId: id } },
    head,
    errors,
    summary,
    h('div', { class: 'batch-grid' }, h('div', { class: 'col-main' }, tempCard, bainiteCard, furnaceCard), h('div', { class: 'col-side' }, verdictCard, phaseCard, propsCard, labCard)),
    devCard,
    bathSafetyNotes(),
  );

  const bathChart = new TimeChart('bath', 'Bath temperature against time in bath, with the spec band and excursions');
  const bainiteChart = new TimeChart('bainite', 'Predicted bainite fraction against time in bath, with ceiling and safe end of hold');
  const furnaceChart = new TimeChart('furnace', 'Furnace temperature against time since charging, with the austenitize band');

  let detail: BatchDetail | null = null;
  let series: BatchSeries | null = null;
  let specs: Spec[] = [];
  let disposed = false;
  const flashes = new Map<string, string>();
  const openDeviation = new Set<string>(route.query.get('deviation') ? [route.query.get('deviation')!] : []);

  async function load(withSeries = true): Promise<void> {
    try {
      const started = performance.now();
      const [d, s, sp] = await Promise.all([
        ctx.api.get<BatchDetail>(`/v1/batches/${id}`),
        withSeries || !series
          ? ctx.api.get<BatchSeries>(`/v1/batches/${id}/series`, { query: { maxPoints: full ? FULL_RESOLUTION_POINTS : Math.max(800, Math.round(window.innerWidth * 2)) } })
          : Promise.resolve(series),
        ctx.specs(),
      ]);
      el.dataset['fetchMs'] = (performance.now() - started).toFixed(1);
      if (disposed) return;
      detail = d;
      series = s;
      specs = sp;
      replace(errors);
      render();
    } catch (error) {
      showError(errors, error, 'Loading the load');
      if (!detail) replace(head, h('h1', null, 'Load'));
    }
  }

  function version(): SpecVersion | null {
    for (const s of specs) for (const v of s.versions) if (v.id === detail?.specVersionId) return v;
    return null;
  }

  function render(): void {
    if (!detail) return;
    const d = detail;
    const v = version();
    const w = v?.processWindow ?? null;
    const criteria = v?.acceptanceCriteria ?? {};
    const now = Date.now();
    const s = batchState(d, w, now);

    // The badge is the model's verdict on the acceptance criteria; the process record (bath band, hold,
    // sensors) speaks through deviations. Show both side by side, so "conforming" is never read alone.
    const openDevs = d.deviations.filter(isOpenDeviation);
    replace(
      head,
      h('h1', null, `Load ${d.code}`),
      h('span', { class: 'step' }, fmtBatchStatus(d.status)),
      h('span', { class: 'muted small' }, 'Prediction'),
      verdictBadge(s.verdict),
      openDevs.length > 0
        ? h('button', { class: `dev-count ${worstSeverity(openDevs)}`, attrs: { type: 'button', title: 'Go to the deviations of this load' }, dataset: { openDeviations: String(openDevs.length) }, on: { click: () => devCard.scrollIntoView({ behavior: 'smooth' }) } },
            `${openDevs.length} open deviation${openDevs.length === 1 ? '' : 's'}`)
        : h('span', { class: 'dev-count none', dataset: { openDeviations: '0' } }, 'No open deviations'),
      h('span', { class: 'muted small', attrs: { 'aria-live': 'polite' } }, `Read at ${formatClock(now, zone, true)} · times in ${zone}`),
      link(`/batches/${d.id}/certificate`, 'Certificate record'),
      link(`/drift?specId=${d.spec.id}&lineId=${d.line.id}`, 'Drift of this product'),
    );
    renderSummary(d, s, w);
    renderTemperatures(d, s, w);
    renderBainite(d, s, criteria);
    renderFurnace(d, w);
    renderVerdicts(s);
    renderPhases(s.prediction, criteria);
    renderProperties(s.prediction, criteria, d.labResults);
    renderLab(d.labResults, s.prediction, criteria);
    renderDeviations(d);
    el.dataset['rendered'] = String(Date.now());
  }

  function renderSummary(d: BatchDetail, s: BatchState, w: ProcessWindow | null): void {
    const ev = (kind: string) => d.events.find((e) => e.kind === kind);
    const t = (kind: string) => (ev(kind) ? Date.parse(ev(kind)!.at) : null);
    const charged = t('CHARGED');
    const outF = t('OUT_OF_FURNACE');
    const inB = t('INTO_BATH');
    const outB = t('OUT_OF_BATH');
    const transferS = outF !== null && inB !== null ? (inB - outF) / 1000 : null;
    const step = (label: string, at: number | null, extra: Array<Node | string> = []) =>
      h('li', { class: at !== null ? 'done' : 'todo' }, h('span', { class: 'tl-label' }, label), h('span', { class: 'tl-time' }, at !== null ? formatDateTime(at, zone, true) : 'not yet'), ...extra);
    replace(
      summary,
      facts([
        ['Line', `${d.line.code} ${d.line.name}`],
        ['Heat', link(`/heats/${d.heat.id}`, d.heat.heatNumber)],
        ['Material', `${d.heat.material === 'STEEL' ? 'steel' : 'ductile iron'}${d.heat.grade ? `, ${d.heat.grade}` : ''}`],
        ['Product spec', `${d.spec.code} v${d.spec.version} (${d.spec.name})`],
        ['Load', `${d.partCount} parts, ${fmtKg(d.weightKg)}`],
        ['Section', fmtSection(d.sectionShape, d.sectionSizeMm)],
        ['Scheduled hold', d.scheduledHoldMin !== null ? fmtMin(d.scheduledHoldMin) : 'not set'],
        ['Spec bath window', w ? `${fmtLimits(w.bath.minTempC, w.bath.maxTempC, '°C')}, hold ${fmtLimits(w.bath.minHoldMin, w.bath.maxHoldMin, 'min')}` : 'spec version not readable'],
      ]),
      h(
        'ol',
        { class: 'timeline', attrs: { 'aria-label': 'Load events' } },
        step('Charged', charged),
        step('Out of furnace', outF, charged !== null && outF !== null ? [h('span', { class: 'muted' }, ` austenitized ${formatDuration(outF - charged)}${w ? ` (min ${fmtMin(w.austenitize.minMinutes)})` : ''}`)] : []),
        step('Into bath', inB, transferS !== null ? [h('span', { class: w && transferS > w.maxTransferS ? 'warn' : 'muted' }, ` transfer ${fmtS(transferS, 1)}${w ? ` (max ${fmtS(w.maxTransferS)})` : ''}`)] : []),
        step('Out of bath', outB, s.holdMs !== null ? [h('span', { class: 'muted' }, ` hold ${formatDuration(s.holdMs)}${outB === null ? ' so far' : ''}`)] : []),
      ),
      s.stale.length > 0 ? h('ul', { class: 'stale-notes' }, ...s.stale.map((n) => h('li', null, '⚠ ', n.text, n.sinceMs ? ` (since ${formatClock(n.sinceMs, zone)})` : ''))) : null,
    );
  }

  function channelSeries(kind: 'BATH' | 'FURNACE'): ChannelSeries[] {
    return (series?.channels ?? []).filter((c) => c.equipmentKind === kind && c.quantity === 'TEMPERATURE_C');
  }

  function toSeries(channels: ChannelSeries[], colors: readonly string[], w: ProcessWindow | null): TimeSeries[] {
    return channels.map((c, i) => {
      const { xs, ys } = toColumns(c.points);
      const gapMs = Math.max((w?.maxChannelGapS ?? 60) * 1000, (c.bucketMs ?? 0) * 2.5);
      return { label: `${c.equipmentCode} ${c.channelCode}`, color: colors[i % colors.length]!, xs, ys, gapMs };
    });
  }

  function renderTemperatures(d: BatchDetail, s: BatchState, w: ProcessWindow | null): void {
    const channels = channelSeries('BATH');
    const title = h('h2', null, 'Bath temperature (°C) against time in bath (min)');
    const toggle = h('label', { class: 'toggle small' },
      h('input', { attrs: { type: 'checkbox' }, props: { checked: full }, on: { change: (e) => {
        const q = new URLSearchParams(route.query);
        if ((e.target as HTMLInputElement).checked) q.set('resolution', 'full'); else q.delete('resolution');
        location.hash = `#/batches/${id}${q.toString() ? `?${q}` : ''}`;
      } } }),
      ' every sample (slower on long loads)');
    if (s.intoBathMs === null) {
      replace(tempCard, title, infoBox('The load has not entered the bath yet.'));
      return;
    }
    const origin = s.intoBathMs;
    const end = s.outOfBathMs ?? Date.now();
    const excursions: Excursion[] = [];
    const ts = toSeries(channels, COLORS.bath, w);
    if (w) {
      for (const c of ts) {
        const from = lowerIndex(c.xs, origin);
        const to = lowerIndex(c.xs, end + 1);
        excursions.push(...findExcursions(c.xs.subarray(from, to), c.ys.subarray(from, to), w.bath.minTempC, w.bath.maxTempC, c.gapMs));
      }
    }
    const markers: Marker[] = [];
    if (w) markers.push({ atMs: origin + w.bath.minHoldMin * 60_000, label: `min hold ${w.bath.minHoldMin} min`, color: COLORS.muted, dash: [2, 4] });
    if (s.scheduledEndMs !== null) markers.push({ atMs: s.scheduledEndMs, label: 'scheduled end', color: COLORS.scheduled });
    if (s.earliestSafeEndMs !== null) markers.push({ atMs: s.earliestSafeEndMs, label: 'earliest safe end', color: COLORS.safeEnd });
    if (s.outOfBathMs !== null) markers.push({ atMs: s.outOfBathMs, label: 'out of bath', color: COLORS.now, dash: [] });
    else markers.push({ atMs: Date.now(), label: 'now', color: COLORS.now, dash: [] });
    const xMax = Math.max(end, ...markers.map((m) => m.atMs)) ;
    const samples = channels.reduce((n, c) => n + c.count, 0);
    const thinned = channels.some((c) => c.decimated);
    replace(
      tempCard,
      h('div', { class: 'card-head' }, title, toggle),
      channels.length === 0 ? infoBox('This line has no bath temperature channel.') : bathChart.el,
      h('p', { class: 'muted small chart-note' },
        `${samples.toLocaleString('en')} samples`,
        thinned ? ' (thinned on the server to the lowest and highest reading per time slice; every excursion is kept)' : '',
        excursions.length > 0 ? ` · ${excursions.length} stretch${excursions.length === 1 ? '' : 'es'} outside the band shaded red (whether one breaks the spec depends on its length: see deviations)` : w ? ' · no reading outside the band' : '',
      ),
    );
    if (channels.length === 0) return;
    const firstMs = Math.min(...channels.map((c) => c.points[0]?.[0] ?? origin));
    const xRange = { min: Math.max(-5, Math.min(0, Math.floor((firstMs - origin) / 60_000))), max: Math.ceil(((xMax - origin) / 60_000) * 1.02 + 0.5) };
    bathChart.draw({
      series: ts,
      originMs: origin,
      xTitle: 'Time in bath (min)',
      yTitle: 'Temperature (°C)',
      unit: '°C',
      band: w ? { min: w.bath.minTempC, max: w.bath.maxTempC, label: `spec ${w.bath.minTempC}–${w.bath.maxTempC} °C` } : null,
      excursions,
      markers,
      zone,
      xRange,
    });
  }

  function renderBainite(d: BatchDetail, s: BatchState, criteria: AcceptanceCriteria): void {
    const title = h('h2', null, `${d.heat.material === 'DUCTILE_IRON' ? 'Ausferrite' : 'Bainite'} (vol%) against time in bath (min)`);
    const p = s.prediction;
    if (s.intoBathMs === null) {
      replace(bainiteCard, title, infoBox('The load has not entered the bath yet.'));
      return;
    }
    if (!p || p.bainite.curve.length === 0) {
      replace(bainiteCard, title, infoBox(p ? 'The prediction has no transformation curve.' : 'No prediction yet: the model has not computed this load. The curve appears here as soon as it has.'));
      return;
    }
    const origin = s.intoBathMs;
    // Logged part solid; beyond loggedUntilS the curve is projected at the logged temperature (dashed).
    const splitS = p.bainite.loggedUntilS ?? Number.POSITIVE_INFINITY;
    const toMsPct = ([tS, f]: [number, number]) => [origin + tS * 1000, f * 100] as [number, number];
    const logged = toColumns(p.bainite.curve.filter(([tS]) => tS <= splitS).map(toMsPct));
    const projectedPts = p.bainite.curve.filter(([tS], i, all) => tS >= splitS || (i + 1 < all.length && all[i + 1]![0] > splitS && tS <= splitS));
    const projected = toColumns(projectedPts.map(toMsPct));
    const extra: ChartDataset<'line', XY[]>[] = [];
    if (p.bainite.band.length > 0) {
      const lo = p.bainite.band.map(([tS, p05]) => ({ x: tS / 60, y: p05 * 100 }));
      const hi = p.bainite.band.map(([tS, , p95]) => ({ x: tS / 60, y: p95 * 100 }));
      extra.push(
        { label: '', data: lo, borderColor: 'transparent', pointRadius: 0, parsing: false, fill: false } as never,
        { label: 'p05–p95 band', data: hi, borderColor: 'transparent', backgroundColor: COLORS.bainiteBand, pointRadius: 0, parsing: false, fill: '-1' } as never,
      );
    }
    const markers: Marker[] = [];
    if (s.scheduledEndMs !== null) markers.push({ atMs: s.scheduledEndMs, label: 'scheduled end', color: COLORS.scheduled });
    if (s.earliestSafeEndMs !== null) markers.push({ atMs: s.earliestSafeEndMs, label: 'earliest safe end', color: COLORS.safeEnd });
    markers.push(s.outOfBathMs !== null ? { atMs: s.outOfBathMs, label: 'out of bath', color: COLORS.now, dash: [] } : { atMs: Date.now(), label: 'now', color: COLORS.now, dash: [] });
    const annotations: Record<string, never> = {};
    if (p.bainite.ceilingFraction !== null) {
      annotations['ceiling'] = { type: 'line', yMin: p.bainite.ceilingFraction * 100, yMax: p.bainite.ceilingFraction * 100, borderColor: COLORS.ceiling, borderWidth: 2, label: { display: true, content: `T0′ ceiling ${fmtVolPct(p.bainite.ceilingFraction, 0)}`, position: 'start', backgroundColor: 'rgba(16,20,24,0.85)', color: COLORS.ceiling } } as never;
    }
    if (criteria.minBainiteFraction !== undefined) {
      annotations['specMin'] = { type: 'line', yMin: criteria.minBainiteFraction * 100, yMax: criteria.minBainiteFraction * 100, borderColor: COLORS.spec, borderWidth: 1.5, borderDash: [6, 4], label: { display: true, content: `spec min ${fmtVolPct(criteria.minBainiteFraction, 0)}`, position: 'end', backgroundColor: 'rgba(16,20,24,0.85)', color: COLORS.spec } } as never;
    }
    const lastT = p.bainite.curve[p.bainite.curve.length - 1]![0];
    const xMax = Math.max(lastT / 60, ...markers.map((m) => (m.atMs - origin) / 60_000));
    replace(
      bainiteCard,
      title,
      bainiteChart.el,
      h('p', { class: 'muted small chart-note' },
        `Now ${fmtVolPct(s.bainiteNow)} · ceiling ${fmtVolPct(p.bainite.ceilingFraction)} · at end ${fmtVolPct(p.bainite.fractionAtEnd)} · 95 % of ceiling after ${p.bainite.timeTo95PctS !== null ? fmtMin(p.bainite.timeTo95PctS / 60, 1) : 'never at this temperature'}`,
        p.bainite.band.length === 0 ? ' · the prediction gives no band for the curve' : ''),
    );
    bainiteChart.draw({
      series: [
        { label: 'predicted from the log', color: COLORS.bainite, xs: logged.xs, ys: logged.ys, gapMs: Number.POSITIVE_INFINITY },
        ...(projected.xs.length > 1 ? [{ label: 'projected to the end of hold', color: COLORS.bainite, xs: projected.xs, ys: projected.ys, gapMs: Number.POSITIVE_INFINITY, dash: [6, 4] }] : []),
      ],
      originMs: origin,
      xTitle: 'Time in bath (min)',
      yTitle: 'Volume fraction (vol%)',
      unit: 'vol%',
      band: null,
      excursions: [],
      markers,
      zone,
      yRange: { min: 0, max: 100 },
      xRange: { min: 0, max: Math.ceil(xMax * 1.05 + 0.5) },
      extraAnnotations: annotations,
      extraDatasets: extra,
    });
  }

  function renderFurnace(d: BatchDetail, w: ProcessWindow | null): void {
    const channels = channelSeries('FURNACE');
    const charged = d.events.find((e) => e.kind === 'CHARGED');
    const title = h('h2', null, 'Furnace temperature (°C) against time since charging (min)');
    if (!charged) {
      replace(furnaceCard, title, infoBox('The load has not been charged yet.'));
      return;
    }
    if (channels.length === 0) {
      replace(furnaceCard, title, infoBox('This line has no furnace temperature channel.'));
      return;
    }
    const origin = Date.parse(charged.at);
    const outF = d.events.find((e) => e.kind === 'OUT_OF_FURNACE');
    const end = outF ? Date.parse(outF.at) : Date.now();
    const ts = toSeries(channels, COLORS.furnace, w);
    const excursions: Excursion[] = [];
    if (w) {
      for (const c of ts) {
        const from = lowerIndex(c.xs, origin);
        const to = lowerIndex(c.xs, end + 1);
        excursions.push(...findExcursions(c.xs.subarray(from, to), c.ys.subarray(from, to), w.austenitize.minTempC, w.austenitize.maxTempC, c.gapMs));
      }
    }
    replace(furnaceCard, title, furnaceChart.el, h('p', { class: 'muted small chart-note' }, 'Heat-up below the band is expected; the soak counts from when every zone is inside it.'));
    furnaceChart.draw({
      series: ts,
      originMs: origin,
      xTitle: 'Time since charging (min)',
      yTitle: 'Temperature (°C)',
      unit: '°C',
      band: w ? { min: w.austenitize.minTempC, max: w.austenitize.maxTempC, label: `austenitize ${w.austenitize.minTempC}–${w.austenitize.maxTempC} °C` } : null,
      excursions: excursions.filter((e) => e.side === 'above'),
      markers: outF ? [{ atMs: end, label: 'out of furnace', color: COLORS.now, dash: [] }] : [{ atMs: end, label: 'now', color: COLORS.now, dash: [] }],
      zone,
      xRange: { min: 0, max: Math.ceil(((end - origin) / 60_000) * 1.03 + 0.5) },
    });
  }

  function renderVerdicts(s: BatchState): void {
    const p = s.prediction;
    const title = h('h2', null, 'Verdict and hold');
    if (!p) {
      replace(verdictCard, title, h('p', { class: 'no-prediction' }, verdictBadge(null), ' The model has not computed this load yet, so there is no verdict and no safe end of hold. Judge the load on the process record and the lab.'), releaseCaution('prediction'));
      return;
    }
    const warnings = plainWarnings(p.warnings);
    replace(
      verdictCard,
      title,
      h('div', { class: 'verdict-head' }, verdictBadge(s.verdict, 'No criteria judged'), h('span', { class: 'muted small' }, ` model ${p.modelVersion ?? '?'}, computed ${formatClock(p.createdAtMs, zone, true)}${p.watermarkMs ? `, data to ${formatClock(p.watermarkMs, zone, true)}` : ''}`)),
      p.verdicts.length === 0
        ? h('p', { class: 'muted' }, 'The prediction carries no verdicts per criterion.')
        : h('ul', { class: 'verdicts' }, ...sortVerdicts(p.verdicts).map((v) =>
            // One line each with the numbers; the model's sentence and what drove it open on demand.
            h('li', { dataset: { criterion: v.criterion, verdict: v.verdict } },
              h('details', null,
                h('summary', null, verdictBadge(v.verdict), ' ', h('strong', null, criterionName(v.criterion)),
                  v.band ? h('span', { class: 'muted' }, ` · p05–p95 ${verdictValue(v.band.p05, v.unit, false)}–${verdictValue(v.band.p95, v.unit)}`) : null,
                  v.limitMin !== null || v.limitMax !== null
                    ? h('span', { class: 'muted' }, ` · spec ${v.limitMin !== null ? verdictValue(v.limitMin, v.unit, false) : '…'}–${v.limitMax !== null ? verdictValue(v.limitMax, v.unit) : '…'}`)
                    : v.limit !== null ? h('span', { class: 'muted' }, ` · limit ${verdictValue(v.limit, v.unit)}`) : null),
                v.message ? h('p', { class: 'small' }, v.message) : null,
                v.drivers.length > 0 ? h('p', { class: 'small muted' }, `Why: ${v.drivers.join('; ')}`) : null)))),
      facts([
        ['Earliest safe end', s.earliestSafeEndMs !== null ? `${formatClock(s.earliestSafeEndMs, zone)}${s.intoBathMs !== null ? ` (${fmtMin((s.earliestSafeEndMs - s.intoBathMs) / 60_000)} in bath)` : ''}` : `none${p.hold.reason ? `. ${plainWarning(p.hold.reason)}` : ''}`],
        ['Set by', p.hold.limiting.length > 0 ? p.hold.limiting.map(criterionName).join(', ') : '—'],
        ['Scheduled end', s.scheduledEndMs !== null ? formatClock(s.scheduledEndMs, zone) : 'not set'],
        ['Bath vs nominal', p.hold.bathOffsetC !== null ? `${p.hold.bathOffsetC >= 0 ? '+' : ''}${fmtNum(p.hold.bathOffsetC, 1)} °C (logged ${fmtC(p.hold.holdBathTempC)}, nominal ${fmtC(p.hold.nominalBathC)})` : '—'],
        ['Hold change for that', p.hold.extraHoldMin !== null ? `${p.hold.extraHoldMin >= 0 ? '+' : ''}${fmtMin(p.hold.extraHoldMin, 1)}` : '—'],
        ['Ms / Bs', `${fmtC(p.temperaturesC.ms, 0)} / ${fmtC(p.temperaturesC.bs, 0)}`],
      ]),
      s.scheduledTooEarly ? h('p', { class: 'notice error' }, 'The scheduled end of hold is before the earliest safe end: the load would leave the bath before it has transformed enough.') : null,
      warnings.length > 0
        ? h('details', { class: 'warnings-box' }, h('summary', null, `⚠ ${warnings.length} model warning${warnings.length === 1 ? '' : 's'} (assumptions and limits of this prediction)`),
            h('ul', { class: 'warnings' }, ...warnings.map((w) => h('li', null, w))))
        : null,
      releaseCaution('hold'),
      releaseCaution('prediction'),
    );
  }

  function renderPhases(p: PredictionView | null, c: AcceptanceCriteria): void {
    const title = h('h2', null, 'Final phase mix (vol%)');
    if (!p) {
      replace(phaseCard, title, h('p', { class: 'muted' }, 'No prediction yet.'));
      return;
    }
    const f = p.final;
    const parts: Array<{ key: string; label: string; value: number | null; limit: string }> = [
      { key: 'bf', label: 'Bainitic ferrite', value: f.bainiticFerrite, limit: c.minBainiteFraction !== undefined ? `≥ ${fmtVolPct(c.minBainiteFraction, 0)}` : '' },
      { key: 'film', label: 'Film austenite', value: f.filmAustenite, limit: '' },
      { key: 'blocky', label: 'Blocky austenite', value: f.blockyAustenite, limit: c.maxBlockyAusteniteFraction !== undefined ? `≤ ${fmtVolPct(c.maxBlockyAusteniteFraction, 0)}` : '' },
      { key: 'mart', label: 'Fresh martensite', value: f.freshMartensite, limit: c.maxFreshMartensiteFraction !== undefined ? `≤ ${fmtVolPct(c.maxFreshMartensiteFraction, 0)}` : '' },
      { key: 'upper', label: 'Upper products', value: f.upperProducts, limit: '' },
    ];
    const bar = h('div', { class: 'phase-bar', attrs: { role: 'img', 'aria-label': parts.map((x) => `${x.label} ${fmtVolPct(x.value)}`).join(', ') } });
    for (const x of parts) {
      if (x.value === null || x.value <= 0) continue;
      const seg = h('div', { class: `phase ${x.key}`, attrs: { title: `${x.label} ${fmtVolPct(x.value)}` } });
      seg.style.width = `${(x.value * 100).toFixed(2)}%`;
      bar.append(seg);
    }
    const ratio = f.filmAustenite !== null && f.blockyAustenite !== null && f.blockyAustenite > 0 ? f.filmAustenite / f.blockyAustenite : null;
    replace(
      phaseCard,
      title,
      bar,
      h('table', { class: 'compact' },
        h('thead', null, h('tr', null, h('th', { attrs: { scope: 'col' } }, 'Phase'), h('th', { attrs: { scope: 'col' }, class: 'num' }, 'Predicted'), h('th', { attrs: { scope: 'col' } }, 'Spec'))),
        h('tbody', null, ...parts.map((x) => h('tr', null, h('th', { attrs: { scope: 'row' } }, h('span', { class: `swatch ${x.key}`, attrs: { 'aria-hidden': 'true' } }), x.label), h('td', { class: 'num' }, fmtVolPct(x.value)), h('td', null, x.limit))),
          h('tr', null, h('th', { attrs: { scope: 'row' } }, 'Film-to-block ratio'), h('td', { class: 'num' }, ratio !== null ? fmtNum(ratio, 2) : '—'), h('td', null, c.minFilmToBlockRatio !== undefined ? `≥ ${fmtNum(c.minFilmToBlockRatio, 2)}` : '')),
          h('tr', null, h('th', { attrs: { scope: 'row' } }, 'Austenite carbon'), h('td', { class: 'num' }, f.austeniteCarbonWtPct !== null ? `${fmtNum(f.austeniteCarbonWtPct, 2)} wt%` : '—'), h('td', null, '')),
          h('tr', null, h('th', { attrs: { scope: 'row' } }, 'Residual austenite Ms'), h('td', { class: 'num' }, fmtC(f.residualAusteniteMsC, 0)), h('td', null, 'below ambient')),
        ),
      ),
    );
  }

  function renderProperties(p: PredictionView | null, c: AcceptanceCriteria, lab: LabResult[]): void {
    const title = h('h2', null, 'Properties against the spec');
    const hardnessLab = lab.filter((r) => r.kind === 'HARDNESS');
    const readingsIn = (scale: string) => hardnessLab.filter((r) => r.scale === scale).flatMap((r) => (Array.isArray(r.values['readings']) ? (r.values['readings'] as number[]) : []));
    const tensileLab = lab.filter((r) => r.kind === 'TENSILE').map((r) => Number(r.values['rmMPa'])).filter(Number.isFinite);
    const raLab = lab.filter((r) => r.kind === 'RETAINED_AUSTENITE').map((r) => Number(r.values['volumePct'])).filter(Number.isFinite);
    const rows: HTMLElement[] = [];
    const specHV = c.hardness?.scale === 'HV' ? c.hardness : null;
    rows.push(rangeBar({ label: 'Hardness (HV)', unit: 'HV', spec: specHV ? { min: specHV.min, max: specHV.max } : null, band: p?.properties.hardnessHV ?? null, measured: readingsIn('HV'), measuredLabel: 'lab reading' }));
    if (c.hardness && c.hardness.scale !== 'HV') {
      rows.push(rangeBar({ label: `Hardness (${c.hardness.scale})`, unit: c.hardness.scale, spec: { min: c.hardness.min, max: c.hardness.max }, measured: readingsIn(c.hardness.scale), measuredLabel: 'lab reading' }));
    }
    if (c.tensile || p?.properties.tensileMPa || tensileLab.length > 0) rows.push(rangeBar({ label: 'Tensile Rm (MPa)', unit: 'MPa', spec: c.tensile ? { min: c.tensile.minTensileMPa ?? null, max: c.tensile.maxTensileMPa ?? null } : null, band: p?.properties.tensileMPa ?? null, measured: tensileLab, measuredLabel: 'lab Rm' }));
    const raPredicted = p && p.final.filmAustenite !== null && p.final.blockyAustenite !== null ? (p.final.filmAustenite + p.final.blockyAustenite) * 100 : null;
    if (raPredicted !== null || raLab.length > 0 || c.maxRetainedAusteniteFraction !== undefined) {
      rows.push(rangeBar({ label: 'Retained austenite (vol%)', unit: 'vol%', digits: 1, spec: c.maxRetainedAusteniteFraction !== undefined ? { max: c.maxRetainedAusteniteFraction * 100 } : null, predicted: raPredicted, measured: raLab, measuredLabel: 'XRD' }));
    }
    replace(
      propsCard,
      title,
      h('p', { class: 'legend small' }, h('span', { class: 'lg spec' }), 'spec zone ', h('span', { class: 'lg band' }), 'predicted p05–p95 ', h('span', { class: 'lg median' }), 'median ', h('span', { class: 'lg point' }), 'predicted, single value ', h('span', { class: 'lg measured' }), 'lab'),
      ...rows,
      p ? h('p', { class: 'muted small' }, `Predicted: hardness ${fmtBand(p.properties.hardnessHV, 'HV')}, Rm ${fmtBand(p.properties.tensileMPa, 'MPa')}${p.properties.adiGrade ? `, ADI grade ${p.properties.adiGrade}` : ''}.`) : h('p', { class: 'muted small' }, 'No prediction yet: only the spec and lab values are shown.'),
      c.hardness && c.hardness.scale !== 'HV' ? h('p', { class: 'muted small' }, `The spec states hardness in ${c.hardness.scale}; the model predicts HV. The verdict compares them through a conversion; the bars do not.`) : null,
    );
  }

  function renderLab(lab: LabResult[], p: PredictionView | null, c: AcceptanceCriteria): void {
    const title = h('h2', null, 'Lab results');
    if (lab.length === 0) {
      replace(labCard, title, h('p', { class: 'muted' }, 'No lab results yet.'));
      return;
    }
    const inBand = (v: number, band: { p05: number; p95: number } | null | undefined): string => (!band ? '' : v < band.p05 ? 'below the predicted band' : v > band.p95 ? 'above the predicted band' : 'inside the predicted band');
    replace(
      labCard,
      title,
      h('table', { class: 'compact' },
        h('thead', null, h('tr', null, ...['Test', 'Result', 'Against prediction / spec', 'Standard', 'Ref'].map((x) => h('th', { attrs: { scope: 'col' } }, x)))),
        h('tbody', null, ...lab.map((r) => {
          const result = labResultText(r.kind, r.scale, r.values);
          let against = '';
          if (r.kind === 'HARDNESS') {
            const mean = Number(r.values['mean']);
            against = r.scale === 'HV' ? inBand(mean, p?.properties.hardnessHV) : '';
            if (c.hardness && c.hardness.scale === r.scale) against += `${against ? '; ' : ''}${mean < c.hardness.min || mean > c.hardness.max ? 'outside' : 'inside'} spec ${c.hardness.min}–${c.hardness.max} ${c.hardness.scale}`;
          } else if (r.kind === 'TENSILE') {
            against = inBand(Number(r.values['rmMPa']), p?.properties.tensileMPa);
          } else if (r.kind === 'IMPACT') {
            if (c.minImpactJ !== undefined) against = Number(r.values['meanJ']) >= c.minImpactJ ? `meets ≥ ${c.minImpactJ} J` : `below ${c.minImpactJ} J`;
          }
          return h('tr', null, h('td', null, fmtLabKind(r.kind)), h('td', null, result), h('td', null, against || '—'), h('td', { class: 'ref' }, r.testStandard ?? ''), h('td', { class: 'ref' }, r.externalRef));
        })),
      ),
      p ? null : h('p', { class: 'muted small' }, 'No prediction yet, so results are compared with the spec only.'),
    );
  }

  function renderDeviations(d: BatchDetail): void {
    const title = h('h2', null, `Deviations of this load (${d.deviations.length})`);
    if (d.deviations.length === 0) {
      replace(devCard, title, h('p', { class: 'muted' }, 'None raised.'));
      return;
    }
    const list = h('ul', { class: 'dev-rows' });
    for (const dv of d.deviations) {
      const slot = h('div', { class: 'dev-slot' });
      const toggle = h('button', { class: 'btn plain small', attrs: { type: 'button', 'aria-expanded': openDeviation.has(dv.id) ? 'true' : 'false' }, on: { click: () => {
        if (openDeviation.has(dv.id)) openDeviation.delete(dv.id); else openDeviation.add(dv.id);
        toggle.setAttribute('aria-expanded', openDeviation.has(dv.id) ? 'true' : 'false');
        toggle.textContent = openDeviation.has(dv.id) ? 'Hide' : 'Review';
        void fillSlot(dv.id, slot);
      } } }, openDeviation.has(dv.id) ? 'Hide' : 'Review');
      list.append(h('li', { dataset: { deviationId: dv.id } },
        h('div', { class: 'dev-row' }, severityChip(dv.severity), statusChip(dv.status), h('strong', null, fmtRule(dv.rule)), h('span', { class: 'dev-msg' }, dv.message), h('span', { class: 'muted small nowrap' }, formatDateTime(dv.openedAt, zone)), toggle),
        slot));
      if (openDeviation.has(dv.id)) void fillSlot(dv.id, slot);
    }
    replace(devCard, title, list);
  }

  async function fillSlot(deviationId: string, slot: HTMLElement): Promise<void> {
    if (!openDeviation.has(deviationId)) {
      replace(slot);
      return;
    }
    replace(slot, loading());
    try {
      const full = await ctx.api.get<DeviationWithAudit>(`/v1/deviations/${deviationId}`);
      replace(slot, deviationPanel(ctx, full, (u) => {
        flashes.set(deviationId, `Saved at ${formatClock(Date.now(), zone, true)}: the deviation is now ${u.status.toLowerCase()}.`);
        void load(false);
      }, flashes.get(deviationId)));
    } catch (error) {
      showError(slot, error, 'Loading the deviation');
    }
  }

  // Live: this batch's events re-read it (a burst of sample posts becomes one read).
  let timer: number | null = null;
  const schedule = (withSeries: boolean) => {
    if (timer !== null) window.clearTimeout(timer);
    timer = window.setTimeout(() => {
      timer = null;
      void load(withSeries);
    }, 400);
  };
  const offEvent = ctx.stream.onEvent((e) => {
    if (e.batchId !== id) return;
    schedule(e.type === 'batch.updated');
  });
  const offResync = ctx.stream.onResync(() => schedule(true));
  const ticker = window.setInterval(() => {
    // Keep "now" and the clocks moving; poll while the stream is down.
    if (ctx.stream.current.status !== 'live' && detail && detail.status !== 'DONE') schedule(true);
  }, 15_000);

  if (route.query.has('deviation')) setQuery(route.query);
  void load();

  return {
    el,
    title: 'Load',
    dispose() {
      disposed = true;
      offEvent();
      offResync();
      window.clearInterval(ticker);
      if (timer !== null) window.clearTimeout(timer);
      bathChart.destroy();
      bainiteChart.destroy();
      furnaceChart.destroy();
    },
  };
};

/** Worst first, so what needs attention is at the top. */
function sortVerdicts(list: PredictionView['verdicts']): PredictionView['verdicts'] {
  const rank = { nonconforming: 0, 'at-risk': 1, conforming: 2 } as const;
  return list.slice().sort((a, b) => rank[a.verdict] - rank[b.verdict]);
}

/** A verdict's number in its unit: fractions as vol%, hardness and strength whole, the rest to 2 places. */
function verdictValue(v: number, unit: string | null, withUnit = true): string {
  if (unit === 'fraction') return `${fmtNum(v * 100, 1)}${withUnit ? ' vol%' : ''}`;
  if (unit === 's') return `${fmtNum(v / 60, 1)}${withUnit ? ' min' : ''}`;
  if (unit === 'ratio') return fmtNum(v, 2);
  const digits = unit === 'HV' || unit === 'MPa' || unit === '°C' || unit === 'HBW' || unit === 'J' ? 0 : unit === 'HRC' ? 1 : 2;
  return `${fmtNum(v, digits)}${withUnit && unit ? ` ${unit}` : ''}`;
}

function lowerIndex(xs: Float64Array, x: number): number {
  let lo = 0;
  let hi = xs.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (xs[mid]! < x) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

