import type { BatchDetail, BatchListItem, DeviationListItem, Line, Page, Spec } from '../api/types.js';
import type { ViewFactory } from '../app/view.js';
import { batchState, windowOf, type BatchState, type Reading } from '../lib/batch-state.js';
import { fmtBatchStatus, fmtC, fmtLimits, fmtRule, fmtVolPct } from '../lib/format.js';
import { formatClock, formatDateTime, formatDuration } from '../lib/time.js';
import { plainWarning } from '../lib/warnings.js';
import { h, link, replace } from '../ui/dom.js';
import { bathSafetyNotes, cautionLine, showError } from '../ui/notice.js';
import { gauge, loading, severityChip, verdictBadge, worstSeverity } from '../ui/widgets.js';

/**
 * The live board: one card per line with every load on it now (in furnace, in transfer, in bath), its
 * time in the step, bath and furnace readings against the spec band, bainite against its ceiling, the
 * earliest safe end of hold, the verdict and the line's open deviations. Updated from the live stream
 * (batch.updated / deviation.changed) without reloading; when the stream is not live the board says so
 * and re-reads every 15 s on its own.
 */

const ACTIVE = 'IN_FURNACE,IN_TRANSFER,IN_BATH';
const POLL_WHEN_DOWN_MS = 15_000;
const SAFETY_NET_MS = 60_000;

interface LineData {
  line: Line;
  active: BatchListItem[];
  lastDone: BatchListItem | null;
}

