/**
 * What the service benchmarks (bench/ingest.ts, bench/recompute.ts) share: the machine they ran on, a
 * fresh migrated database on the local Postgres, the built api/worker started as child processes (as in
 * production: `node apps/*\/dist/main.js`), an invented plant with one API key per controller, a
 * keep-alive HTTP client, and small statistics/table helpers.
 *
 * Everything talks to 127.0.0.1 only. Postgres: BENCH_DATABASE_URL (its server part; a database
 * `ausline_bench_<epochS>_<hex>` is created and dropped), default the test server
 * postgresql://postgres@127.0.0.1:5432/postgres. Redis: BENCH_REDIS_URL, default redis://127.0.0.1:6379,
 * keys under `ausline-bench:<runId>` (deleted at the end).
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { existsSync, readFileSync } from 'node:fs';
import { Agent, request } from 'node:http';
import { createServer } from 'node:net';
import os from 'node:os';
import { fileURLToPath } from 'node:url';
import { Redis } from 'ioredis';
import pg from 'pg';
import { createPrismaClient, type PrismaClient } from '@ausline/db';
import { runMigrations } from '../../libs/db/src/migrate/run-migrations.js';
import { hashPassword, newApiKey } from '../../apps/api/src/auth/secrets.js';

export const REPO_ROOT = fileURLToPath(new URL('../../', import.meta.url));
const MIGRATIONS_DIR = fileURLToPath(new URL('../../prisma/migrations', import.meta.url));

export const BENCH_DATABASE_URL = process.env.BENCH_DATABASE_URL ?? 'postgresql://postgres@127.0.0.1:5432/postgres';
export const BENCH_REDIS_URL = process.env.BENCH_REDIS_URL ?? 'redis://127.0.0.1:6379';

/** The machine and its load, printed with every figure (the figures mean little without them). */
export interface MachineInfo {
  cpus: number;
  cpuModel: string;
  memoryGiB: number;
  loadAverage: [number, number, number];
  node: string;
  postgres: string;
}

export async function machineInfo(databaseUrl = BENCH_DATABASE_URL): Promise<MachineInfo> {
  const client = new pg.Client({ connectionString: databaseUrl });
  await client.connect();
  try {
    const { rows } = await client.query<{ v: string }>("SELECT current_setting('server_version') AS v");
    const load = os.loadavg();
    return {
      cpus: os.availableParallelism(),
      cpuModel: os.cpus()[0]?.model.trim() ?? 'unknown',
      memoryGiB: Math.round(os.totalmem() / 2 ** 30),
      loadAverage: [round2(load[0]!), round2(load[1]!), round2(load[2]!)],
      node: process.version,
      postgres: rows[0]!.v,
    };
  } finally {
    await client.end();
  }
}

export function describeMachine(m: MachineInfo): string {
  return `${m.cpus} CPUs (${m.cpuModel}), ${m.memoryGiB} GiB, load average ${m.loadAverage.join(' / ')} (1/5/15 min), node ${m.node}, PostgreSQL ${m.postgres}`;
}

const round2 = (x: number) => Math.round(x * 100) / 100;

export function databaseUrlFor(name: string, base = BENCH_DATABASE_URL): string {
  const url = new URL(base);
  url.pathname = `/${name}`;
  return url.toString();
}

export interface BenchDatabase {
  name: string;
  url: string;
  drop(): Promise<void>;
}

async function withAdmin<T>(work: (c: pg.Client) => Promise<T>): Promise<T> {
  const client = new pg.Client({ connectionString: BENCH_DATABASE_URL, connectionTimeoutMillis: 5_000 });
  await client.connect();
  try {
    return await work(client);
  } finally {
    await client.end().catch(() => {});
  }
}

/** A new database with every migration applied; drop() removes it (WITH FORCE). */
export async function createBenchDatabase(): Promise<BenchDatabase> {
  const name = `ausline_bench_${Math.floor(Date.now() / 1000)}_${randomBytes(3).toString('hex')}`;
  await withAdmin((c) => c.query(`CREATE DATABASE "${name}"`));
  const url = databaseUrlFor(name);
  try {
    await runMigrations(url, MIGRATIONS_DIR);
  } catch (error) {
    await withAdmin((c) => c.query(`DROP DATABASE IF EXISTS "${name}" WITH (FORCE)`));
    throw error;
  }
  let dropped = false;
  return {
    name,
    url,
    async drop() {
      if (dropped) return;
      dropped = true;
      await withAdmin((c) => c.query(`DROP DATABASE IF EXISTS "${name}" WITH (FORCE)`));
    },
  };
}

