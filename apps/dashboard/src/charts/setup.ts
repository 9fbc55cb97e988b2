import {
  BarController,
  BarElement,
  CategoryScale,
  Chart,
  Filler,
  Legend,
  LinearScale,
  LineController,
  LineElement,
  PointElement,
  ScatterController,
  Tooltip,
} from 'chart.js';
import annotationPlugin from 'chartjs-plugin-annotation';

/**
 * Chart.js with only the parts the dashboard uses (tree-shaken), and defaults for a dark control-room
 * screen: no animation (a live chart that animates every update is hard to read and slow), readable
 * fonts, tabular tooltips.
 */

let done = false;

export const COLORS = {
  text: '#dde4ea',
  muted: '#8d9aa6',
  grid: 'rgba(160, 178, 194, 0.14)',
  band: 'rgba(92, 190, 214, 0.13)',
  bandEdge: 'rgba(92, 190, 214, 0.75)',
  excursion: 'rgba(240, 82, 96, 0.22)',
  excursionEdge: 'rgba(240, 82, 96, 0.9)',
  bath: ['#f3a953', '#e8d26a', '#c59cf0', '#7ad0a8'],
  furnace: ['#ef7d6d', '#f0a07f', '#d86fa3', '#f5c36b'],
  bainite: '#6fd0e8',
  bainiteBand: 'rgba(111, 208, 232, 0.2)',
  ceiling: '#e8d26a',
  safeEnd: '#7ad0a8',
  scheduled: '#c59cf0',
  now: '#dde4ea',
  spec: '#f05260',
  conforming: '#3dbf8f',
  atRisk: '#e9a23b',
  nonconforming: '#f05260',
  t0: '#6fd0e8',
  t0Prime: '#7ad0a8',
  ae3: '#ef7d6d',
  bs: '#e8d26a',
  ms: '#c59cf0',
} as const;

export function setupCharts(): void {
  if (done) return;
  done = true;
  Chart.register(LineController, LineElement, PointElement, LinearScale, CategoryScale, BarController, BarElement, ScatterController, Filler, Tooltip, Legend, annotationPlugin);
  Chart.defaults.color = COLORS.text;
  Chart.defaults.borderColor = COLORS.grid;
  Chart.defaults.font.family = 'system-ui, "Segoe UI", Roboto, "Noto Sans", sans-serif';
  Chart.defaults.font.size = 13;
  Chart.defaults.animation = false;
  Chart.defaults.responsive = true;
  Chart.defaults.maintainAspectRatio = false;
  Chart.defaults.plugins.legend.labels.boxWidth = 14;
  Chart.defaults.plugins.tooltip.mode = 'nearest';
  Chart.defaults.plugins.tooltip.intersect = false;
}

export { Chart };
