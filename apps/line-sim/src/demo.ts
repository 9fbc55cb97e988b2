/**
 * `npm run demo`: Ausline with an invented plant, on a Postgres and Redis that already run.
 *
 *   npm run demo [-- --reset] [-- --speed 600|max] [-- --hours 24] [-- --no-build] [-- --attach http://api:3000 [--public-url URL]]
 *
 * 1. creates the database at DATABASE_URL if missing (default postgresql://postgres@127.0.0.1:5432/ausline_demo;
 *    --reset drops it first) and applies the migrations;
 * 2. creates the first admin (create-admin: one-time password printed once) or reuses it;
 * 3. builds the api and worker when their dist is older than the sources (and the dashboard when there is
 *    one), starts them as child processes (api on PORT, default 3000) and waits until the api is ready;
 * 4. sets up the plant through the public API (lines, equipment, channels, demo users for each role with
 *    one-time passwords printed once, product specs, controller and lab keys);
 * 5. plays the demo day with its planted problems at --speed (default 600: a day in under three minutes),
 *    ending now, and goes on in real time; prints the dashboard URL.
 * Ctrl-C stops the plant (buffered data sent), then the worker and the api.
 *
 * --attach URL skips 1 and 3 (migrations, build, child processes) and drives an api that runs elsewhere,
 * e.g. the compose service; DATABASE_URL is still needed for create-admin. --public-url is the address
 * printed for people (inside compose the api is http://api:3000, the browser's is http://localhost:3000).
 * Keys and passwords the demo created are kept in .ausline-demo/ (AUSLINE_DEMO_STATE_DIR), readable by
 * you only, so the next run reuses them and continues the plant from where it stopped.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { existsSync, readFileSync, readdirSync, statSync } from 'node:fs';
import { rm } from 'node:fs/promises';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { parseArgs } from 'node:util';
import pg from 'pg';
import { DEMO_ENVIRONMENT } from './demo-environment.js';
import { ApiClient, ApiError } from './http.js';
import { DEMO_USERS, FIRST_ADMIN, PLANT_NAME } from './plant.js';
import { formatLogEvent, loadState, parseSpeed, runPlant, saveState, type DemoState } from './run.js';
import { DEMO_DAY, PLANTED_PROBLEMS } from './scenario.js';
import { setupDemoPlant } from './setup.js';
import type { Simulator } from './simulator.js';

/** Repository root: this file is apps/line-sim/src/demo.ts (or dist/demo.js). */
const ROOT = fileURLToPath(new URL('../../../', import.meta.url));

const DEFAULTS: Partial<Record<(typeof DEMO_ENVIRONMENT)[number], string>> = {
  DATABASE_URL: 'postgresql://postgres@127.0.0.1:5432/ausline_demo',
  REDIS_URL: 'redis://127.0.0.1:6379',
  PORT: '3000',
  QUEUE_PREFIX: 'ausline-demo',
  PLANT_TIME_ZONE: 'Europe/London',
  LOG_LEVEL: 'warn',
  WORKER_METRICS_PORT: '9464',
};

const say = (line = '') => process.stdout.write(`${line}\n`);
const fail = (message: string): never => {
  process.stderr.write(`demo: ${message}\n`);
  process.exit(1);
};

