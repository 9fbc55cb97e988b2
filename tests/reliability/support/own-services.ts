/**
 * Private PostgreSQL and Redis servers for the fault tests, so stopping and restarting them never
 * disturbs the machine's shared services or the other test files running at the same time.
 *
 *   const pg = await startOwnPostgres();      // initdb + pg_ctl in a temp dir, a free port on 127.0.0.1
 *   await pg.restart('immediate');            // crash-like stop (no checkpoint), then start again
 *   const redis = await startOwnRedis();      // redis-server child, append-only file on, a free port
 *   await redis.stop(); await redis.start();  // graceful stop (AOF flushed), same port and data dir
 *
 * PostgreSQL refuses to run as root: as root, initdb and pg_ctl run as the `postgres` OS user (runuser)
 * with the data directory handed to it. If no private cluster can be started, the error says why and
 * the shared server is never used instead.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { chownSync, existsSync, mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { createConnection, createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import pg from 'pg';

export async function freePort(): Promise<number> {
  const server = createServer();
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const { port } = server.address() as { port: number };
  await new Promise<void>((resolve) => server.close(() => resolve()));
  return port;
}

const sleep = (ms: number) => new Promise<void>((resolve) => setTimeout(resolve, ms));

// ---------------------------------------------------------------------------------------------------
// PostgreSQL
// ---------------------------------------------------------------------------------------------------

export interface OwnPostgres {
  port: number;
  dataDir: string;
  /** postgresql://postgres@127.0.0.1:<port>/<database> */
  urlFor(database: string): string;
  stop(mode?: 'fast' | 'immediate'): Promise<void>;
  start(): Promise<void>;
  restart(mode?: 'fast' | 'immediate'): Promise<void>;
  /** Stops the server and deletes its directory. Idempotent. */
  destroy(): Promise<void>;
}

function postgresBinDir(): string {
  const root = '/usr/lib/postgresql';
  const versions = existsSync(root) ? readdirSync(root).filter((v) => existsSync(join(root, v, 'bin', 'initdb'))) : [];
  versions.sort((a, b) => Number(b) - Number(a));
  if (versions.length === 0) {
    throw new Error(`reliability tests: no PostgreSQL server binaries under ${root}/<version>/bin (initdb, pg_ctl); install postgresql`);
  }
  return join(root, versions[0]!, 'bin');
}

function userIds(name: string): { uid: number; gid: number } | null {
  const line = readFileSync('/etc/passwd', 'utf8')
    .split('\n')
    .find((l) => l.startsWith(`${name}:`));
  if (!line) return null;
  const [, , uid, gid] = line.split(':');
  return { uid: Number(uid), gid: Number(gid) };
}

