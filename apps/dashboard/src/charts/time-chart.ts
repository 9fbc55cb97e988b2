import type { ChartConfiguration, ChartDataset } from 'chart.js';
import type { AnnotationOptions } from 'chartjs-plugin-annotation';
import { decimateMinMax, type XY } from '../lib/decimate.js';
import type { Excursion } from '../lib/excursions.js';
import { formatClock } from '../lib/time.js';
import { h } from '../ui/dom.js';
import { Chart, COLORS, setupCharts } from './setup.js';

/**
 * A measured signal against time with its spec band, excursions shaded, and vertical markers (load
 * events, end of hold, now). X is minutes from an origin (INTO_BATH for the bath, CHARGED for the
 * furnace) because that is how a hold is specified; the tooltip also gives the plant clock time.
 *
 * Series are thinned to min/max per pixel column before drawing (lib/decimate.ts), recomputed when the
 * chart is resized, so a day of 1 Hz data draws as a couple of thousand points.
 */

export interface TimeSeries {
  label: string;
  color: string;
  /** epoch ms, ascending */
  xs: Float64Array;
  ys: Float64Array;
  /** Consecutive samples further apart are not joined. */
  gapMs: number;
  /** Dashed line (e.g. a projection rather than a record). */
  dash?: number[];
}

export interface Marker {
  atMs: number;
  label: string;
  color: string;
  dash?: number[];
}

export interface TimeChartInput {
  series: TimeSeries[];
  originMs: number;
  xTitle: string;
  yTitle: string;
  unit: string;
  band: { min: number; max: number; label: string } | null;
  excursions: Excursion[];
  markers: Marker[];
  zone: string;
  /** Fixed y range (e.g. 0..1 for fractions); default: fit data and band. */
  yRange?: { min: number; max: number };
  /** Extra annotations (lines, boxes) in data coordinates. */
  extraAnnotations?: Record<string, AnnotationOptions>;
  /** Extra datasets already in chart coordinates (x = minutes). */
  extraDatasets?: ChartDataset<'line', XY[]>[];
  xRange?: { min: number; max: number };
}

export interface DrawStats {
  pointsIn: number;
  pointsDrawn: number;
  drawMs: number;
}

const MAX_EXCURSION_BOXES = 150;

export class TimeChart {
  readonly el: HTMLElement;
  private readonly canvas: HTMLCanvasElement;
  private chart: Chart<'line', XY[]> | null = null;
  private input: TimeChartInput | null = null;
  private resizeObserver: ResizeObserver | null = null;
  private lastWidth = 0;
  lastStats: DrawStats | null = null;

  constructor(
    readonly name: string,
    ariaLabel: string,
  ) {
    setupCharts();
    this.canvas = h('canvas', { attrs: { role: 'img', 'aria-label': ariaLabel } });
    this.el = h('div', { class: 'chart-box', dataset: { chart: name } }, this.canvas);
  }

