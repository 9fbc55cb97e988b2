/**
 * Browser tests of the dashboard: the real API and worker in this process (createApiApp, startWorker)
 * on a per-file database and queue prefix, the dashboard built by Vite and served by the API, and
 * Debian's Chromium driven by playwright-core (toolchain.md §4). Nothing is stubbed: the plant is set
 * up through the HTTP API as an admin, a lab and the controllers would do it.
 */
import { execFileSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, expect } from 'vitest';
import { chromium, type Browser, type BrowserContext, type Page } from 'playwright-core';
import { Queue } from 'bullmq';
import { Redis } from 'ioredis';
import { loadConfig, RECOMPUTE_QUEUE, type AppConfig } from '@ausline/contracts';
import { createApiApp, type ApiHandle } from '../../apps/api/src/create-api-app.js';
import { startWorker, type RunningWorker } from '../../apps/worker/src/start-worker.js';
import { createTestDatabase, type TestDatabase } from '../support/database.js';
import { CHROMIUM, requireChromium } from '../support/chromium.js';
import { testAppEnv } from '../support/env.js';
import { testQueuePrefix } from '../support/redis.js';
import type { BrowserElement, BrowserWindow } from './browser-globals.js';

export const REPO = fileURLToPath(new URL('../..', import.meta.url)).replace(/\/$/, '');
export const SCREENSHOTS = join(REPO, 'test-output', 'screenshots');
/** The plant's zone; the browser runs in another one so a screen that used the browser's clock would show. */
export const PLANT_TIME_ZONE = 'Europe/Berlin';
export const BROWSER_TIME_ZONE = 'America/New_York';

/** Fails (never skips) when Chromium is missing, with the command that installs it (tests/support/chromium.ts). */
export { CHROMIUM, requireChromium };

