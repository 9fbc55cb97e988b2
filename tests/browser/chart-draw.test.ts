/**
 * How long a day of 1 Hz bath data (86,400 samples, posted through the API) takes to reach the screen
 * on the load view's bath chart, in Chromium at 1366×768. Measured and printed, not asserted as a time
 * (the goal is under half a second); asserted is that the chart drew every sample's extreme:
 *   - as served: the API thins to min/max per time bucket, the browser thins again per pixel and draws;
 *   - every sample: the browser receives all 86,400 and does the min/max thinning itself;
 *   - redraw: the same 86,400 samples re-thinned and redrawn on a resize (the browser's own cost).
 */
import { cpus, loadavg } from 'node:os';
import { describe, expect, it } from 'vitest';
import { createLoad, PASSWORD, postSamples, setUpPlant } from './plant.js';
import type { BrowserElement, BrowserWindow } from './browser-globals.js';
import { openBrowser, screenshot, signInUi, startStack, unexpectedProblems, waitForWorkerIdle } from './support.js';

const stack = await startStack('browser-chart');
const plant = await setUpPlant(stack);
const { page, problems } = await openBrowser();
const base = stack.api.url;

const DAY = 86_400;
const now = Math.floor(Date.now() / 1000) * 1000;
const intoBathMs = now - DAY * 1000 - 60_000;
const times = { chargedMs: intoBathMs - 70 * 60_000, outOfFurnaceMs: intoBathMs - 10_000, intoBathMs, outOfBathMs: intoBathMs + DAY * 1000 };
const batchId = await createLoad(stack, plant, 0, 'LOAD-DAY', times, 1440);
// tc1 at 1 Hz for a day: 300 °C with a slow drift, a one-second spike to 312.5 °C and a dip to 287.25 °C.
const spikeAt = 40_000;
const dipAt = 61_234;
const samples = [];
for (let i = 0; i < DAY; i++) {
  const value = i === spikeAt ? 312.5 : i === dipAt ? 287.25 : 300 + 2 * Math.sin(i / 900) + 0.3 * Math.sin(i / 7);
  samples.push({ channel: 'tc1', t: intoBathMs + i * 1000, value });
}
const postStarted = performance.now();
await postSamples(stack, plant.lines[0]!.bathId, plant.bathKeys[0]!, samples);
const postMs = performance.now() - postStarted;
// The worker recomputes the load after the posts; time the screen when it is done, not during.
const idleStarted = performance.now();
const workerIdle = await waitForWorkerIdle(stack.config);
const recomputeWaitMs = performance.now() - idleStarted;

interface Measured {
  totalMs: number;
  drawMs: number;
  fetchMs: number;
  pointsIn: number;
  pointsDrawn: number;
}

/** Opens the load view by its hash and times it inside the page until the bath chart has drawn. */
async function openAndTime(hash: string): Promise<Measured> {
  return page.evaluate(async (target) => {
    const w = globalThis as unknown as BrowserWindow;
    const started = w.performance.now();
    w.location.hash = target;
    const chart = await new Promise<BrowserElement>((resolve, reject) => {
      const deadline = w.performance.now() + 30_000;
      const poll = (): void => {
        const el = w.document.querySelector('section.batch [data-chart="bath"][data-drawn-at]');
        if (el) return resolve(el);
        if (w.performance.now() > deadline) return reject(new Error('bath chart not drawn within 30 s'));
        w.requestAnimationFrame(poll);
      };
      poll();
    });
    // One more frame so the canvas is painted, not just computed.
    await new Promise((r) => w.requestAnimationFrame(() => r(undefined)));
    return {
      totalMs: w.performance.now() - started,
      drawMs: Number(chart.dataset['drawMs']),
      fetchMs: Number(w.document.querySelector('section.batch')!.dataset['fetchMs']),
      pointsIn: Number(chart.dataset['pointsIn']),
      pointsDrawn: Number(chart.dataset['pointsDrawn']),
    };
  }, hash);
}

const median = (xs: number[]): number => xs.slice().sort((a, b) => a - b)[Math.floor(xs.length / 2)]!;

