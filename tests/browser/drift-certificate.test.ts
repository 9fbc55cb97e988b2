/**
 * The drift view and the certificate record in Chromium, against the real API and worker. Twelve loads of
 * the spring clip run one after the other on line 1; from the seventh on the bath creeps up 0.6 °C per
 * load (still inside the 290–310 °C band). The spec's bath-temperature chart starts from known limits
 * (centre 300 °C, σ 0.8 °C: a prior capability study, invented), so the EWMA/CUSUM judge from the first
 * load. The view must show the chart with its signals before any load breaks the spec; the certificate
 * record of a load must show the same record digest as the API, its lab results with values and units
 * against the acceptance criteria in plain words, and print to PDF.
 */
import { mkdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { bathLog, createLoad, furnaceLog, PASSWORD, postSamples, setUpPlant, springCriteria, springWindow, wiggle } from './plant.js';
import { formatDateTime } from '../../apps/dashboard/src/lib/time.js';
import { eventually, openBrowser, paintedPixels, PLANT_TIME_ZONE, REPO, screenshot, signInUi, startStack, unexpectedProblems } from './support.js';

const stack = await startStack('browser-drift');
const plant = await setUpPlant(stack);
const { page, problems } = await openBrowser();
const base = stack.api.url;

// Version 2 of the spec: same window and criteria plus a tensile minimum and a retained-austenite maximum (so
// the certificate judges three lab tests), drift chart of the bath mean from known limits.
const v2 = await stack.http.must(`/v1/specs/${plant.specId}/versions`, {
  chemistryLimits: { C: { minWtPct: 0.51, maxWtPct: 0.59 }, Si: { minWtPct: 1.2, maxWtPct: 1.6 } },
  processWindow: springWindow,
  acceptanceCriteria: { ...springCriteria, tensile: { minTensileMPa: 1400, minElongationPct: 6 }, maxRetainedAusteniteFraction: 0.2 },
}, plant.quality);
const put = await fetch(`${base}/v1/specs/${plant.specId}/versions/${v2.version}/drift-charts`, {
  method: 'PUT',
  headers: { 'content-type': 'application/json', ...plant.quality },
  body: JSON.stringify({ metrics: { 'bath-mean-temp-hold': { limits: { centre: 300, sigma: 0.8 } } } }),
});
expect(put.status).toBe(200);
await stack.http.must(`/v1/specs/${plant.specId}/versions/${v2.version}/approve`, {}, plant.quality);

const min = 60_000;
const LOADS = 12;
const now = Math.floor(Date.now() / 30_000) * 30_000;
const loadIds: string[] = [];
for (let i = 0; i < LOADS; i++) {
  const intoBathMs = now - (LOADS - i) * 55 * min;
  const times = { chargedMs: intoBathMs - 50 * min, outOfFurnaceMs: intoBathMs - 10_000, intoBathMs, outOfBathMs: intoBathMs + 45 * min };
  const id = await createLoad(stack, plant, 0, `CLIP-${String(i + 1).padStart(3, '0')}`, times);
  loadIds.push(id);
  const shiftC = i >= 6 ? 0.6 * (i - 5) : 0;
  await postSamples(stack, plant.lines[0]!.furnaceId, plant.furnaceKeys[0]!, furnaceLog(times.chargedMs - 30_000, times.outOfFurnaceMs, 30_000));
  await postSamples(stack, plant.lines[0]!.bathId, plant.bathKeys[0]!, bathLog(intoBathMs - 30_000, times.outOfBathMs + 30_000, 30_000).map((s, k) => ({ ...s, value: s.value + shiftC + wiggle(k + i, 0.2) })));
}

interface DriftReply {
  status: string;
  lotCount: number;
  signals: Array<{ index: number; adverse: boolean }>;
  firstSpecBreach: unknown;
}

describe('drift view and certificate record in Chromium', { timeout: 120_000 }, () => {
  it('charts the bath mean across the loads with its signals, before any load breaks the spec', async () => {
    const query = `specId=${plant.specId}&lineId=${plant.lines[0]!.id}&metric=bath-mean-temp-hold`;
    const chart = await eventually(async () => {
      const reply = await stack.http.get(`/v1/drift?${query}`, plant.quality);
      const body = reply.body as DriftReply;
      return reply.status === 200 && body.status === 'monitoring' && body.lotCount === LOADS && body.signals.length > 0 ? body : null;
    }, 90_000, 'the worker to chart all twelve loads and signal');
    expect(chart.firstSpecBreach).toBeNull();
    expect(Math.min(...chart.signals.map((s) => s.index))).toBeGreaterThanOrEqual(6);

    await signInUi(page, base, plant.users.quality, PASSWORD);
    await page.goto(`${base}/#/drift?${query}`);
    await page.waitForSelector('section.drift[data-drawn-at]');
    const drift = page.locator('section.drift');
    expect(await drift.locator('.card h2').first().textContent()).toContain('SPR-55SC on AUS-1');
    expect(await drift.locator('.card p').first().textContent()).toContain(`Monitoring: ${LOADS} lots charted`);
    expect(await drift.locator('.signals li').count()).toBeGreaterThan(0);
    for (const name of ['individuals', 'ewma', 'cusum']) {
      const painted = await paintedPixels(page, `[data-chart="drift-${name}"] canvas`, 2001);
      expect(painted, `${name} chart painted`).toBeGreaterThan(2000);
    }
    await screenshot(page, '16-drift');
  });

  it('shows the certificate record of a load with the API\u2019s record digest, and prints it to PDF', async () => {
    const id = loadIds[0]!;
    // The lab's results of CLIP-001: hardness (with the time measured), tensile and retained austenite (without).
    const hardnessMeasuredAt = new Date(now - 30 * min).toISOString();
    await stack.http.must(`/v1/batches/${id}/lab-results`, { kind: 'HARDNESS', scale: 'HV', testStandard: 'ISO 6507-1', testForce: 'HV10', readings: [488, 495, 501, 490, 497], externalRef: 'LAB-26-2001', measuredAt: hardnessMeasuredAt }, plant.lab);
    await stack.http.must(`/v1/batches/${id}/lab-results`, { kind: 'TENSILE', testStandard: 'ISO 6892-1', rmMPa: 1580, rp02MPa: 1390, elongationPct: 8.5, externalRef: 'LAB-26-2002' }, plant.lab);
    await stack.http.must(`/v1/batches/${id}/lab-results`, { kind: 'RETAINED_AUSTENITE', method: 'XRD', testStandard: 'ASTM E975', volumePct: 12.4, externalRef: 'LAB-26-2003' }, plant.lab);
    const api = (await stack.http.get(`/v1/batches/${id}/certificate`, plant.quality)).body;
    await page.goto(`${base}/#/batches/${id}/certificate`);
    await page.waitForSelector('body[data-certificate-ready="true"]');
    const cert = page.locator('section.certificate');
    expect(await cert.locator('h1').textContent()).toBe('Heat-treatment record — load CLIP-001');
    expect(await cert.locator('.cert-head code').textContent()).toBe(api.recordDigest);
    expect(await cert.textContent()).toContain('H-26-0311');
    expect(await cert.locator('.signature').count()).toBe(1);

    // Lab results: what was measured, with units, and when ('Measured at', in the plant's zone).
    const labTable = cert.locator('table.cert-table', { has: page.locator('caption', { hasText: 'Lab results' }) });
    expect(await labTable.locator('thead th').allTextContents()).toEqual(['Test', 'Result', 'Standard', 'Ref', 'Measured at', 'Against prediction']);
    const labRow = async (ref: string) => labTable.locator(`tr[data-lab-ref="${ref}"] td`).allTextContents();
    expect((await labRow('LAB-26-2001')).slice(0, 5)).toEqual(['Hardness (HV)', '494 HV mean of 5 readings (488–501 HV)', 'ISO 6507-1', 'LAB-26-2001', formatDateTime(hardnessMeasuredAt, PLANT_TIME_ZONE)]);
    expect((await labRow('LAB-26-2002')).slice(0, 5)).toEqual(['Tensile', 'Rm 1580 MPa, Rp0.2 1390 MPa, A 8.5 %', 'ISO 6892-1', 'LAB-26-2002', 'not stated']);
    expect((await labRow('LAB-26-2003')).slice(0, 2)).toEqual(['Retained austenite', '12.4 vol% (XRD)']);
    // Acceptance: requirement and what was found in words with units (no key names of the record).
    const acceptance = cert.locator('table.cert-table', { has: page.locator('caption', { hasText: 'Acceptance tests' }) });
    const acceptanceRow = async (criterion: string) => acceptance.locator(`tr[data-criterion="${criterion}"] td`).allTextContents();
    expect(await acceptanceRow('hardness')).toEqual(['Hardness', 'HV 460–545', '5 readings, 488–501 HV, mean 494 HV', 'pass']);
    expect(await acceptanceRow('tensile')).toEqual(['Tensile strength', 'Rm ≥ 1400 MPa, A ≥ 6 %', '1 test, lowest Rm 1580 MPa, lowest Rp0.2 1390 MPa, lowest A 8.5 %', 'pass']);
    expect(await acceptanceRow('retained-austenite')).toEqual(['Retained austenite', '≤ 20 vol%', '12.4 vol%', 'pass']);
    expect(await cert.textContent()).not.toMatch(/minRmMPa|maxVolumePct|minElongationPct|scale HV|readings 5|hardnessHV|retainedAusteniteFraction/);
    // The standing and the prediction name rules and verdicts as the rest of the page does, not by their ids.
    expect(await cert.locator('.cert-batch').textContent()).not.toMatch(/predicted-[a-z-]+|: at-risk|\((MINOR|MAJOR|CRITICAL)\)/);
    await screenshot(page, '17-certificate');

    await page.emulateMedia({ media: 'print' });
    await screenshot(page, '18-certificate-print');
    expect(await page.locator('header.topbar').isVisible()).toBe(false);
    mkdirSync(join(REPO, 'test-output'), { recursive: true });
    const pdfPath = join(REPO, 'test-output', 'certificate-CLIP-001.pdf');
    await page.pdf({ path: pdfPath, format: 'A4', printBackground: true });
    const pdf = readFileSync(pdfPath);
    expect(pdf.subarray(0, 5).toString()).toBe('%PDF-');
    expect(pdf.length).toBeGreaterThan(10_000);
    await page.emulateMedia({ media: 'screen' });

    // The lot record gathers the loads of that plant day.
    await page.getByRole('link', { name: /^Whole lot / }).click();
    await page.waitForSelector('body[data-certificate-ready="true"]');
    expect(await page.locator('section.certificate h1').textContent()).toMatch(/^Heat-treatment record — lot SPR-55SC:H-26-0311:\d{4}-\d{2}-\d{2}$/);
    await screenshot(page, '17a-lot-certificate');
    expect(unexpectedProblems(problems)).toEqual([]);
  });
});