async function main(): Promise<void> {
  const args = parseArgs({
    args: process.argv.slice(2),
    options: {
      reset: { type: 'boolean', default: false },
      speed: { type: 'string', default: '600' },
      hours: { type: 'string', default: String(DEMO_DAY.durationMin / 60) },
      'no-build': { type: 'boolean', default: false },
      attach: { type: 'string' },
      'public-url': { type: 'string' },
      help: { type: 'boolean', default: false },
    },
    strict: true,
  }).values;
  if (args.help) {
    say('usage: npm run demo [-- --reset] [-- --speed 600|max] [-- --hours 24] [-- --no-build] [-- --attach http://host:3000 [--public-url http://localhost:3000]]');
    return;
  }
  const speed = parseSpeed(args.speed);
  const env: Record<string, string> = { ...DEFAULTS, ...(process.env as Record<string, string>) };
  for (const [k, v] of Object.entries(DEFAULTS)) if (!process.env[k]) env[k] = v;
  const databaseUrl = env.DATABASE_URL!;
  const dbName = new URL(databaseUrl).pathname.slice(1) || 'ausline_demo';
  const stateDir = env.AUSLINE_DEMO_STATE_DIR ?? join(ROOT, '.ausline-demo');
  const statePath = join(stateDir, `state-${dbName}.json`);
  const apiUrl = (args.attach ?? `http://127.0.0.1:${env.PORT}`).replace(/\/$/, '');
  const publicUrl = (args['public-url'] ?? (args.attach ? apiUrl : `http://localhost:${env.PORT}`)).replace(/\/$/, '');

  const children: ChildProcess[] = [];
  let simulator: Simulator | null = null;
  let shuttingDown = false;
  let exitCode = 0;
  const shutdown = async (code: number) => {
    if (shuttingDown) {
      if (code !== 1) process.exit(code); // a second Ctrl-C: leave at once (children are killed on exit)
      return;
    }
    shuttingDown = true;
    exitCode = code === 130 || code === 143 ? 0 : code;
    say('\ndemo: stopping the plant (sending what is buffered), then the worker and the api ...');
    simulator?.stop();
    // runPlant resolves once the outboxes are drained; the children are stopped in finally below.
    if (!simulator) await stopChildren(children).then(() => process.exit(exitCode));
  };
  process.on('SIGINT', () => void shutdown(130));
  process.on('SIGTERM', () => void shutdown(143));
  process.on('exit', () => children.forEach((c) => c.exitCode === null && c.kill('SIGKILL')));

  if (!args.attach) {
    if (args.reset) {
      await dropDatabase(databaseUrl, dbName);
      await rm(statePath, { force: true });
      say(`demo: dropped database ${dbName} and the demo state`);
    }
    await ensureDatabase(databaseUrl, dbName);
    if (!args['no-build']) buildIfStale();
    await runNode('migrate', ['libs/db/dist/bin/migrate.js'], env);
  }

  const state = await loadState(statePath, apiUrl);
  state.apiUrl = apiUrl;
  const adminPassword = await ensureAdmin(state, env);
  await saveState(statePath, state);

  if (!args.attach) {
    children.push(startChild('api', 'apps/api/dist/main.js', env), startChild('worker', 'apps/worker/dist/main.js', env));
    for (const child of children) {
      child.once('exit', (code, signal) => {
        if (!shuttingDown) {
          process.stderr.write(`demo: the ${(child as ChildProcess & { label?: string }).label} stopped (${signal ?? `exit code ${code}`}); stopping the demo\n`);
          void shutdown(1);
        }
      });
    }
  }
  await waitReady(apiUrl, children);

  // Sign in as the admin (a state file from an older database may hold a stale password: reset it then).
  let adminToken: string;
  try {
    adminToken = (await new ApiClient(apiUrl).post<{ token: string }>('/v1/auth/login', { email: FIRST_ADMIN.email, password: adminPassword })).token;
  } catch (error) {
    if (!(error instanceof ApiError && error.status === 401)) throw error;
    delete state.passwords[FIRST_ADMIN.email];
    const fresh = await ensureAdmin(state, env);
    adminToken = (await new ApiClient(apiUrl).post<{ token: string }>('/v1/auth/login', { email: FIRST_ADMIN.email, password: fresh })).token;
  }

  const setup = await setupDemoPlant({
    apiUrl,
    adminToken,
    knownPasswords: state.passwords,
    knownKeys: state.keys,
    log: (e) => say(formatLogEvent(e)),
  });
  for (const user of setup.createdUsers) state.passwords[user.email] = user.oneTimePassword;
  state.plant = setup.plant;
  state.keys = setup.keys;
  await saveState(statePath, state);

  const newlyShown = new Set([...setup.createdUsers.map((u) => u.email), ...(adminShownNow ? [FIRST_ADMIN.email] : [])]);
  const line = '─'.repeat(78);
  say(line);
  say(` Ausline demo: ${PLANT_NAME} (an invented plant)`);
  say(` Dashboard:  ${publicUrl}/`);
  say(` API docs:   ${publicUrl}/docs`);
  say(' Sign in as:');
  for (const user of [FIRST_ADMIN, ...DEMO_USERS]) {
    const pw = newlyShown.has(user.email) ? `one-time password ${state.passwords[user.email]}  (shown once)` : `password shown when it was created; kept in ${statePath}`;
    say(`   ${user.email.padEnd(34)} ${user.roles.join('+').padEnd(13)} ${pw}`);
  }
  if (state.demoDay === null) {
    say(` Playing the last ${args.hours} h of plant time at ${Number.isFinite(speed) ? `${speed}×` : 'full speed'}, then live. Planted problems: ${PLANTED_PROBLEMS.join(', ')}.`);
  } else {
    say(' The demo day was played before; the plant goes on with routine production from where it stopped.');
  }
  say(' Ctrl-C stops everything.');
  say(line);

  try {
    await runPlant({
      apiUrl,
      state,
      statePath,
      speed,
      scenario: 'auto',
      hours: Number(args.hours),
      stopAtNow: false,
      log: (e) => {
        if (e.level === 'info' && e.msg === 'load out of the salt') return; // the batch line says enough
        say(formatLogEvent(e));
      },
      onStart: (s) => (simulator = s),
    });
  } finally {
    await stopChildren(children);
  }
  process.exit(exitCode);
}