/** Builds the dashboard with Vite into a fresh folder (the same build `npm run build:dashboard` makes). */
export function buildDashboard(): string {
  const outDir = mkdtempSync(join(tmpdir(), 'ausline-dashboard-'));
  execFileSync(process.execPath, [join(REPO, 'node_modules/vite/bin/vite.js'), 'build', join(REPO, 'apps/dashboard'), '--outDir', outDir, '--emptyOutDir', '--logLevel', 'error'], {
    cwd: REPO,
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  if (!existsSync(join(outDir, 'index.html'))) throw new Error(`vite build wrote no index.html into ${outDir}`);
  afterAll(() => rmSync(outDir, { recursive: true, force: true }));
  return outDir;
}

export interface Stack {
  db: TestDatabase;
  config: AppConfig;
  api: ApiHandle;
  worker: RunningWorker;
  http: Http;
}

/** API (serving the built dashboard) and worker, closed after the file. Call at the top level. */
export async function startStack(label: string): Promise<Stack> {
  requireChromium();
  const dashboardDir = buildDashboard();
  const db = await createTestDatabase();
  const config = loadConfig(
    testAppEnv(
      { databaseUrl: db.url, queuePrefix: testQueuePrefix(label) },
      { LOG_LEVEL: 'silent', DASHBOARD_DIR: dashboardDir, PLANT_TIME_ZONE, RECONCILE_INTERVAL_S: '2', STREAM_HEARTBEAT_S: '5' },
    ),
  );
  const api = await createApiApp(config);
  const worker = await startWorker(config, { metricsPort: null, aliveFile: null });
  afterAll(async () => {
    await worker.close();
    await api.close();
  });
  return { db, config, api, worker, http: httpClient(api.url) };
}

/**
 * Waits until the worker has nothing queued or running (so a timing is not taken while it recomputes a
 * day of samples on the same two cores). Returns false when it is still busy after timeoutMs (the caller
 * says so next to its figures rather than failing: timings are printed, not asserted).
 */
export async function waitForWorkerIdle(config: AppConfig, timeoutMs = 120_000): Promise<boolean> {
  const connection = new Redis(config.REDIS_URL, { maxRetriesPerRequest: null });
  const queue = new Queue(RECOMPUTE_QUEUE, { connection, prefix: config.QUEUE_PREFIX });
  try {
    const started = Date.now();
    let quietPolls = 0;
    while (quietPolls < 3) {
      const counts = await queue.getJobCounts('active', 'waiting', 'delayed', 'prioritized');
      quietPolls = Object.values(counts).every((n) => n === 0) ? quietPolls + 1 : 0;
      if (Date.now() - started > timeoutMs) return false;
      await new Promise((r) => setTimeout(r, 300));
    }
    return true;
  } finally {
    await queue.close();
    connection.disconnect();
  }
}

// --- HTTP --------------------------------------------------------------------------------------------

export interface Reply {
  status: number;
  body: any;
}

export interface Http {
  get(path: string, headers?: Record<string, string>): Promise<Reply>;
  post(path: string, body: unknown, headers?: Record<string, string>): Promise<Reply>;
  /** Like post, but throws unless the status is one of `ok`. */
  must(path: string, body: unknown, headers: Record<string, string>, ok?: number[]): Promise<any>;
}

export function httpClient(base: string): Http {
  const call = async (method: string, path: string, body: unknown, headers: Record<string, string> = {}): Promise<Reply> => {
    const res = await fetch(`${base}${path}`, {
      method,
      headers: { ...(body !== undefined ? { 'content-type': 'application/json' } : {}), ...headers },
      ...(body !== undefined ? { body: JSON.stringify(body) } : {}),
    });
    const text = await res.text();
    return { status: res.status, body: text ? JSON.parse(text) : undefined };
  };
  return {
    get: (path, headers) => call('GET', path, undefined, headers),
    post: (path, body, headers) => call('POST', path, body, headers),
    async must(path, body, headers, ok = [200, 201]) {
      const reply = await call('POST', path, body, headers);
      if (!ok.includes(reply.status)) throw new Error(`POST ${path} answered ${reply.status}: ${JSON.stringify(reply.body)}`);
      return reply.body;
    },
  };
}

export const bearer = (token: string): Record<string, string> => ({ authorization: `Bearer ${token}` });
export const apiKey = (key: string): Record<string, string> => ({ authorization: `ApiKey ${key}` });

// --- browser -----------------------------------------------------------------------------------------

export interface BrowserSession {
  browser: Browser;
  context: BrowserContext;
  page: Page;
  /** Page errors, console errors (CSP violations land here) and 5xx answers seen so far. */
  problems: string[];
}

const ARGS = ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'];

export async function openBrowser(options: { width?: number; height?: number; timezoneId?: string } = {}): Promise<BrowserSession> {
  requireChromium();
  const browser = await chromium.launch({ executablePath: CHROMIUM, args: ARGS });
  const context = await browser.newContext({
    viewport: { width: options.width ?? 1366, height: options.height ?? 768 },
    timezoneId: options.timezoneId ?? BROWSER_TIME_ZONE,
    locale: 'en-US',
    acceptDownloads: true,
  });
  const page = await context.newPage();
  const problems: string[] = [];
  page.on('pageerror', (error) => problems.push(`page error: ${error.message}`));
  page.on('console', (msg) => {
    if (msg.type() === 'error') problems.push(`console error: ${msg.text()}`);
  });
  page.on('response', (res) => {
    // 5xx are always wrong; a 404 names its URL here (the console line for it does not).
    if (res.status() >= 500 || res.status() === 404) problems.push(`${res.status()} from ${res.url()}`);
  });
  page.setDefaultTimeout(10_000);
  afterAll(async () => {
    await browser.close();
  });
  return { browser, context, page, problems };
}

/** Console errors that are expected answers the test provoked (e.g. a refused request is logged by Chromium). */
export function unexpectedProblems(problems: string[], allowed: RegExp[] = []): string[] {
  // Chromium logs every failed request as a console error without its URL; the response listener above
  // records 404s and 5xx with their URLs, so the console copies of those are left out here.
  return problems.filter((p) => !/favicon\.ico/.test(p) && !/Failed to load resource: the server responded with a status of 404/.test(p) && !allowed.some((re) => re.test(p)));
}

export async function screenshot(page: Page, name: string, fullPage = true): Promise<string> {
  mkdirSync(SCREENSHOTS, { recursive: true });
  const path = join(SCREENSHOTS, `${name}.png`);
  // From the top, so the sticky header sits where it belongs in a full-page picture.
  if (fullPage) await page.evaluate(() => (globalThis as unknown as BrowserWindow).scrollTo(0, 0));
  await page.screenshot({ path, fullPage });
  return path;
}

/** Signs in through the form. */
export async function signInUi(page: Page, baseUrl: string, email: string, password: string): Promise<void> {
  await page.goto(`${baseUrl}/#/signin`);
  await page.getByLabel('E-mail').fill(email);
  await page.getByLabel('Password').fill(password);
  await page.getByRole('button', { name: 'Sign in' }).click();
  await page.waitForSelector('header.topbar .who-name');
}

export async function signOutUi(page: Page): Promise<void> {
  await page.getByRole('button', { name: 'Sign out' }).click();
  await page.waitForSelector('.signin-card');
}

/** Polls `check` until it returns a truthy value or the time is up. */
export async function eventually<T>(check: () => Promise<T | undefined | null | false>, timeoutMs = 10_000, what = 'condition'): Promise<T> {
  const started = Date.now();
  let last: unknown;
  for (;;) {
    try {
      const value = await check();
      if (value) return value;
    } catch (error) {
      last = error;
    }
    if (Date.now() - started > timeoutMs) throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}${last ? `: ${String(last)}` : ''}`);
    await new Promise((r) => setTimeout(r, 100));
  }
}

/**
 * Pixels of a canvas that are not transparent, once the chart has drawn something. Polls: a chart.js
 * canvas has width 0 until it is laid out, and reading it then would throw, not fail the check. Gives
 * the last count after `timeoutMs` so the caller's assertion states what was seen.
 */
export async function paintedPixels(page: Page, selector: string, atLeast = 1, timeoutMs = 10_000): Promise<number> {
  const started = Date.now();
  for (;;) {
    const count = await page.locator(selector).evaluate((canvas) => {
      const c = canvas as unknown as BrowserElement;
      if (c.width === 0 || c.height === 0) return 0;
      const data = c.getContext('2d')!.getImageData(0, 0, c.width, c.height).data;
      let n = 0;
      for (let i = 3; i < data.length; i += 4) if (data[i]! > 0) n++;
      return n;
    });
    if (count >= atLeast || Date.now() - started > timeoutMs) return count;
    await new Promise((r) => setTimeout(r, 100));
  }
}

export { expect };