/**
 * Builds the api and worker (tsc -b: incremental, seconds when nothing changed). BENCH_NO_BUILD=1 skips it
 * (the dist/ folders must then be current).
 */
export function ensureBuilt(): void {
  if (process.env.BENCH_NO_BUILD === '1') return;
  const started = Date.now();
  const run = spawnSync(process.execPath, [`${REPO_ROOT}node_modules/typescript/bin/tsc`, '-b', 'apps/api', 'apps/worker'], { cwd: REPO_ROOT, encoding: 'utf8' });
  const seconds = ((Date.now() - started) / 1000).toFixed(1);
  if (run.status !== 0) {
    // tsc -b still emits when some file has a type error (TypeScript >= 5.6); a half-edited file of
    // someone else's must not stop a benchmark, but it is reported.
    const firstLines = `${run.stdout}${run.stderr}`.trim().split('\n').slice(0, 5).join('\n');
    console.log(`build (tsc -b apps/api apps/worker): ${seconds} s, WITH TYPE ERRORS (output still emitted):\n${firstLines}`);
    for (const kind of ['api', 'worker']) {
      if (!existsSync(`${REPO_ROOT}apps/${kind}/dist/main.js`)) throw new Error(`apps/${kind}/dist/main.js missing after the build`);
    }
    return;
  }
  console.log(`build (tsc -b apps/api apps/worker): ${seconds} s`);
}

export async function freePort(): Promise<number> {
  const server = createServer();
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const { port } = server.address() as { port: number };
  await new Promise<void>((resolve) => server.close(() => resolve()));
  return port;
}

export interface ChildService {
  proc: ChildProcess;
  /** Base URL (api only). */
  url: string;
  /** User + system CPU seconds this process has used so far (from /proc). */
  cpuSeconds(): number;
  /** Lines the process wrote to stderr (kept for failure messages). */
  stderr: string[];
  stop(signal?: NodeJS.Signals): Promise<void>;
}

const CLOCK_TICKS_PER_S = 100; // Linux USER_HZ

/** User + system CPU seconds of any process on this machine (Linux /proc; NaN when it is gone). */
export function cpuSecondsOf(pid: number): number {
  try {
    const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
    const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
    // After the command name: state is field 3; utime and stime are fields 14 and 15 (1-based).
    return (Number(fields[11]) + Number(fields[12])) / CLOCK_TICKS_PER_S;
  } catch {
    return NaN;
  }
}

export function serviceEnv(options: { databaseUrl: string; queuePrefix: string; port?: number }, extra: Record<string, string> = {}): Record<string, string> {
  return {
    PATH: process.env.PATH ?? '/usr/bin:/bin',
    DATABASE_URL: options.databaseUrl,
    REDIS_URL: BENCH_REDIS_URL,
    QUEUE_PREFIX: options.queuePrefix,
    HOST: '127.0.0.1',
    PORT: String(options.port ?? 0),
    LOG_LEVEL: 'warn',
    PLANT_TIME_ZONE: 'UTC',
    WORKER_METRICS_PORT: '0',
    ...extra,
  };
}

