/**
 * The model calibration screen in Chromium, against the real API and worker. Four loads of the spring clip run on
 * line 1; the first is pulled from the bath after 20 min (the spec's minimum hold is 30 min: a CRITICAL 'hold-min'
 * deviation, an assignable cause). The lab posts one hardness result per load and one retained-austenite result;
 * the worker compares each with its load's predicted band and folds the three hardness results of normal loads into
 * the product's calibration (in force from 3 results), leaving the short-hold load's result out. The screen must
 * show, per quantity, the figures GET /v1/specs/:id/calibration gives, with units, the excluded result with links
 * to its deviation and load, and the note that calibration corrects bands, not results, and decides no disposition.
 * All lab values are invented.
 */
import { describe, expect, it } from 'vitest';
import { formatDateTime } from '../../apps/dashboard/src/lib/time.js';
import { bathLog, createLoad, furnaceLog, PASSWORD, postSamples, setUpPlant } from './plant.js';
import { eventually, openBrowser, PLANT_TIME_ZONE, screenshot, signInUi, startStack, unexpectedProblems } from './support.js';

const stack = await startStack('browser-calibration');
const plant = await setUpPlant(stack);
const { page, problems } = await openBrowser({ width: 1500, height: 900 });
const base = stack.api.url;

const min = 60_000;
const now = Math.floor(Date.now() / 30_000) * 30_000;
/** Minutes in the bath per load: the first one short of the spec's 30 min minimum. */
const HOLDS = [20, 45, 45, 45];
/** Hardness per load (HV, mean of the two readings posted), inside the spec's 460–545 HV: invented. */
const HARDNESS = [470, 500, 506, 494];
const loads: Array<{ id: string; code: string }> = [];
for (let i = 0; i < HOLDS.length; i++) {
  const intoBathMs = now - (HOLDS.length - i) * 60 * min;
  const times = { chargedMs: intoBathMs - 50 * min, outOfFurnaceMs: intoBathMs - 10_000, intoBathMs, outOfBathMs: intoBathMs + HOLDS[i]! * min };
  const code = `CLIP-${101 + i}`;
  loads.push({ id: await createLoad(stack, plant, 0, code, times), code });
  await postSamples(stack, plant.lines[0]!.furnaceId, plant.furnaceKeys[0]!, furnaceLog(times.chargedMs - 30_000, times.outOfFurnaceMs, 30_000));
  await postSamples(stack, plant.lines[0]!.bathId, plant.bathKeys[0]!, bathLog(intoBathMs - 30_000, times.outOfBathMs + 30_000, 30_000));
}

interface Band { p05: number; p50: number; p95: number }
interface Quantity {
  quantity: string;
  calibration: { n: number; bias: number; sd: number; inForce: boolean; updatedAt: string } | null;
  excluded: { results: number; byRule: Record<string, number> };
  history: Array<{ batchId: string; excludedBy: { causes: Array<{ deviationId: string; rule: string }> } | null }>;
  effect: { batches: Array<{ batchId: string; batchCode: string; raw: Band; calibrated: Band; applied: boolean }>; meanNarrowedPct: number | null; meanShift: number | null };
}

/** Figures as a person reads them, written out here rather than taken from the dashboard's formatting code. */
const num = (v: number, digits: number) => v.toFixed(digits).replace('-', '−');
const signed = (v: number, digits: number, unit: string) => `${v > 0 ? '+' : ''}${num(v, digits)} ${unit}`;
const band = (b: Band, unit: string) => `${num(b.p05, 1)}–${num(b.p95, 1)} ${unit} (median ${num(b.p50, 1)} ${unit})`;