  /** Draws (or redraws) with new data. Returns how long decimation and drawing took. */
  draw(input: TimeChartInput): DrawStats {
    this.input = input;
    const started = performance.now();
    const width = Math.max(200, this.el.clientWidth || 800);
    this.lastWidth = width;
    const toMin = (ms: number): number => (ms - input.originMs) / 60_000;
    const xMin = input.xRange?.min;
    const xMax = input.xRange?.max;

    let pointsIn = 0;
    let pointsDrawn = 0;
    let yMinDrawn = Number.POSITIVE_INFINITY;
    let yMaxDrawn = Number.NEGATIVE_INFINITY;
    const datasets: ChartDataset<'line', XY[]>[] = input.series.map((s) => {
      pointsIn += s.xs.length;
      const thin = decimateMinMax(s.xs, s.ys, {
        buckets: width,
        gapMs: s.gapMs,
        ...(xMin !== undefined ? { xMin: input.originMs + xMin * 60_000 } : {}),
        ...(xMax !== undefined ? { xMax: input.originMs + xMax * 60_000 } : {}),
      });
      pointsDrawn += thin.length;
      for (const p of thin) {
        if (p.y === null) continue;
        if (p.y < yMinDrawn) yMinDrawn = p.y;
        if (p.y > yMaxDrawn) yMaxDrawn = p.y;
      }
      return {
        label: s.label,
        data: thin.map((p) => ({ x: toMin(p.x), y: p.y })),
        borderColor: s.color,
        backgroundColor: s.color,
        borderWidth: 1.6,
        ...(s.dash ? { borderDash: s.dash } : {}),
        pointRadius: 0,
        pointHoverRadius: 3,
        spanGaps: false,
        tension: 0,
        parsing: false,
        normalized: true,
      } as ChartDataset<'line', XY[]>;
    });
    datasets.push(...(input.extraDatasets ?? []));

    const annotations: Record<string, AnnotationOptions> = {};
    if (input.band) {
      annotations['band'] = {
        type: 'box',
        yMin: input.band.min,
        yMax: input.band.max,
        backgroundColor: COLORS.band,
        borderColor: COLORS.bandEdge,
        borderWidth: 1,
        borderDash: [4, 4],
        drawTime: 'beforeDatasetsDraw',
        label: { display: true, content: input.band.label, position: { x: 'start', y: 'start' }, color: COLORS.bandEdge, font: { size: 12 }, padding: 4 },
      };
    }
    input.excursions.slice(0, MAX_EXCURSION_BOXES).forEach((e, i) => {
      const from = toMin(e.fromMs);
      const to = Math.max(toMin(e.toMs), from + 0.05);
      annotations[`exc${i}`] = {
        type: 'box',
        xMin: from,
        xMax: to,
        backgroundColor: COLORS.excursion,
        borderColor: COLORS.excursionEdge,
        borderWidth: 1,
        drawTime: 'beforeDatasetsDraw',
      };
    });
    input.markers.forEach((m, i) => {
      annotations[`m${i}`] = {
        type: 'line',
        xMin: toMin(m.atMs),
        xMax: toMin(m.atMs),
        borderColor: m.color,
        borderWidth: 1.5,
        borderDash: m.dash ?? [6, 4],
        // Labels stack down from the top, one row per marker, so markers close in time never overprint.
        label: {
          display: true,
          content: m.label,
          position: 'end',
          yAdjust: i * 20,
          rotation: 0,
          backgroundColor: 'rgba(16, 20, 24, 0.85)',
          color: m.color,
          font: { size: 12 },
          padding: 3,
        },
      };
    });
    Object.assign(annotations, input.extraAnnotations ?? {});

    const zone = input.zone;
    const origin = input.originMs;
    const unit = input.unit;
    const config: ChartConfiguration<'line', XY[]> = {
      type: 'line',
      data: { datasets },
      options: {
        parsing: false,
        normalized: true,
        animation: false,
        interaction: { mode: 'nearest', axis: 'x', intersect: false },
        scales: {
          x: {
            type: 'linear',
            title: { display: true, text: input.xTitle },
            ...(xMin !== undefined ? { min: xMin } : {}),
            ...(xMax !== undefined ? { max: xMax } : {}),
            ticks: { maxTicksLimit: 12, callback: (v) => (Number.isInteger(Number(v)) ? String(v) : '') },
          },
          y: {
            type: 'linear',
            title: { display: true, text: input.yTitle },
            ...(input.yRange ? { min: input.yRange.min, max: input.yRange.max } : {}),
            ...(!input.yRange && input.band ? { suggestedMin: input.band.min - 10, suggestedMax: input.band.max + 10 } : {}),
          },
        },
        plugins: {
          legend: { position: 'top', align: 'end', labels: { filter: (item) => item.text !== '' } },
          tooltip: {
            callbacks: {
              title: (items) => {
                const x = items[0]?.parsed.x;
                if (x === undefined || x === null) return '';
                return `${x.toFixed(1)} min · ${formatClock(origin + x * 60_000, zone, true)}`;
              },
              label: (item) => `${item.dataset.label ?? ''}: ${item.parsed.y === null ? '—' : `${item.parsed.y.toFixed(1)} ${unit}`}`,
            },
          },
          annotation: { annotations },
        },
      },
    };

    if (this.chart) {
      this.chart.data.datasets = datasets;
      this.chart.options = config.options!;
      this.chart.update('none');
    } else {
      this.chart = new Chart(this.canvas, config);
      this.observeResize();
    }
    const drawMs = performance.now() - started;
    this.lastStats = { pointsIn, pointsDrawn, drawMs };
    this.el.dataset['pointsIn'] = String(pointsIn);
    this.el.dataset['pointsDrawn'] = String(pointsDrawn);
    this.el.dataset['drawMs'] = drawMs.toFixed(1);
    // The extremes that reached the screen (tests check that thinning kept them).
    this.el.dataset['yMin'] = Number.isFinite(yMinDrawn) ? String(yMinDrawn) : '';
    this.el.dataset['yMax'] = Number.isFinite(yMaxDrawn) ? String(yMaxDrawn) : '';
    this.el.dataset['drawnAt'] = String(Date.now());
    return this.lastStats;
  }

  private observeResize(): void {
    this.resizeObserver = new ResizeObserver(() => {
      const width = this.el.clientWidth;
      // Re-thin only when the width changed enough to matter.
      if (this.input && Math.abs(width - this.lastWidth) > 40) this.draw(this.input);
    });
    this.resizeObserver.observe(this.el);
  }

  destroy(): void {
    this.resizeObserver?.disconnect();
    this.chart?.destroy();
    this.chart = null;
  }
}