export async function startOwnPostgres(): Promise<OwnPostgres> {
  const bin = postgresBinDir();
  const asRoot = process.getuid?.() === 0;
  const pgUser = asRoot ? userIds('postgres') : null;
  if (asRoot && !pgUser) throw new Error('reliability tests: running as root but there is no `postgres` OS user to run a private PostgreSQL as');
  const dir = mkdtempSync(join(tmpdir(), 'ausline-rel-pg-'));
  const dataDir = join(dir, 'data');
  if (pgUser) chownSync(dir, pgUser.uid, pgUser.gid);
  // As root: run the server tools as `postgres`; otherwise as ourselves.
  const run = (tool: string, args: string[]) => {
    const command = asRoot ? 'runuser' : join(bin, tool);
    const argv = asRoot ? ['-u', 'postgres', '--', join(bin, tool), ...args] : args;
    const result = spawnSync(command, argv, { encoding: 'utf8', timeout: 120_000 });
    return { ok: result.status === 0, output: `${result.stdout ?? ''}${result.stderr ?? ''}${result.error ? String(result.error) : ''}`.trim() };
  };

  const init = run('initdb', ['-D', dataDir, '-A', 'trust', '-U', 'postgres', '-E', 'UTF8', '--no-sync', '--no-instructions']);
  if (!init.ok) {
    rmSync(dir, { recursive: true, force: true });
    throw new Error(`reliability tests: could not create a private PostgreSQL cluster (initdb failed; the shared server is not used instead):\n${init.output}`);
  }
  const port = await freePort();
  // fsync off: the OS does not crash in these tests, only the server processes do; synchronous_commit
  // stays on, so a commit the api acknowledged is in the WAL before the reply and survives an immediate stop.
  const serverOptions = [`-p ${port}`, `-k ${dir}`, `-h 127.0.0.1`, '-F', '-c max_connections=60', '-c shared_buffers=32MB', '-c full_page_writes=off'].join(' ');
  const logFile = join(dir, 'server.log');

  const start = async () => {
    const r = run('pg_ctl', ['-D', dataDir, '-o', serverOptions, '-l', logFile, '-w', '-t', '60', 'start']);
    if (!r.ok) throw new Error(`reliability tests: private PostgreSQL did not start:\n${r.output}\n${tail(logFile)}`);
    await waitForPostgres(`postgresql://postgres@127.0.0.1:${port}/postgres`, 30_000);
  };
  const stop = async (mode: 'fast' | 'immediate' = 'fast') => {
    const r = run('pg_ctl', ['-D', dataDir, '-m', mode, '-w', '-t', '60', 'stop']);
    if (!r.ok && !/is the server running|No such file/i.test(r.output)) throw new Error(`reliability tests: private PostgreSQL did not stop:\n${r.output}`);
  };
  try {
    await start();
  } catch (error) {
    rmSync(dir, { recursive: true, force: true });
    throw error;
  }
  let destroyed = false;
  return {
    port,
    dataDir,
    urlFor: (database) => `postgresql://postgres@127.0.0.1:${port}/${database}`,
    stop,
    start,
    async restart(mode = 'fast') {
      await stop(mode);
      await start();
    },
    async destroy() {
      if (destroyed) return;
      destroyed = true;
      await stop('immediate').catch(() => {});
      rmSync(dir, { recursive: true, force: true });
    },
  };
}

function tail(file: string): string {
  try {
    return readFileSync(file, 'utf8').split('\n').slice(-15).join('\n');
  } catch {
    return '';
  }
}

async function waitForPostgres(url: string, timeoutMs: number): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const client = new pg.Client({ connectionString: url, connectionTimeoutMillis: 2_000 });
    client.on('error', () => {});
    try {
      await client.connect();
      await client.query('SELECT 1');
      return;
    } catch (error) {
      if (Date.now() > deadline) throw new Error(`private PostgreSQL at ${url} not answering: ${String(error)}`);
    } finally {
      await client.end().catch(() => {});
    }
    await sleep(200);
  }
}

// ---------------------------------------------------------------------------------------------------
// Redis
// ---------------------------------------------------------------------------------------------------

export interface OwnRedis {
  port: number;
  url: string;
  /** Graceful stop (SIGTERM: Redis flushes its append-only file and exits). */
  stop(): Promise<void>;
  /** Starts again on the same port and data directory (the append-only file is loaded). */
  start(): Promise<void>;
  destroy(): Promise<void>;
}