/** Starts `node apps/<kind>/dist/main.js`; for the api, waits until /health/live answers. */
export async function startService(kind: 'api' | 'worker', env: Record<string, string>): Promise<ChildService> {
  // e.g. BENCH_NODE_ARGS='--cpu-prof --cpu-prof-dir=/tmp/prof' to profile the services under load
  const nodeArgs = (process.env.BENCH_NODE_ARGS ?? '').split(' ').filter(Boolean);
  const proc = spawn(process.execPath, [...nodeArgs, `apps/${kind}/dist/main.js`], { cwd: REPO_ROOT, env, stdio: ['ignore', 'ignore', 'pipe'] });
  const stderr: string[] = [];
  proc.stderr!.setEncoding('utf8').on('data', (chunk: string) => {
    stderr.push(chunk);
    if (stderr.length > 200) stderr.shift();
  });
  const exited = new Promise<void>((resolve) => proc.once('exit', () => resolve()));
  const url = kind === 'api' ? `http://127.0.0.1:${env.PORT}` : '';
  const service: ChildService = {
    proc,
    url,
    stderr,
    cpuSeconds: () => cpuSecondsOf(proc.pid!),
    async stop(signal = 'SIGTERM') {
      if (proc.exitCode !== null || proc.signalCode !== null) return;
      proc.kill(signal);
      const timer = setTimeout(() => proc.kill('SIGKILL'), 15_000);
      await exited;
      clearTimeout(timer);
    },
  };
  if (kind === 'api') {
    const deadline = Date.now() + 60_000;
    for (;;) {
      if (proc.exitCode !== null) throw new Error(`api exited with ${proc.exitCode}: ${stderr.join('')}`);
      const ok = await fetch(`${url}/health/live`).then((r) => r.ok, () => false);
      if (ok) break;
      if (Date.now() > deadline) {
        await service.stop('SIGKILL');
        throw new Error(`api did not answer /health/live within 60 s: ${stderr.join('')}`);
      }
      await sleep(100);
    }
  }
  return service;
}

export const sleep = (ms: number) => new Promise<void>((resolve) => setTimeout(resolve, ms));

// ---------------------------------------------------------------------------------------------------
// An invented plant: lines of furnaces/baths, N temperature channels each, one EQUIPMENT key per piece
// of equipment (scoped to it), and a batch in progress per line (CHARGED, no OUT_OF_BATH), so every
// sample post also finds its batch and queues a recompute, as on a working line.
// ---------------------------------------------------------------------------------------------------

export interface BenchController {
  equipmentId: string;
  equipmentCode: string;
  kind: 'FURNACE' | 'BATH';
  lineIndex: number;
  channelCodes: string[];
  channelIds: string[];
  /** `ApiKey <key>` scoped to this equipment only. */
  authorization: string;
}

export interface BenchPlant {
  controllers: BenchController[];
  lines: Array<{ id: string; batchId: string; furnaceId: string; bathId: string }>;
}

export const BENCH_PROCESS_WINDOW = {
  austenitize: { minTempC: 890, maxTempC: 910, minMinutes: 60, maxMinutes: 120 },
  maxTransferS: 20,
  bath: { minTempC: 360, maxTempC: 380, maxExcursionS: 120, minHoldMin: 60, maxHoldMin: 120 },
  maxChannelGapS: 30,
  flatline: { minDurationS: 600, epsilonC: 0.05 },
  plausible: { minTempC: 0, maxTempC: 1200, maxRateCPerS: 50 },
  twinTolerance: { maxDiffC: 8, minDurationS: 60 },
};

