/**
 * The line simulator on its own, against an Ausline API that is already running:
 *
 *   npx tsx apps/line-sim/src/main.ts [--api-url http://127.0.0.1:3000] [--speed 600|max] [--hours 24]
 *        [--scenario auto|demo-day|routine] [--until now|never] [--state .ausline-demo/state-ausline_demo.json]
 *
 * It needs the plant set up (ids and controller keys in the state file): `npm run demo` does that, or give
 * an admin's credentials in AUSLINE_ADMIN_EMAIL / AUSLINE_ADMIN_PASSWORD and this sets the plant up itself
 * (demo users are then created with one-time passwords printed once).
 *
 * --speed N plays plant time N times faster than the wall clock (600 = 10 min per second) until it has
 * caught up with now, then goes on in real time; timestamps are plant time, always in the past.
 * Ctrl-C stops generating, sends what is buffered (at most 15 s) and saves where the plant stopped.
 */
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import { ApiClient } from './http.js';
import { formatLogEvent, loadState, parseSpeed, runPlant, saveState } from './run.js';
import { setupDemoPlant } from './setup.js';
import type { Simulator } from './simulator.js';

/** Where `npm run demo` keeps its state for the database at DATABASE_URL (default ausline_demo). */
function defaultStatePath(): string {
  if (process.env.AUSLINE_DEMO_STATE) return process.env.AUSLINE_DEMO_STATE;
  const dbName = new URL(process.env.DATABASE_URL || 'postgresql://postgres@127.0.0.1:5432/ausline_demo').pathname.slice(1) || 'ausline_demo';
  return join(process.env.AUSLINE_DEMO_STATE_DIR ?? '.ausline-demo', `state-${dbName}.json`);
}

const USAGE =
  'usage: npx tsx apps/line-sim/src/main.ts [--api-url URL] [--speed N|max] [--hours H] [--scenario auto|demo-day|routine] [--until now|never] [--state FILE] [--quiet]';

async function main(argv: string[]): Promise<number> {
  let args;
  try {
    args = parseArgs({
      args: argv,
      options: {
        'api-url': { type: 'string', default: process.env.AUSLINE_API_URL ?? 'http://127.0.0.1:3000' },
        speed: { type: 'string', default: '600' },
        hours: { type: 'string', default: '24' },
        scenario: { type: 'string', default: 'auto' },
        until: { type: 'string', default: 'never' },
        state: { type: 'string', default: defaultStatePath() },
        quiet: { type: 'boolean', default: false },
        help: { type: 'boolean', default: false },
      },
      strict: true,
    }).values;
  } catch (error) {
    process.stderr.write(`line-sim: ${error instanceof Error ? error.message : String(error)}\n${USAGE}\n`);
    return 2;
  }
  if (args.help) {
    process.stdout.write(`${USAGE}\n`);
    return 0;
  }
  const scenario = args.scenario as 'auto' | 'demo-day' | 'routine';
  if (!['auto', 'demo-day', 'routine'].includes(scenario) || !['now', 'never'].includes(args.until)) {
    process.stderr.write(`line-sim: bad --scenario or --until\n${USAGE}\n`);
    return 2;
  }
  const apiUrl = args['api-url'].replace(/\/$/, '');
  const log = (e: Parameters<typeof formatLogEvent>[0]) => {
    if (args.quiet && e.level === 'info') return;
    (e.level === 'error' || e.level === 'warn' ? process.stderr : process.stdout).write(`${formatLogEvent(e)}\n`);
  };

  const state = await loadState(args.state, apiUrl);
  if (!state.plant) {
    const email = process.env.AUSLINE_ADMIN_EMAIL;
    const password = process.env.AUSLINE_ADMIN_PASSWORD;
    if (!email || !password) {
      process.stderr.write(`line-sim: no plant in ${args.state}. Run \`npm run demo\`, or set AUSLINE_ADMIN_EMAIL and AUSLINE_ADMIN_PASSWORD to set it up here.\n`);
      return 2;
    }
    const login = await new ApiClient(apiUrl).post<{ token: string }>('/v1/auth/login', { email, password });
    const setup = await setupDemoPlant({ apiUrl, adminToken: login.token, knownPasswords: state.passwords, knownKeys: state.keys, log });
    for (const user of setup.createdUsers) {
      process.stdout.write(`Created ${user.roles.join('+')} user ${user.email}, one-time password (shown once): ${user.oneTimePassword}\n`);
      state.passwords[user.email] = user.oneTimePassword;
    }
    state.plant = setup.plant;
    state.keys = setup.keys;
    await saveState(args.state, state);
  }

  let simulator: Simulator | null = null;
  const stop = () => simulator?.stop();
  process.once('SIGINT', stop);
  process.once('SIGTERM', stop);
  const report = await runPlant({
    apiUrl,
    state,
    statePath: args.state,
    speed: parseSpeed(args.speed),
    scenario,
    hours: Number(args.hours),
    stopAtNow: args.until === 'now',
    log,
    onStart: (s) => (simulator = s),
  });
  const pending = report.controllers.reduce((a, c) => a + c.pending, 0);
  process.stdout.write(
    `line-sim: stopped at plant time ${new Date(report.plantReachedMs).toISOString()}; ${report.batchesCreated.length} batches, ` +
      `${report.controllers.reduce((a, c) => a + c.samplesAcked, 0)} samples sent${pending ? `, ${pending} records not sent` : ''}\n`,
  );
  return pending > 0 ? 1 : 0;
}

process.exitCode = await main(process.argv.slice(2));