export async function startOwnRedis(): Promise<OwnRedis> {
  const dir = mkdtempSync(join(tmpdir(), 'ausline-rel-redis-'));
  const port = await freePort();
  let child: ChildProcess | null = null;
  const output: string[] = [];
  const start = async () => {
    if (child) return;
    // As docker-compose.yml runs it: append-only file on. noeviction, as BullMQ requires.
    const proc = spawn(
      'redis-server',
      ['--port', String(port), '--bind', '127.0.0.1', '--dir', dir, '--appendonly', 'yes', '--appendfsync', 'everysec', '--save', '', '--maxmemory-policy', 'noeviction'],
      { stdio: ['ignore', 'pipe', 'pipe'] },
    );
    proc.stdout!.on('data', (d: Buffer) => output.push(d.toString()));
    proc.stderr!.on('data', (d: Buffer) => output.push(d.toString()));
    child = proc;
    proc.once('exit', () => {
      if (child === proc) child = null;
    });
    const deadline = Date.now() + 15_000;
    while (!(await redisPing(port))) {
      if (proc.exitCode !== null || Date.now() > deadline) {
        throw new Error(`reliability tests: private redis-server did not start on ${port}:\n${output.slice(-10).join('')}`);
      }
      await sleep(50);
    }
  };
  const stop = async () => {
    const proc = child;
    if (!proc) return;
    const exited = new Promise<void>((resolve) => proc.once('exit', () => resolve()));
    proc.kill('SIGTERM');
    const timer = setTimeout(() => proc.kill('SIGKILL'), 10_000);
    await exited;
    clearTimeout(timer);
  };
  try {
    await start();
  } catch (error) {
    rmSync(dir, { recursive: true, force: true });
    throw error;
  }
  let destroyed = false;
  return {
    port,
    url: `redis://127.0.0.1:${port}`,
    stop,
    start,
    async destroy() {
      if (destroyed) return;
      destroyed = true;
      await stop();
      rmSync(dir, { recursive: true, force: true });
    },
  };
}

function redisPing(port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const socket = createConnection({ host: '127.0.0.1', port });
    const done = (ok: boolean) => {
      clearTimeout(timer);
      socket.destroy();
      resolve(ok);
    };
    const timer = setTimeout(() => done(false), 1_000);
    socket.on('connect', () => socket.write('PING\r\n'));
    socket.on('data', (d) => done(d.toString().includes('+PONG')));
    socket.on('error', () => done(false));
  });
}

// ---------------------------------------------------------------------------------------------------
// The worker as a child process, from its build (as in production)
// ---------------------------------------------------------------------------------------------------

export const REPO_ROOT = new URL('../../../', import.meta.url).pathname;

/**
 * Builds the worker (tsc -b apps/worker: incremental, quick when current). tsc -b still emits when a file
 * elsewhere has a type error (TypeScript >= 5.6); the type-check step of `npm test` reports those, so
 * here only a missing output is fatal.
 */
export function buildWorker(): { seconds: number; typeErrors: string | null } {
  const started = Date.now();
  const r = spawnSync(process.execPath, [join(REPO_ROOT, 'node_modules/typescript/bin/tsc'), '-b', 'apps/worker'], { cwd: REPO_ROOT, encoding: 'utf8', timeout: 300_000 });
  const seconds = (Date.now() - started) / 1000;
  if (!existsSync(join(REPO_ROOT, 'apps/worker/dist/main.js'))) {
    throw new Error(`reliability tests: the worker build produced no apps/worker/dist/main.js:\n${r.stdout}${r.stderr}`);
  }
  return { seconds, typeErrors: r.status === 0 ? null : `${r.stdout}${r.stderr}`.trim().split('\n').slice(0, 5).join('\n') };
}

export interface WorkerProcess {
  pid: number;
  /** Everything it wrote (JSON log lines), for failure messages. */
  output: string[];
  exited: Promise<number | null>;
  kill(signal: NodeJS.Signals): Promise<void>;
}

export function spawnWorker(env: Record<string, string>): WorkerProcess {
  const proc = spawn(process.execPath, ['apps/worker/dist/main.js'], {
    cwd: REPO_ROOT,
    env: { PATH: process.env.PATH ?? '/usr/bin:/bin', ...env },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  const output: string[] = [];
  const keep = (d: Buffer) => {
    output.push(d.toString());
    if (output.length > 300) output.shift();
  };
  proc.stdout!.on('data', keep);
  proc.stderr!.on('data', keep);
  const exited = new Promise<number | null>((resolve) => proc.once('exit', (code) => resolve(code)));
  return {
    pid: proc.pid!,
    output,
    exited,
    async kill(signal) {
      if (proc.exitCode !== null || proc.signalCode !== null) return;
      proc.kill(signal);
      await exited;
    },
  };
}