export async function createBenchPlant(
  prisma: PrismaClient,
  options: {
    lines: number;
    controllersPerLine: number;
    channelsPerController: number;
    chargedAtMs: number;
    /** Also record OUT_OF_FURNACE (12 s before) and INTO_BATH at this time: the load is in the bath. */
    inBathSinceMs?: number;
  },
): Promise<BenchPlant> {
  const tag = randomBytes(3).toString('hex');
  const heat = await prisma.heat.create({
    data: { heatNumber: `BH-${tag}`, material: 'DUCTILE_IRON', grade: 'EN-GJS-1050-6', chemistryWtPct: { C: 3.6, Si: 2.5, Mn: 0.3, Cu: 0.6, Ni: 0.5 }, source: 'bench' },
  });
  const spec = await prisma.productSpec.create({ data: { code: `BP-${tag}`, name: 'Bench part', material: 'DUCTILE_IRON' } });
  const version = await prisma.productSpecVersion.create({
    data: { specId: spec.id, version: 1, status: 'APPROVED', chemistryLimits: {}, processWindow: BENCH_PROCESS_WINDOW, acceptanceCriteria: {} },
  });
  const plant: BenchPlant = { controllers: [], lines: [] };
  for (let l = 0; l < options.lines; l++) {
    const line = await prisma.line.create({ data: { code: `BL${l}-${tag}`, name: `Bench line ${l}`, timeZone: 'UTC' } });
    let furnaceId = '';
    let bathId = '';
    for (let e = 0; e < options.controllersPerLine; e++) {
      const kind = e % 2 === 0 ? 'FURNACE' : 'BATH';
      const code = `BL${l}-E${e}-${tag}`;
      const equipment = await prisma.equipment.create({ data: { lineId: line.id, kind, code, name: `${kind} ${e}` } });
      if (kind === 'FURNACE' && !furnaceId) furnaceId = equipment.id;
      if (kind === 'BATH' && !bathId) bathId = equipment.id;
      const channelCodes = Array.from({ length: options.channelsPerController }, (_, c) => `tc${String(c + 1).padStart(2, '0')}`);
      const channelIds: string[] = [];
      for (const c of channelCodes) {
        const ch = await prisma.channel.create({
          data: { equipmentId: equipment.id, code: c, quantity: 'TEMPERATURE_C', role: kind === 'FURNACE' ? 'FURNACE_ZONE' : 'BATH_TC' },
        });
        channelIds.push(ch.id);
      }
      const { key, prefix, secretHash } = newApiKey();
      await prisma.apiKey.create({
        data: { prefix, secretHash, label: `bench ${code}`, scope: 'EQUIPMENT', equipment: { create: [{ equipmentId: equipment.id }] } },
      });
      plant.controllers.push({ equipmentId: equipment.id, equipmentCode: code, kind, lineIndex: l, channelCodes, channelIds, authorization: `ApiKey ${key}` });
    }
    const batch = await prisma.batch.create({
      data: { code: `BLOAD${l}-${tag}`, lineId: line.id, heatId: heat.id, specVersionId: version.id, partCount: 40, weightKg: 400, sectionShape: 'CYLINDER', sectionSizeMm: 25 },
    });
    await prisma.loadEvent.create({ data: { batchId: batch.id, kind: 'CHARGED', at: new Date(options.chargedAtMs), equipmentId: furnaceId } });
    if (options.inBathSinceMs !== undefined) {
      await prisma.loadEvent.createMany({
        data: [
          { batchId: batch.id, kind: 'OUT_OF_FURNACE', at: new Date(options.inBathSinceMs - 12_000), equipmentId: furnaceId },
          { batchId: batch.id, kind: 'INTO_BATH', at: new Date(options.inBathSinceMs), equipmentId: bathId },
        ],
      });
    }
    plant.lines.push({ id: line.id, batchId: batch.id, furnaceId, bathId });
  }
  return plant;
}

export function benchPrisma(url: string): PrismaClient {
  return createPrismaClient(url, { maxConnections: 4 });
}

// ---------------------------------------------------------------------------------------------------
// HTTP on loopback with keep-alive (the way a controller's client keeps its connection).
// ---------------------------------------------------------------------------------------------------

export interface PostResult {
  status: number;
  body: string;
}

export function keepAliveAgent(maxSockets: number): Agent {
  return new Agent({ keepAlive: true, maxSockets, maxFreeSockets: maxSockets });
}

export function postJson(agent: Agent, baseUrl: string, path: string, body: string, headers: Record<string, string>): Promise<PostResult> {
  const url = new URL(path, baseUrl);
  if (url.hostname !== '127.0.0.1' && url.hostname !== 'localhost') throw new Error(`refusing to send benchmark traffic to ${url.hostname}`);
  return new Promise((resolve, reject) => {
    const req = request(
      { agent, host: url.hostname, port: url.port, path: url.pathname, method: 'POST', headers: { 'content-type': 'application/json', 'content-length': Buffer.byteLength(body), ...headers } },
      (res) => {
        let text = '';
        res.setEncoding('utf8');
        res.on('data', (chunk: string) => (text += chunk));
        res.on('end', () => resolve({ status: res.statusCode ?? 0, body: text }));
        res.on('error', reject);
      },
    );
    req.on('error', reject);
    req.end(body);
  });
}

// ---------------------------------------------------------------------------------------------------
// Statistics and printing
// ---------------------------------------------------------------------------------------------------

