/**
 * Metallurgy engine benchmark (prints figures; not part of the test run).
 *   npx tsx bench/metallurgy.bench.ts
 *
 * A 4-hour, 1 Hz bath history (14 401 samples) with 1 000 uncertainty samples (+ the nominal member):
 *  - from scratch: create the batch state, advance it over the whole history, finalize (final state, properties,
 *    bands). The per-setup memo is cleared before each run, so this is what a worker pays for a batch it has never
 *    seen (ensemble build, quench simulation, T0 table included).
 *  - per 10 s increment: the live path – advance the saved state by 10 new samples and finalize – timed early,
 *    in the middle and late in the batch to show it stays flat; plus the JSON round trip of the state the worker
 *    stores between increments.
 *  - naive: recompute from zero over the history so far at the same points, in the same run.
 * Wall-clock and process CPU time are both reported (medians); on a shared machine CPU time is the steadier figure.
 */
import {
  advanceBath,
  clearModelCache,
  createBathState,
  finalizeBatch,
  type BathState,
  type BatchSetup,
} from '../libs/metallurgy/src/index.js'; // relative: plain `npx tsx` does not apply the 'source' export condition

const SAMPLES = 1000;
const HOURS = 4;

const setup: BatchSetup = {
  material: 'steel',
  chemistryWtPct: { C: 0.6, Si: 1.6, Mn: 0.8, Cr: 0.5, Mo: 0.2 },
  grainSizeAstm: 8,
  section: { shape: 'cylinder', diameterMm: 8 },
  austenitize: { tempC: 880, minutes: 20 },
  transferS: 5,
  agitation: 'strong',
  ambientC: 20,
  uncertainty: { samples: SAMPLES, seed: 1 },
};

// Invented bath log: 300 °C set point, a slow controller swing and sensor noise (deterministic).
const log: Array<[number, number]> = [];
let noise = 12345;
for (let t = 0; t <= HOURS * 3600; t++) {
  noise = (noise * 1103515245 + 12345) % 2147483648;
  log.push([t, 300 + 1.5 * Math.sin(t / 420) + 0.3 * (noise / 2147483648 - 0.5)]);
}

interface Timing {
  wallMs: number;
  cpuMs: number;
}
function time<T>(fn: () => T): { value: T } & Timing {
  const c0 = process.cpuUsage();
  const t0 = performance.now();
  const value = fn();
  const wallMs = performance.now() - t0;
  const c = process.cpuUsage(c0);
  return { value, wallMs, cpuMs: (c.user + c.system) / 1000 };
}
const median = (xs: number[]) => {
  const s = [...xs].sort((a, b) => a - b);
  return s.length % 2 ? s[(s.length - 1) / 2] : 0.5 * (s[s.length / 2 - 1] + s[s.length / 2]);
};
const fmt = (x: number) => (x >= 100 ? x.toFixed(0) : x >= 10 ? x.toFixed(1) : x.toFixed(2));
const row = (label: string, wall: number[], cpu: number[]) =>
  console.log(`${label.padEnd(46)} wall ${fmt(median(wall)).padStart(7)} ms   cpu ${fmt(median(cpu)).padStart(7)} ms   (n=${wall.length})`);

console.log(`ausline metallurgy bench: ${HOURS} h at 1 Hz (${log.length} samples), ${SAMPLES} uncertainty samples, node ${process.version}`);

// Warm the JIT once (not counted).
finalizeBatch(advanceBath(createBathState(setup), log.slice(0, 3600)));

// ---- from scratch
const RUNS = 7;
const scratchWall: number[] = [];
const scratchCpu: number[] = [];
const advanceWall: number[] = [];
const finalizeWall: number[] = [];
for (let r = 0; r < RUNS; r++) {
  clearModelCache();
  const total = time(() => {
    const a = time(() => advanceBath(createBathState(setup), log));
    const f = time(() => finalizeBatch(a.value));
    advanceWall.push(a.wallMs);
    finalizeWall.push(f.wallMs);
    return f.value;
  });
  scratchWall.push(total.wallMs);
  scratchCpu.push(total.cpuMs);
}
row('from scratch (create + advance 4 h + finalize)', scratchWall, scratchCpu);
console.log(`  of which advance ${fmt(median(advanceWall))} ms, finalize ${fmt(median(finalizeWall))} ms (wall medians)`);

// ---- per 10 s increment, live path
const STEP = 10;
let state: BathState = createBathState(setup);
const windows: Record<string, { from: number; to: number; wall: number[]; cpu: number[]; jsonWall: number[] }> = {
  'early (0–10 min)': { from: 0, to: 600, wall: [], cpu: [], jsonWall: [] },
  'middle (2 h ± 5 min)': { from: 7200 - 300, to: 7200 + 300, wall: [], cpu: [], jsonWall: [] },
  'late (last 10 min)': { from: HOURS * 3600 - 600, to: HOURS * 3600 + 1, wall: [], cpu: [], jsonWall: [] },
};
let stateBytes = 0;
for (let i = 0; i < log.length; i += STEP) {
  const slice = log.slice(i, i + STEP);
  const t = log[i][0];
  const w = Object.values(windows).find((x) => t >= x.from && t < x.to);
  if (!w) {
    state = advanceBath(state, slice);
    continue;
  }
  const step = time(() => {
    const next = advanceBath(state, slice);
    finalizeBatch(next);
    return next;
  });
  const json = time(() => JSON.parse(JSON.stringify(step.value)) as BathState);
  state = json.value;
  stateBytes = JSON.stringify(state).length;
  w.wall.push(step.wallMs);
  w.cpu.push(step.cpuMs);
  w.jsonWall.push(json.wallMs);
}
console.log(`per ${STEP} s increment (advance 10 samples + finalize), warm memo:`);
for (const [name, w] of Object.entries(windows)) row(`  ${name}`, w.wall, w.cpu);
console.log(
  `  state JSON round trip (stringify + parse): ${fmt(median(Object.values(windows).flatMap((w) => w.jsonWall)))} ms, state size at the end ${(stateBytes / 1024).toFixed(0)} KiB`,
);

// Cold start of a worker that loads a saved state (memo empty): the first increment rebuilds the ensemble.
const coldWall: number[] = [];
const coldCpu: number[] = [];
const midState = advanceBath(createBathState(setup), log.slice(0, 7200));
for (let r = 0; r < 5; r++) {
  clearModelCache();
  const c = time(() => finalizeBatch(advanceBath(midState, log.slice(7200, 7210))));
  coldWall.push(c.wallMs);
  coldCpu.push(c.cpuMs);
}
row('  first increment after a cold start (memo empty)', coldWall, coldCpu);

// ---- naive: recompute from zero at the same points
console.log('naive recompute from zero of the same increment (warm memo):');
const ratios: string[] = [];
for (const [name, w] of Object.entries(windows)) {
  const end = Math.min(log.length, Math.round((w.from + w.to) / 2));
  const wall: number[] = [];
  const cpu: number[] = [];
  for (let r = 0; r < 3; r++) {
    const n = time(() => finalizeBatch(advanceBath(createBathState(setup), log.slice(0, end + 1))));
    wall.push(n.wallMs);
    cpu.push(n.cpuMs);
  }
  row(`  ${name}`, wall, cpu);
  ratios.push(`${name}: ×${(median(wall) / median(w.wall)).toFixed(0)} (wall), ×${(median(cpu) / median(w.cpu)).toFixed(0)} (cpu)`);
}
console.log('naive / incremental:');
for (const r of ratios) console.log(`  ${r}`);
console.log(`goals: from scratch < 200 ms, per increment < 5 ms, flat across the batch`);