describe('model calibration screen in Chromium', { timeout: 240_000 }, () => {
  it('shows per quantity the results used and left out, bias and spread with units, in force, and how the bands moved, as the API gives them', async () => {
    for (const load of loads) {
      await eventually(async () => (await stack.http.get(`/v1/batches/${load.id}`, plant.quality)).body.latestPrediction !== null, 120_000, `the worker's prediction of ${load.code}`);
    }
    const holdMin = await eventually(() => stack.db.prisma.deviation.findFirst({ where: { batchId: loads[0]!.id, rule: 'hold-min' } }), 60_000, 'the hold-min deviation of the short load');
    expect(holdMin.severity).toBe('CRITICAL');

    for (let i = 0; i < loads.length; i++) {
      const hv = HARDNESS[i]!;
      await stack.http.must(`/v1/batches/${loads[i]!.id}/lab-results`, { kind: 'HARDNESS', scale: 'HV', testStandard: 'ISO 6507-1', testForce: 'HV10', readings: [hv - 2, hv + 2], externalRef: `LAB-CAL-${i + 1}` }, plant.lab);
    }
    await stack.http.must(`/v1/batches/${loads[1]!.id}/lab-results`, { kind: 'RETAINED_AUSTENITE', method: 'XRD', testStandard: 'ASTM E975', volumePct: 14.2, externalRef: 'LAB-CAL-RA' }, plant.lab);

    const api = await eventually(async () => {
      const reply = await stack.http.get(`/v1/specs/${plant.specId}/calibration`, plant.metallurgist);
      if (reply.status !== 200) return null;
      const q = (name: string) => (reply.body.quantities as Quantity[]).find((x) => x.quantity === name)!;
      const hardness = q('hardnessHV');
      const retained = q('retainedAusteniteFraction');
      return hardness.calibration?.n === 3 && hardness.excluded.results === 1 && retained.calibration?.n === 1 ? { hardness, retained } : null;
    }, 120_000, 'the worker to fold three hardness results into the calibration and leave the short load out');
    const { hardness, retained } = api;
    expect(hardness.calibration!.inForce).toBe(true);
    expect(retained.calibration!.inForce).toBe(false);
    expect(hardness.excluded.byRule).toEqual({ 'hold-min': 1 });

    // A metallurgist (not quality) reaches it from the product spec in Plant & specs: any signed-in user may look.
    await signInUi(page, base, plant.users.metallurgist, PASSWORD);
    await page.goto(`${base}/#/admin?tab=specs`);
    await page.getByRole('link', { name: 'Model calibration from lab results' }).click();
    await page.waitForSelector('section.calibration[data-calibration-ready="true"]');
    const view = page.locator('section.calibration');
    expect(await view.locator('h1').textContent()).toBe('Model calibration — SPR-55SC');
    const note = await view.locator('.calibration-note').textContent();
    expect(note).toContain('corrects the model\u2019s predicted bands, not the lab results');
    expect(note).toContain('human disposition');

    const cell = (quantity: string, field: string) => view.locator(`tr[data-quantity="${quantity}"] td[data-field="${field}"]`);
    const hv = hardness.calibration!;
    expect(await cell('hardnessHV', 'used').textContent()).toBe('3');
    expect(await cell('hardnessHV', 'excluded').textContent()).toBe('1');
    expect(await cell('hardnessHV', 'bias').textContent()).toBe(signed(hv.bias, 1, 'HV'));
    expect(await cell('hardnessHV', 'spread').textContent()).toBe(`${num(hv.sd, 1)} HV`);
    expect(await cell('hardnessHV', 'in-force').locator('.badge').textContent()).toBe('In force');
    expect(await cell('hardnessHV', 'in-force').locator('.muted').textContent()).toBe('3 results, at least 3 needed');
    expect(await cell('hardnessHV', 'updated').textContent()).toBe(formatDateTime(hv.updatedAt, PLANT_TIME_ZONE));
    // The band of the latest load, raw against calibrated, and the mean effect over the loads, as the API computed them.
    const latest = hardness.effect.batches[0]!;
    expect(latest.applied).toBe(true);
    expect(await cell('hardnessHV', 'band').locator('a').getAttribute('href')).toBe(`#/batches/${latest.batchId}`);
    expect(await cell('hardnessHV', 'band').locator('[data-band="raw"]').textContent()).toBe(band(latest.raw, 'HV'));
    expect(await cell('hardnessHV', 'band').locator('[data-band="calibrated"]').textContent()).toBe(band(latest.calibrated, 'HV'));
    const narrowed = hardness.effect.meanNarrowedPct!;
    expect(await cell('hardnessHV', 'effect').locator('[data-figure="narrowed"]').textContent()).toBe(narrowed >= 0 ? `${num(narrowed, 1)} % narrower` : `${num(-narrowed, 1)} % wider`);
    expect(await cell('hardnessHV', 'effect').locator('[data-figure="shift"]').textContent()).toBe(signed(hardness.effect.meanShift!, 1, 'HV'));

    // Retained austenite: a volume fraction in the API, vol% on screen; one result, so not in force.
    const ra = retained.calibration!;
    expect(await cell('retainedAusteniteFraction', 'used').textContent()).toBe('1');
    expect(await cell('retainedAusteniteFraction', 'bias').textContent()).toBe(signed(ra.bias * 100, 2, 'vol%'));
    expect(await cell('retainedAusteniteFraction', 'spread').textContent()).toBe(`${num(ra.sd * 100, 2)} vol%`);
    expect(await cell('retainedAusteniteFraction', 'in-force').locator('.badge').textContent()).toBe('Not in force');
    expect(await cell('retainedAusteniteFraction', 'effect').textContent()).toBe('none yet: not in force');
    expect(await cell('retainedAusteniteFraction', 'in-force').locator('.muted').textContent()).toBe('1 of 3 results needed; the raw model band stands');

    // The result left out: why (the deviation, linked) and whose (the load, linked).
    const cause = hardness.history.find((r) => r.excludedBy)!;
    expect(cause.batchId).toBe(loads[0]!.id);
    const excluded = view.locator('[data-excluded="hardnessHV"]');
    expect(await excluded.locator('h2').textContent()).toBe('Hardness: 1 result left out');
    expect(await excluded.locator('p').textContent()).toBe('By rule: Hold too short: 1');
    const item = excluded.locator(`li[data-deviation-id="${holdMin.id}"]`);
    expect(await item.locator(`a[href="#/deviations/${holdMin.id}"]`).textContent()).toBe('Hold too short');
    expect(await item.locator(`a[href="#/batches/${loads[0]!.id}"]`).textContent()).toBe('CLIP-101');
    await screenshot(page, '21-calibration');

    // The link goes to the deviation itself.
    await item.locator(`a[href="#/deviations/${holdMin.id}"]`).click();
    await page.waitForFunction(() => (globalThis as unknown as { location: { hash: string } }).location.hash.startsWith('#/deviations/'));
    expect(unexpectedProblems(problems)).toEqual([]);
  });
});