// ---------------------------------------------------------------------------------------------

let adminShownNow = false;

/** The first admin's password: from the state file, or a new one from create-admin (printed once). */
async function ensureAdmin(state: DemoState, env: Record<string, string>): Promise<string> {
  const known = state.passwords[FIRST_ADMIN.email];
  if (known) return known;
  const script = join(ROOT, 'apps/api/dist/cli/create-admin.js');
  if (!existsSync(script)) fail(`${script} is missing; run npm run build`);
  let result = await capture(process.execPath, [script, '--email', FIRST_ADMIN.email, '--name', FIRST_ADMIN.displayName], env);
  if (result.code !== 0 && /already exists/.test(result.stderr)) {
    // An admin exists but this demo does not know its password (no state file): reset the demo admin's.
    result = await capture(process.execPath, [script, '--email', FIRST_ADMIN.email, '--name', FIRST_ADMIN.displayName, '--force'], env);
  }
  if (result.code !== 0) fail(`create-admin failed: ${result.stderr.trim() || result.stdout.trim()}`);
  const lines = result.stdout.split('\n');
  const at = lines.findIndex((l) => /one-time password/i.test(l));
  const password = lines[at + 1]?.trim();
  if (at < 0 || !password) fail(`could not read the one-time password from create-admin: ${result.stdout}`);
  say(`demo: ${lines[0]}`);
  state.passwords[FIRST_ADMIN.email] = password!;
  adminShownNow = true;
  return password!;
}

function capture(cmd: string, argv: string[], env: Record<string, string>): Promise<{ code: number; stdout: string; stderr: string }> {
  return new Promise((resolve) => {
    const child = spawn(cmd, argv, { cwd: ROOT, env, stdio: ['ignore', 'pipe', 'pipe'] });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (d) => (stdout += d));
    child.stderr.on('data', (d) => (stderr += d));
    child.on('close', (code) => resolve({ code: code ?? 1, stdout, stderr }));
  });
}

async function runNode(label: string, argv: string[], env: Record<string, string>): Promise<void> {
  const result = await capture(process.execPath, argv, env);
  for (const l of `${result.stdout}${result.stderr}`.split('\n').filter(Boolean)) say(`[${label}] ${l}`);
  if (result.code !== 0) fail(`${label} failed (exit code ${result.code})`);
}

function startChild(label: string, file: string, env: Record<string, string>): ChildProcess {
  // Own process group: Ctrl-C reaches the demo only, which stops the plant first and then these.
  const child = spawn(process.execPath, [file], { cwd: ROOT, env, stdio: ['ignore', 'pipe', 'pipe'], detached: true });
  (child as ChildProcess & { label?: string }).label = label;
  const relay = (stream: NodeJS.ReadableStream, out: NodeJS.WritableStream) => {
    let buffer = '';
    stream.on('data', (chunk: Buffer) => {
      buffer += chunk.toString('utf8');
      const parts = buffer.split('\n');
      buffer = parts.pop() ?? '';
      for (const p of parts) if (p.trim()) out.write(`[${label}] ${p}\n`);
    });
  };
  relay(child.stdout!, process.stdout);
  relay(child.stderr!, process.stderr);
  return child;
}

async function stopChildren(children: ChildProcess[]): Promise<void> {
  await Promise.all(
    children.map(
      (child) =>
        new Promise<void>((resolve) => {
          if (child.exitCode !== null || child.signalCode !== null) return resolve();
          const timer = setTimeout(() => child.kill('SIGKILL'), 15_000);
          child.once('exit', () => {
            clearTimeout(timer);
            resolve();
          });
          child.kill('SIGTERM');
        }),
    ),
  );
}

async function waitReady(apiUrl: string, children: ChildProcess[]): Promise<void> {
  const deadline = Date.now() + 90_000;
  for (;;) {
    try {
      const response = await fetch(`${apiUrl}/health/ready`, { signal: AbortSignal.timeout(2_000) });
      if (response.ok) return;
    } catch {
      // not listening yet
    }
    if (children.some((c) => c.exitCode !== null)) fail('the api or the worker stopped while starting (see its log above)');
    if (Date.now() > deadline) fail(`the api at ${apiUrl} did not become ready within 90 s`);
    await new Promise((r) => setTimeout(r, 500));
  }
}