/** Nearest-rank percentile of an ascending array (p in 0..100). */
export function percentile(sortedAscending: number[], p: number): number {
  if (sortedAscending.length === 0) return NaN;
  const rank = Math.ceil((p / 100) * sortedAscending.length);
  return sortedAscending[Math.min(sortedAscending.length, Math.max(1, rank)) - 1]!;
}

export function fmt(x: number, digits?: number): string {
  if (!Number.isFinite(x)) return '–';
  const d = digits ?? (Math.abs(x) >= 100 ? 0 : Math.abs(x) >= 10 ? 1 : 2);
  return x.toLocaleString('en-US', { minimumFractionDigits: d, maximumFractionDigits: d });
}

export function printTable(headers: string[], rows: string[][]): void {
  const widths = headers.map((h, i) => Math.max(h.length, ...rows.map((r) => (r[i] ?? '').length)));
  const line = (cells: string[]) => cells.map((c, i) => (i === 0 ? c.padEnd(widths[i]!) : c.padStart(widths[i]!))).join('  ');
  console.log(line(headers));
  console.log(widths.map((w) => '-'.repeat(w)).join('  '));
  for (const r of rows) console.log(line(r));
}

export async function deleteRedisPrefix(prefix: string, redisUrl = BENCH_REDIS_URL): Promise<number> {
  const redis = new Redis(redisUrl, { maxRetriesPerRequest: 1, connectTimeout: 2_000 });
  let deleted = 0;
  try {
    let cursor = '0';
    do {
      const [next, keys] = await redis.scan(cursor, 'MATCH', `${prefix}*`, 'COUNT', 1000);
      cursor = next;
      if (keys.length > 0) deleted += await redis.del(...keys);
    } while (cursor !== '0');
  } finally {
    redis.disconnect();
  }
  return deleted;
}

// ---------------------------------------------------------------------------------------------------
// A signed-in user and the live event stream
// ---------------------------------------------------------------------------------------------------

/** A METALLURGIST user created in the database, signed in through POST /v1/auth/login; returns the session token. */
export async function signedInUser(prisma: PrismaClient, apiUrl: string): Promise<string> {
  const email = `bench-${randomBytes(3).toString('hex')}@plant.test`;
  const password = `bench-${randomBytes(12).toString('hex')}`;
  await prisma.user.create({ data: { email, displayName: 'Bench metallurgist', roles: ['METALLURGIST'], passwordHash: await hashPassword(password) } });
  const res = await fetch(`${apiUrl}/v1/auth/login`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ email, password }) });
  if (!res.ok) throw new Error(`login failed: ${res.status} ${await res.text()}`);
  return ((await res.json()) as { token: string }).token;
}

export interface StreamEvent {
  receivedAt: number;
  data: { type: string; batchId?: string | null; [k: string]: unknown };
}

/** Reads GET /v1/stream (server-sent events) and calls onEvent for each JSON event; close() ends it. */
export async function openStream(apiUrl: string, token: string, query: string, onEvent: (e: StreamEvent) => void): Promise<{ close(): void }> {
  const controller = new AbortController();
  const res = await fetch(`${apiUrl}/v1/stream?${query}`, { headers: { accept: 'text/event-stream', authorization: `Bearer ${token}` }, signal: controller.signal });
  if (!res.ok || !res.body) throw new Error(`stream refused: ${res.status}`);
  const reader = res.body.pipeThrough(new TextDecoderStream()).getReader();
  void (async () => {
    let buffer = '';
    try {
      for (;;) {
        const { value, done } = await reader.read();
        if (done) return;
        buffer += value;
        let end: number;
        while ((end = buffer.indexOf('\n\n')) !== -1) {
          const block = buffer.slice(0, end);
          buffer = buffer.slice(end + 2);
          const data = block
            .split('\n')
            .filter((l) => l.startsWith('data: '))
            .map((l) => l.slice(6))
            .join('\n');
          if (data) onEvent({ receivedAt: performance.now(), data: JSON.parse(data) as StreamEvent['data'] });
        }
      }
    } catch {
      // aborted by close()
    }
  })();
  return { close: () => controller.abort() };
}