describe('a day of 1 Hz bath data on the load chart', { timeout: 180_000 }, () => {
  it('draws it, thinned, keeping the spike and the dip (times printed)', async () => {
    await signInUi(page, base, plant.users.metallurgist, PASSWORD);

    // As served (the API thins to ~2 points per pixel of a 1366 px wide screen).
    await page.goto(`${base}/#/board`);
    await page.waitForSelector('.line-card');
    const served: Measured[] = [];
    for (let i = 0; i < 3; i++) {
      await page.evaluate(() => ((globalThis as unknown as BrowserWindow).location.hash = '#/board'));
      await page.waitForSelector('.line-card');
      served.push(await openAndTime(`#/batches/${batchId}`));
    }
    expect(served[0]!.pointsIn).toBeLessThanOrEqual(2 * 1366);
    expect(Number(await page.locator('[data-chart="bath"]').getAttribute('data-y-max'))).toBe(312.5);
    await screenshot(page, '15-day-of-1hz-bath');

    // Every sample to the browser.
    await page.evaluate(() => ((globalThis as unknown as BrowserWindow).location.hash = '#/board'));
    await page.waitForSelector('.line-card');
    const full = await openAndTime(`#/batches/${batchId}?resolution=full`);
    expect(full.pointsIn).toBe(DAY);
    expect(full.pointsDrawn).toBeLessThan(5_000);

    // What was drawn still holds the one-second spike and dip.
    const chartBox = page.locator('[data-chart="bath"]');
    expect(Number(await chartBox.getAttribute('data-y-max'))).toBe(312.5);
    expect(Number(await chartBox.getAttribute('data-y-min'))).toBe(287.25);

    // Redraws of the 86,400 samples on resize (thinning + drawing in the browser only).
    const redraws: number[] = [];
    for (const width of [1200, 1366, 1100, 1366, 1280]) {
      const before = await page.locator('[data-chart="bath"]').getAttribute('data-drawn-at');
      await page.setViewportSize({ width, height: 768 });
      await page.waitForFunction((b) => (globalThis as unknown as BrowserWindow).document.querySelector('[data-chart="bath"]')?.dataset['drawnAt'] !== b, before);
      redraws.push(Number(await page.locator('[data-chart="bath"]').getAttribute('data-draw-ms')));
    }

    // The API calls behind the view, timed one by one from here (same machine, warm).
    const token = await page.evaluate(() => JSON.parse((globalThis as unknown as BrowserWindow).localStorage.getItem('ausline.session')!).token as string);
    const timeGet = async (path: string): Promise<number> => {
      const runs: number[] = [];
      for (let i = 0; i < 3; i++) {
        const t0 = performance.now();
        const reply = await stack.http.get(path, { authorization: `Bearer ${token}` });
        runs.push(performance.now() - t0);
        expect(reply.status).toBe(200);
      }
      return median(runs);
    };
    const apiTimes = {
      detail: await timeGet(`/v1/batches/${batchId}`),
      seriesThin: await timeGet(`/v1/batches/${batchId}/series?maxPoints=2732`),
      seriesRaw: await timeGet(`/v1/batches/${batchId}/series?maxPoints=200000`),
      specs: await timeGet('/v1/specs'),
    };

    const row = (label: string, m: Measured) =>
      `  ${label.padEnd(34)} ${m.totalMs.toFixed(0).padStart(6)} ms total  (API fetch ${m.fetchMs.toFixed(0)} ms, thin + draw ${m.drawMs.toFixed(0)} ms; ${m.pointsIn} points in, ${m.pointsDrawn} drawn)`;
    console.log(
      [
        `Bath chart, one day of 1 Hz data (${DAY} samples on tc1), Chromium ${await page.context().browser()!.version()}, 1366×768:`,
        `  posting the day through the API (9 requests of ≤ 10,000): ${(postMs / 1000).toFixed(1)} s; worker busy ${(recomputeWaitMs / 1000).toFixed(1)} s more${workerIdle ? '' : ' and STILL BUSY: the figures below were taken while it recomputed'}`,
        `  machine load average while measuring: ${loadavg().map((x) => x.toFixed(1)).join(' / ')} on ${cpus().length} cores`,
        ...served.map((m, i) => row(`as served, run ${i + 1}`, m)),
        `  as served, median total: ${median(served.map((m) => m.totalMs)).toFixed(0)} ms`,
        row('every sample to the browser', full),
        `  redraw of ${DAY} samples on resize: ${redraws.map((r) => r.toFixed(0)).join(', ')} ms (median ${median(redraws).toFixed(0)} ms)`,
        `  API alone (median of 3): batch detail ${apiTimes.detail.toFixed(0)} ms, series thinned ${apiTimes.seriesThin.toFixed(0)} ms, series every sample ${apiTimes.seriesRaw.toFixed(0)} ms, specs ${apiTimes.specs.toFixed(0)} ms`,
        '  goal (issue 5): under 500 ms to draw; printed, not asserted.',
      ].join('\n'),
    );
    await page.setViewportSize({ width: 1366, height: 768 });
    expect(unexpectedProblems(problems)).toEqual([]);
  });

  it('the API keeps the one-second spike and dip when it thins the day', async () => {
    const token = await page.evaluate(() => JSON.parse((globalThis as unknown as BrowserWindow).localStorage.getItem('ausline.session')!).token as string);
    const reply = await stack.http.get(`/v1/batches/${batchId}/series?maxPoints=2000`, { authorization: `Bearer ${token}` });
    const tc1 = reply.body.channels.find((c: { channelCode: string; equipmentKind: string }) => c.channelCode === 'tc1' && c.equipmentKind === 'BATH');
    expect(tc1.count).toBe(DAY);
    expect(tc1.decimated).toBe(true);
    const values = tc1.points.map((p: [number, number]) => p[1]);
    expect(Math.max(...values)).toBe(312.5);
    expect(Math.min(...values)).toBe(287.25);
  });
});