// ---------------------------------------------------------------------------------------------
// Database and build
// ---------------------------------------------------------------------------------------------

function serverUrl(databaseUrl: string): string {
  const url = new URL(databaseUrl);
  url.pathname = '/postgres';
  return url.toString();
}

async function withServer<T>(databaseUrl: string, work: (client: pg.Client) => Promise<T>): Promise<T> {
  const client = new pg.Client({ connectionString: serverUrl(databaseUrl), connectionTimeoutMillis: 5_000 });
  client.on('error', () => undefined);
  try {
    await client.connect();
  } catch (error) {
    const shown = new URL(databaseUrl);
    if (shown.password) shown.password = '***';
    fail(`cannot reach PostgreSQL at ${shown.host} (${error instanceof Error ? error.message : String(error)}); start it or set DATABASE_URL`);
  }
  try {
    return await work(client);
  } finally {
    await client.end().catch(() => undefined);
  }
}

const quoteIdent = (name: string) => `"${name.replace(/"/g, '""')}"`;

async function ensureDatabase(databaseUrl: string, dbName: string): Promise<void> {
  await withServer(databaseUrl, async (client) => {
    const { rowCount } = await client.query('SELECT 1 FROM pg_database WHERE datname = $1', [dbName]);
    if (!rowCount) {
      await client.query(`CREATE DATABASE ${quoteIdent(dbName)}`);
      say(`demo: created database ${dbName}`);
    }
  });
}

async function dropDatabase(databaseUrl: string, dbName: string): Promise<void> {
  await withServer(databaseUrl, (client) => client.query(`DROP DATABASE IF EXISTS ${quoteIdent(dbName)} WITH (FORCE)`));
}

function newestMtimeMs(dirs: string[], skip: (path: string) => boolean): number {
  let newest = 0;
  for (const dir of dirs) {
    const abs = join(ROOT, dir);
    if (!existsSync(abs)) continue;
    for (const entry of readdirSync(abs, { recursive: true, withFileTypes: true })) {
      if (!entry.isFile()) continue;
      const path = join(entry.parentPath, entry.name);
      if (skip(path)) continue;
      newest = Math.max(newest, statSync(path).mtimeMs);
    }
  }
  return newest;
}

function mtimeOr0(file: string): number {
  const abs = join(ROOT, file);
  return existsSync(abs) ? statSync(abs).mtimeMs : 0;
}

function buildIfStale(): void {
  const sources = newestMtimeMs(['apps/api/src', 'apps/worker/src', 'libs/contracts/src', 'libs/db/src', 'libs/compliance/src', 'libs/metallurgy/src'], (p) => p.endsWith('.test.ts'));
  const built = Math.min(mtimeOr0('apps/api/dist/main.js'), mtimeOr0('apps/worker/dist/main.js'), mtimeOr0('libs/db/dist/bin/migrate.js'));
  if (built === 0 || sources > built) runSync('build', ['npm', 'run', 'build']);

  if (existsSync(join(ROOT, 'apps/dashboard/index.html'))) {
    const dashSources = newestMtimeMs(['apps/dashboard/src', 'apps/dashboard/public'], () => false);
    const dashBuilt = mtimeOr0('apps/dashboard/dist/index.html');
    if (dashBuilt === 0 || dashSources > dashBuilt) {
      const scripts = (JSON.parse(readFileSync(join(ROOT, 'package.json'), 'utf8')) as { scripts?: Record<string, string> }).scripts ?? {};
      const ok = runSync('dashboard build', scripts['build:dashboard'] ? ['npm', 'run', 'build:dashboard'] : ['npx', 'vite', 'build', 'apps/dashboard'], true);
      if (!ok) say('demo: the dashboard did not build; the api runs without it (API docs at /docs)');
    }
  }
}

/** Synchronous on purpose: nothing else runs yet, and the build's own output goes straight to the terminal. */
function runSync(label: string, command: string[], tolerate = false): boolean {
  say(`demo: ${label}: ${command.join(' ')}`);
  const status = spawnSync(command[0]!, command.slice(1), { cwd: ROOT, stdio: 'inherit' }).status ?? 1;
  if (status !== 0 && !tolerate) fail(`${label} failed (exit code ${status})`);
  return status === 0;
}

main().catch((error: unknown) => {
  process.stderr.write(`demo: ${error instanceof Error ? (error.stack ?? error.message) : String(error)}\n`);
  process.exit(1);
});