export const boardView: ViewFactory = (ctx) => {
  const status = h('p', { class: 'board-status muted', attrs: { role: 'status' } });
  const errors = h('div');
  const grid = h('div', { class: 'board-grid' }, loading('Loading the lines…'));
  const el = h(
    'section',
    { class: 'board' },
    h('div', { class: 'page-head' }, h('h1', null, 'Live board'), status),
    errors,
    grid,
    bathSafetyNotes(),
  );

  let lines: LineData[] = [];
  let specs: Spec[] = [];
  const details = new Map<string, BatchDetail>();
  let openDeviations: DeviationListItem[] = [];
  let loadedAt: number | null = null;
  const cards = new Map<string, HTMLElement>();
  let disposed = false;

  async function loadAll(): Promise<void> {
    try {
      const [lineList, specList, active, devs] = await Promise.all([
        ctx.lines(true),
        ctx.specs(),
        ctx.api.get<Page<BatchListItem>>('/v1/batches', { query: { status: ACTIVE, limit: 200 } }),
        ctx.api.get<Page<DeviationListItem>>('/v1/deviations', { query: { status: 'OPEN,ACKNOWLEDGED', limit: 500 } }),
      ]);
      specs = specList;
      openDeviations = devs.items;
      const byLine = new Map<string, BatchListItem[]>();
      for (const b of active.items) byLine.set(b.lineId, [...(byLine.get(b.lineId) ?? []), b]);
      // Idle lines: show their most recent finished load.
      const idle = lineList.filter((l) => !byLine.has(l.id));
      const lastDone = await Promise.all(
        idle.map((l) => ctx.api.get<Page<BatchListItem>>('/v1/batches', { query: { lineId: l.id, status: 'DONE', limit: 1 } }).then((p) => [l.id, p.items[0] ?? null] as const)),
      );
      const doneByLine = new Map(lastDone);
      lines = lineList
        .slice()
        .sort((a, b) => a.code.localeCompare(b.code))
        .map((line) => ({ line, active: sortActive(byLine.get(line.id) ?? []), lastDone: doneByLine.get(line.id) ?? null }));
      const ids = lines.flatMap((l) => l.active.map((b) => b.id));
      const fetched = await Promise.all(ids.map((id) => ctx.api.get<BatchDetail>(`/v1/batches/${id}`)));
      details.clear();
      for (const d of fetched) details.set(d.id, d);
      loadedAt = Date.now();
      replace(errors);
      if (!disposed) renderAll();
    } catch (error) {
      showError(errors, error, 'Loading the board');
      if (lines.length === 0) replace(grid);
    }
  }

  async function reloadBatch(id: string): Promise<void> {
    try {
      const d = await ctx.api.get<BatchDetail>(`/v1/batches/${id}`);
      const wasActive = details.has(id);
      const isActive = d.status !== 'DONE' && d.status !== 'PLANNED';
      // A load that finished or started changes the line's list: re-read the whole board.
      if (wasActive !== isActive) return scheduleFull();
      details.set(id, d);
      loadedAt = Date.now();
      const line = lines.find((l) => l.line.id === d.lineId);
      if (line && !disposed) renderCard(line);
    } catch (error) {
      showError(errors, error, 'Updating a load');
    }
  }

  async function reloadDeviations(): Promise<void> {
    try {
      const devs = await ctx.api.get<Page<DeviationListItem>>('/v1/deviations', { query: { status: 'OPEN,ACKNOWLEDGED', limit: 500 } });
      openDeviations = devs.items;
      if (!disposed) for (const l of lines) renderCard(l);
    } catch (error) {
      showError(errors, error, 'Updating deviations');
    }
  }

  // Debounce: a burst of events for one batch (every sample post) turns into one read.
  const pending = new Map<string, number>();
  function debounce(key: string, ms: number, fn: () => void): void {
    const old = pending.get(key);
    if (old !== undefined) window.clearTimeout(old);
    pending.set(key, window.setTimeout(() => {
      pending.delete(key);
      fn();
    }, ms));
  }
  function scheduleFull(): void {
    debounce('full', 300, () => void loadAll());
  }

  function renderAll(): void {
    if (lines.length === 0) {
      replace(grid, h('p', { class: 'empty' }, 'No lines are set up yet. An admin adds them under ', link('/admin', 'Plant & specs'), '.'));
      return;
    }
    replace(grid);
    cards.clear();
    for (const l of lines) {
      const cardEl = h('article', { class: 'line-card', dataset: { lineId: l.line.id } });
      cards.set(l.line.id, cardEl);
      grid.append(cardEl);
      renderCard(l);
    }
    renderStatus();
  }

  function renderCard(l: LineData): void {
    const cardEl = cards.get(l.line.id);
    if (!cardEl) return;
    const rank: Record<string, number> = { CRITICAL: 0, MAJOR: 1, MINOR: 2 };
    const devs = openDeviations.filter((d) => d.lineId === l.line.id).sort((a, b) => (rank[a.severity] ?? 3) - (rank[b.severity] ?? 3) || b.openedAt.localeCompare(a.openedAt));
    const now = Date.now();
    replace(
      cardEl,
      h(
        'header',
        { class: 'line-head' },
        h('h2', null, l.line.code, h('span', { class: 'muted' }, ` ${l.line.name}`)),
        devs.length > 0
          ? link(`/deviations?lineId=${l.line.id}&status=OPEN,ACKNOWLEDGED`, h('span', { class: `dev-count ${worstSeverity(devs)}` }, `${devs.length} open deviation${devs.length === 1 ? '' : 's'}`))
          : h('span', { class: 'dev-count none' }, 'No open deviations'),
      ),
      l.active.length === 0
        ? h(
            'p',
            { class: 'idle' },
            'Idle. ',
            l.lastDone ? ['Last load ', link(`/batches/${l.lastDone.id}`, l.lastDone.code), ` finished (created ${formatDateTime(l.lastDone.createdAt, ctx.plantZone)}).`] : 'No loads yet.',
          )
        : l.active.map((b) => {
            const d = details.get(b.id);
            return d ? loadRow(d, now) : h('div', { class: 'load' }, b.code, ' ', loading());
          }),
      devs.length > 0
        ? h('ul', { class: 'dev-list' }, ...devs.slice(0, 4).map((dv) => h('li', null, severityChip(dv.severity), ' ', link(`/deviations/${dv.id}`, fmtRule(dv.rule)),
            h('span', { class: 'muted' }, ` · ${[dv.batch?.code, dv.channel?.code, dv.status === 'ACKNOWLEDGED' ? 'acknowledged' : null].filter(Boolean).join(' · ')} · ${formatClock(dv.openedAt, ctx.plantZone)}`))))
        : null,
      devs.length > 4 ? h('p', { class: 'muted small' }, `and ${devs.length - 4} more`) : null,
    );
  }

  function loadRow(d: BatchDetail, now: number): HTMLElement {
    const w = windowOf(specs, d.specVersionId);
    const s = batchState(d, w, now);
    const criteria = specs.flatMap((sp) => sp.versions).find((v) => v.id === d.specVersionId)?.acceptanceCriteria;
    return h(
      'div',
      { class: `load step-${s.step}`, dataset: { batchId: d.id, verdict: s.verdict ?? 'none' } },
      h(
        'div',
        { class: 'load-head' },
        h('h3', null, link(`/batches/${d.id}`, d.code)),
        h('span', { class: 'step' }, fmtBatchStatus(d.status), ' ', h('strong', { class: 'since', dataset: { since: String(s.stepSinceMs ?? '') } }, s.stepSinceMs !== null ? formatDuration(now - s.stepSinceMs) : '')),
        verdictBadge(s.verdict),
      ),
      h('p', { class: 'muted small' }, `Heat ${d.heat.heatNumber} · ${d.spec.code} v${d.spec.version} · ${d.partCount} parts`),
      s.step === 'furnace' || s.step === 'transfer'
        ? readingsLine('Furnace', s.furnaceReadings, w ? fmtLimits(w.austenitize.minTempC, w.austenitize.maxTempC, '°C') : null, true)
        : readingsLine('Bath', s.bathReadings, w ? fmtLimits(w.bath.minTempC, w.bath.maxTempC, '°C') : null, false),
      s.step === 'bath' ? bainiteLine(s, criteria?.minBainiteFraction ?? null) : null,
      s.step === 'bath' ? holdLine(s, now, w) : null,
      s.stale.length > 0 ? h('ul', { class: 'stale-notes' }, ...s.stale.map((n) => h('li', null, '⚠ ', n.text, n.sinceMs ? ` (since ${formatClock(n.sinceMs, ctx.plantZone)})` : ''))) : null,
    );
  }

  /** Furnace readings below the band are the heat-up, not an alarm; above it they are. */
  function readingsLine(what: string, readings: Reading[], bandText: string | null, heatingUp: boolean): HTMLElement {
    const cls = (r: Reading): string => (r.band === 'below' && heatingUp ? 'heating' : (r.band ?? ''));
    const mark = (r: Reading): string => (r.band === 'above' ? ' ▲ above' : r.band === 'below' ? (heatingUp ? ' heating up' : ' ▼ below') : '');
    return h(
      'div',
      { class: 'readings' },
      h('span', { class: 'label' }, what),
      readings.length === 0
        ? h('span', { class: 'muted' }, 'no readings yet')
        : readings.map((r) =>
            h('span', { class: `reading ${cls(r)} ${r.stale ? 'stale' : ''}`, attrs: { title: `${r.equipmentCode} ${r.channelCode}: last reading ${formatClock(r.atMs, ctx.plantZone, true)}` } },
              h('span', { class: 'muted' }, `${r.channelCode} `), fmtC(r.valueC), h('span', { class: 'small' }, mark(r)), r.stale ? ' (silent)' : ''),
          ),
      bandText ? h('span', { class: 'muted small nowrap' }, `band ${bandText}`) : null,
    );
  }

  function bainiteLine(s: BatchState, minFraction: number | null): HTMLElement {
    if (!s.prediction) return h('div', { class: 'bainite' }, h('span', { class: 'label' }, 'Bainite'), h('span', { class: 'muted' }, 'no prediction yet'));
    return h(
      'div',
      { class: 'bainite' },
      h('span', { class: 'label' }, 'Bainite'),
      gauge({ value: s.bainiteNow, ceiling: s.ceiling, scaleMax: 1, limit: minFraction, label: `bainite ${fmtVolPct(s.bainiteNow)} of a ceiling of ${fmtVolPct(s.ceiling)}` }),
      h('span', null, fmtVolPct(s.bainiteNow, 0), h('span', { class: 'muted' }, ` of ceiling ${fmtVolPct(s.ceiling, 0)}${minFraction !== null ? ` (spec ≥ ${fmtVolPct(minFraction, 0)})` : ''}`)),
    );
  }

  function holdLine(s: BatchState, now: number, w: ReturnType<typeof windowOf>): HTMLElement[] {
    const safe = s.earliestSafeEndMs;
    const when = (ms: number): string => `${formatClock(ms, ctx.plantZone)}${ms <= now ? ' (time reached)' : ` (in ${formatDuration(ms - now)})`}`;
    return [
      h('div', { class: 'hold' },
        h('span', { class: 'label' }, 'Hold'),
        h('span', null, s.holdMs !== null ? `${Math.floor(s.holdMs / 60_000)} min` : '—'),
        w ? h('span', { class: 'muted small' }, `spec ${w.bath.minHoldMin}–${w.bath.maxHoldMin} min`) : null,
        s.scheduledEndMs !== null ? h('span', { class: 'muted small' }, `· scheduled end ${when(s.scheduledEndMs)}`) : h('span', { class: 'muted small' }, '· no scheduled end'),
      ),
      h('div', { class: 'hold' },
        h('span', { class: 'label' }, 'Safe end'),
        safe === null
          ? h('span', { class: `safe-end ${s.prediction ? 'warn' : 'muted'}` }, s.prediction ? `none${s.prediction.hold.reason ? `. ${plainWarning(s.prediction.hold.reason)}` : ' given by the prediction'}` : 'no prediction yet')
          : h('span', { class: 'safe-end' }, when(safe)),
        safe !== null ? cautionLine('hold') : null,
        s.scheduledTooEarly ? h('strong', { class: 'warn' }, 'Scheduled end is before the safe end!') : null,
      ),
    ];
  }

  function renderStatus(): void {
    const st = ctx.stream.current.status;
    const when = loadedAt ? formatClock(loadedAt, ctx.plantZone, true) : '—';
    if (st === 'live') {
      status.className = 'board-status muted';
      status.textContent = `Updated live. Last change read at ${when}.`;
    } else {
      status.className = 'board-status warn';
      status.textContent = `Live updates are not running: the board was last read at ${when} and re-reads every ${POLL_WHEN_DOWN_MS / 1000} s until they are back.`;
    }
  }

  // Live updates.
  const offEvent = ctx.stream.onEvent((event) => {
    if (event.type === 'batch.updated') {
      if (details.has(event.batchId)) debounce(`b:${event.batchId}`, 250, () => void reloadBatch(event.batchId));
      else scheduleFull();
    } else {
      debounce('devs', 300, () => void reloadDeviations());
      if (event.batchId && details.has(event.batchId)) debounce(`b:${event.batchId}`, 300, () => void reloadBatch(event.batchId!));
    }
  });
  const offResync = ctx.stream.onResync(() => scheduleFull());
  const offStatus = ctx.stream.onStatus(() => renderStatus());

  // Clocks tick every second; when the stream is down the board polls; a full re-read every minute regardless.
  let lastFull = Date.now();
  let lastRedraw = Date.now();
  const ticker = window.setInterval(() => {
    const now = Date.now();
    for (const el of grid.querySelectorAll<HTMLElement>('[data-since]')) {
      const since = Number(el.dataset['since']);
      if (since) el.textContent = formatDuration(now - since);
    }
    // "in 12 min" texts move on every half minute (not while someone is tabbing through the cards).
    if (now - lastRedraw > 30_000 && !grid.contains(document.activeElement)) {
      lastRedraw = now;
      for (const l of lines) renderCard(l);
    }
    const live = ctx.stream.current.status === 'live';
    if (now - lastFull > (live ? SAFETY_NET_MS : POLL_WHEN_DOWN_MS)) {
      lastFull = now;
      void loadAll();
    }
    renderStatus();
  }, 1000);

  void loadAll();

  return {
    el,
    title: 'Live board',
    dispose() {
      disposed = true;
      offEvent();
      offResync();
      offStatus();
      window.clearInterval(ticker);
      for (const t of pending.values()) window.clearTimeout(t);
    },
  };
};

/** Bath first (the load the shift watches), then transfer, then furnace. */
function sortActive(list: BatchListItem[]): BatchListItem[] {
  const rank: Record<string, number> = { IN_BATH: 0, IN_TRANSFER: 1, IN_FURNACE: 2 };
  return list.slice().sort((a, b) => (rank[a.status] ?? 9) - (rank[b.status] ?? 9));
}


