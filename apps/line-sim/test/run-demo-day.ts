/**
 * Plays the demo day (or its first `hours`) at full speed against a Service from service-harness.ts and
 * waits until the worker has recomputed everything. Shared by tests/demo-day.test.ts and
 * tests/demo-metallurgy.test.ts.
 */
import { ALL_HEATS } from '../src/plant.js';
import { DEMO_DAY, ROUTINE } from '../src/scenario.js';
import { buildSchedule, type Schedule } from '../src/schedule.js';
import { setupDemoPlant, type SetupResult } from '../src/setup.js';
import { Simulator, type SimReport, type SimulatorOptions } from '../src/simulator.js';
import type { Service } from './service-harness.js';

export interface DemoDayRun {
  schedule: Schedule;
  /** Epoch ms of the day's start (the day ends on the last whole minute before the run). */
  startMs: number;
  endMs: number;
  setup: SetupResult;
  report: SimReport;
  wallS: number;
}

export async function runDemoDay(service: Service, options: { hours?: number } & Partial<SimulatorOptions> = {}): Promise<DemoDayRun> {
  const durationMs = (options.hours ?? DEMO_DAY.durationMin / 60) * 3_600_000;
  // Accelerated plant time must stay behind the wall clock: the day ends on the last whole minute.
  const startMs = Math.floor(Date.now() / 60_000) * 60_000 - durationMs;
  const schedule = buildSchedule(DEMO_DAY, ROUTINE, { startMs, routine: false });
  const setup = await setupDemoPlant({ apiUrl: service.url, adminToken: service.adminToken });
  const t0 = Date.now();
  const simulator = new Simulator({
    apiUrl: service.url,
    plant: setup.plant,
    schedule,
    seed: DEMO_DAY.seed,
    speed: Number.POSITIVE_INFINITY,
    stopAtMs: startMs + durationMs,
    heats: ALL_HEATS,
    runId: `test-${Date.now().toString(36)}`,
    maxStepMs: 5 * 60_000,
    ...options,
  });
  // Generous: with the prediction step the worker shares the CPU with the API, and a loaded machine is slow.
  const report = await simulator.run(900_000);
  await service.settle(900_000);
  return { schedule, startMs, endMs: startMs + durationMs, setup, report, wallS: (Date.now() - t0) / 1000 };
}
