import { randomBytes } from 'node:crypto';
import { mkdir, readFile, rename, writeFile } from 'node:fs/promises';
import { dirname } from 'node:path';
import type { SimLogEvent } from './controller.js';
import { ALL_HEATS } from './plant.js';
import { DEMO_DAY, ROUTINE } from './scenario.js';
import { buildSchedule, type Schedule } from './schedule.js';
import { Simulator, type PlantHandles, type SimReport } from './simulator.js';

/**
 * Running the plant from the command line (main.ts) or the demo launcher (demo.ts): what was set up and
 * played is kept in a small state file so a second run reuses the controller keys and goes on from where
 * the plant stopped instead of posting the same hours again.
 */

export interface DemoState {
  version: 1;
  apiUrl: string;
  plant: PlantHandles | null;
  /** Controller and lab keys by label (shown once by the API, so kept here). */
  keys: Record<string, string>;
  /** One-time passwords of the users the demo created (printed once; kept so the demo can sign in again). */
  passwords: Record<string, string>;
  /** The demo day with the planted problems was played from startMs. */
  demoDay: { startMs: number; endMs: number } | null;
  /** Plant time the last run reached (the next run continues from here). */
  plantTimeReachedMs: number | null;
}

export function emptyState(apiUrl: string): DemoState {
  return { version: 1, apiUrl, plant: null, keys: {}, passwords: {}, demoDay: null, plantTimeReachedMs: null };
}

export async function loadState(path: string, apiUrl: string): Promise<DemoState> {
  try {
    const parsed = JSON.parse(await readFile(path, 'utf8')) as DemoState;
    return parsed.version === 1 ? parsed : emptyState(apiUrl);
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code === 'ENOENT') return emptyState(apiUrl);
    throw error;
  }
}

/** Written atomically, readable by the owner only (it holds keys and passwords). */
export async function saveState(path: string, state: DemoState): Promise<void> {
  await mkdir(dirname(path), { recursive: true, mode: 0o700 });
  const tmp = `${path}.${process.pid}.tmp`;
  await writeFile(tmp, `${JSON.stringify(state, null, 2)}\n`, { mode: 0o600 });
  await rename(tmp, path);
}

export interface RunPlantOptions {
  apiUrl: string;
  state: DemoState;
  statePath: string;
  /** Plant-time speed-up while catching up; Infinity = as fast as the API takes it. */
  speed: number;
  /** 'auto': the demo day if it has not been played with this state, else routine production. */
  scenario: 'demo-day' | 'routine' | 'auto';
  /** How far back the demo day starts (it ends now), hours. */
  hours: number;
  /** Stop when plant time reaches the end of the demo day (or now, for routine) instead of going on live. */
  stopAtNow: boolean;
  log: (event: SimLogEvent) => void;
  /** Receives the simulator once it runs (to stop it on a signal). */
  onStart?: (simulator: Simulator) => void;
}

const HOUR = 3_600_000;

export async function runPlant(options: RunPlantOptions): Promise<SimReport> {
  const { state } = options;
  if (!state.plant) throw new Error('the plant is not set up (no ids and keys in the state file): run `npm run demo` first');
  const nowMinute = Math.floor(Date.now() / 60_000) * 60_000;
  const playDay = options.scenario === 'demo-day' || (options.scenario === 'auto' && state.demoDay === null);
  let schedule: Schedule;
  if (playDay) {
    const startMs = nowMinute - options.hours * HOUR;
    if (state.plantTimeReachedMs !== null && startMs < state.plantTimeReachedMs) {
      throw new Error(
        `this plant already has data up to ${new Date(state.plantTimeReachedMs).toISOString()}; the demo day would post over it. ` +
          'Use --scenario routine, or start from a fresh database (npm run demo -- --reset).',
      );
    }
    schedule = buildSchedule(DEMO_DAY, ROUTINE, { startMs, routine: !options.stopAtNow });
    state.demoDay = { startMs, endMs: startMs + DEMO_DAY.durationMin * 60_000 };
    options.log({ level: 'info', msg: `playing the demo day from ${new Date(startMs).toISOString()} (planted problems included)${options.stopAtNow ? '' : ', then routine production'}` });
    for (const load of schedule.lines.flatMap((l) => l.loads).filter((l) => l.plan.planted)) {
      options.log({ level: 'info', msg: `planted: ${load.code} ${load.plan.planted}`, story: load.plan.story });
    }
  } else {
    // Routine production from where the plant stopped (at most a day back).
    const startMs = Math.max(state.plantTimeReachedMs ?? nowMinute - 2 * HOUR, nowMinute - 24 * HOUR);
    schedule = buildSchedule(null, ROUTINE, { startMs, routine: true });
    options.log({ level: 'info', msg: `routine production from ${new Date(startMs).toISOString()}` });
  }
  const stopAtMs = options.stopAtNow ? (playDay ? Math.min(nowMinute, schedule.startMs + schedule.scriptedEndMs) : nowMinute) : null;

  let lastSaved = 0;
  const simulator = new Simulator({
    apiUrl: options.apiUrl,
    plant: state.plant,
    schedule,
    seed: DEMO_DAY.seed,
    speed: options.speed,
    stopAtMs,
    heats: ALL_HEATS,
    runId: randomBytes(4).toString('hex'),
    // A real-time controller cannot pause the plant: when its outbox is full it loses the oldest readings.
    overflow: Number.isFinite(options.speed) && options.speed <= 1 ? 'drop-oldest' : 'block',
    log: options.log,
    onTick: (plantNowMs) => {
      state.plantTimeReachedMs = plantNowMs;
      if (Date.now() - lastSaved > 10_000) {
        lastSaved = Date.now();
        void saveState(options.statePath, state).catch(() => undefined);
      }
    },
  });
  options.onStart?.(simulator);
  await saveState(options.statePath, state);
  const report = await simulator.run(15_000);
  state.plantTimeReachedMs = report.plantReachedMs;
  await saveState(options.statePath, state);
  return report;
}

/** One line per log event, for people. */
export function formatLogEvent(event: SimLogEvent): string {
  const { level, msg, ...rest } = event;
  const fields = Object.entries(rest)
    .filter(([, v]) => v !== undefined && v !== null)
    .map(([k, v]) => `${k}=${typeof v === 'string' ? v : JSON.stringify(v)}`)
    .join(' ');
  const tag = level === 'info' ? 'sim' : `sim ${level}`;
  return `[${tag}] ${msg}${fields ? `  ${fields}` : ''}`;
}

export function parseSpeed(text: string): number {
  if (text === 'max') return Number.POSITIVE_INFINITY;
  const n = Number(text);
  if (!Number.isFinite(n) || n < 1) throw new Error(`--speed must be a number ≥ 1 or 'max', got '${text}'`);
  return n;
}
