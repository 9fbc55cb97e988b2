import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';

// Spawns the real command the way a user runs it from the repository root after `npm ci`.
const repoRoot = fileURLToPath(new URL('../../../', import.meta.url));
const dir = mkdtempSync(join(tmpdir(), 'ausline-cli-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function run(args: string[], stdin?: string, viaNpx = false) {
  const r = viaNpx
    ? spawnSync('npx', ['--no-install', 'ausline', ...args], { cwd: repoRoot, input: stdin, encoding: 'utf8', timeout: 60_000 })
    : spawnSync(process.execPath, [join(repoRoot, 'libs/metallurgy/bin/ausline.mjs'), ...args], { cwd: repoRoot, input: stdin, encoding: 'utf8', timeout: 60_000 });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

const bath: Array<[number, number]> = [];
for (let t = 0; t <= 2 * 3600; t += 10) bath.push([t, 300 + Math.sin(t / 300)]);
const predictInput = {
  material: 'steel',
  chemistryWtPct: { C: 0.6, Si: 1.6, Mn: 0.8, Cr: 0.5, Mo: 0.2 },
  grainSizeAstm: 8,
  section: { shape: 'cylinder', diameterMm: 8 },
  austenitize: { tempC: 880, minutes: 20 },
  transferS: 5,
  agitation: 'strong',
  bath,
  ambientC: 20,
  uncertainty: { samples: 100, seed: 1 },
};

function file(name: string, content: string): string {
  const p = join(dir, name);
  writeFileSync(p, content);
  return p;
}

describe('ausline predict', () => {
  it('prints one JSON object with every documented field (via npx from the repository root)', () => {
    const r = run(['predict', file('good.json', JSON.stringify(predictInput))], undefined, true);
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    expect(r.stdout.trim().split('\n')).toHaveLength(1);
    const out = JSON.parse(r.stdout);
    expect(typeof out.modelVersion).toBe('string');
    expect(Object.keys(out.temperaturesC).sort()).toEqual(['ae1', 'ae3', 'bs', 'ms']);
    // additive: bands of the same four temperatures from the formulas' errors and the chemistry tolerance
    for (const k of ['ae1', 'ae3', 'bs', 'ms']) {
      const b = out.temperatureBandsC[k];
      expect(b.p05).toBeLessThan(out.temperaturesC[k]);
      expect(b.p95).toBeGreaterThan(out.temperaturesC[k]);
    }
    expect(out.t0).toEqual({ bathTempC: expect.any(Number), t0CarbonWtPct: expect.any(Number), t0PrimeCarbonWtPct: expect.any(Number) });
    expect(out.bainite).toMatchObject({ ceilingFraction: expect.any(Number), fractionAtEnd: expect.any(Number), curve: expect.any(Array) });
    expect(out.bainite).toHaveProperty('timeTo95PctS');
    expect(out.bainite.curve[1]).toEqual([expect.any(Number), expect.any(Number)]);
    expect(out.quench).toMatchObject({ upperProductsFraction: expect.any(Number), idealCriticalDiameterMm: expect.any(Number) });
    expect(out.quench).toHaveProperty('coreReachesBathS');
    for (const k of ['bainiticFerrite', 'filmAustenite', 'blockyAustenite', 'freshMartensite', 'upperProducts', 'austeniteCarbonWtPct', 'residualAusteniteMsC']) {
      expect(out.final[k]).toEqual(expect.any(Number));
    }
    for (const k of ['hardnessHV', 'tensileMPa']) {
      expect(out.properties[k]).toEqual({ p05: expect.any(Number), p50: expect.any(Number), p95: expect.any(Number) });
    }
    expect(out.warnings).toEqual(expect.arrayContaining([expect.any(String)]));
  });

  it('reads stdin for "-" and gives the same answer', () => {
    const fromFile = run(['predict', join(dir, 'good.json')]);
    const fromStdin = run(['predict', '-'], JSON.stringify(predictInput));
    expect(fromStdin.code).toBe(0);
    expect(fromStdin.stdout).toBe(fromFile.stdout);
  });

  it('ductile iron carries an adiGrade field', () => {
    const iron = {
      ...predictInput,
      material: 'ductile-iron',
      chemistryWtPct: { C: 3.6, Si: 2.5, Mn: 0.3, Cu: 0.6, Ni: 0.8, Mo: 0.2 },
      bath: [
        [0, 360],
        [3600, 360],
      ],
    };
    const r = run(['predict', '-'], JSON.stringify(iron));
    expect(r.code).toBe(0);
    expect(JSON.parse(r.stdout).properties).toHaveProperty('adiGrade');
  });

  it.each([
    ['a negative element', { ...predictInput, chemistryWtPct: { C: 0.6, Mn: -0.8 } }, /^ausline: chemistryWtPct\.Mn: must not be negative/],
    ['a bad bath sample', { ...predictInput, bath: [[0, 300], [10, 'hot']] }, /^ausline: bath\[1\]\[1\]: tempC must be a finite number/],
    ['a missing field', { ...predictInput, section: undefined }, /^ausline: section: is required/],
    ['an unknown field', { ...predictInput, colour: 'blue' }, /^ausline: colour: unknown field/],
  ])('bad input (%s): exit 2 and one line on stderr naming the field', (_name, input, pattern) => {
    const r = run(['predict', '-'], JSON.stringify(input));
    expect(r.code).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr.endsWith('\n')).toBe(true);
    expect(r.stderr.trimEnd().split('\n')).toHaveLength(1);
    expect(r.stderr).toMatch(pattern);
  });

  it('not JSON, a missing file, no file, an unknown command: exit 2 with one line', { timeout: 90_000 }, () => {
    for (const r of [
      run(['predict', '-'], '{"material": '),
      run(['predict', join(dir, 'does-not-exist.json')]),
      run(['predict']),
      run(['fly', '-'], '{}'),
      run([]),
    ]) {
      expect(r.code).toBe(2);
      expect(r.stderr.trimEnd().split('\n')).toHaveLength(1);
      expect(r.stderr.startsWith('ausline: ')).toBe(true);
    }
    expect(run(['predict', '-'], '{"material": ').stderr).toMatch(/not valid JSON/);
  });
});

describe('ausline t0', () => {
  it('prints the rows', () => {
    const r = run(['t0', '-'], JSON.stringify({ chemistryWtPct: { C: 0.4 }, fromC: 250, toC: 500, stepC: 50 }));
    expect(r.code).toBe(0);
    const out = JSON.parse(r.stdout);
    expect(out.rows).toHaveLength(6);
    expect(Object.keys(out.rows[0]).sort()).toEqual(['t0CarbonWtPct', 't0PrimeCarbonWtPct', 'tempC']);
    // Fe–C binary T0 / T0′ at 400 °C: x_T0 0.0506 (1.13 wt%), x_T0′ 0.0415 (0.92 wt%) – metallurgy.md §8.2 [C] (Fe–0.4C,
    // the alloy's own carbon does not enter T0); ±0.02 wt% (§8.2 tolerance ±0.0005 in mole fraction ≈ 0.011 wt%, plus rounding).
    const at400 = out.rows.find((row: { tempC: number }) => row.tempC === 400);
    expect(Math.abs(at400.t0CarbonWtPct - 1.13)).toBeLessThan(0.02);
    expect(Math.abs(at400.t0PrimeCarbonWtPct - 0.92)).toBeLessThan(0.02);
    // T0 carbon rises as temperature falls
    for (let i = 1; i < out.rows.length; i++) expect(out.rows[i].t0CarbonWtPct).toBeLessThan(out.rows[i - 1].t0CarbonWtPct);
    expect(out.warnings).toEqual([]);
  });

  it('carries the chemistry warnings instead of dropping them (Mn ≥ 1.5: T0′ is model-dependent, metallurgy.md §9.1)', () => {
    const r = run(['t0', '-'], JSON.stringify({ chemistryWtPct: { C: 0.43, Si: 2.12, Mn: 3.0 }, fromC: 300, toC: 400, stepC: 50 }));
    expect(r.code).toBe(0);
    const out = JSON.parse(r.stdout);
    expect(out.rows).toHaveLength(3);
    expect(out.warnings).toEqual(expect.arrayContaining([expect.stringMatching(/^chemistryWtPct\.Mn: T0′ \(CALPHAD\) is model-dependent/)]));
  });

  it('bad input: exit 2, one line naming the field', () => {
    const r = run(['t0', '-'], JSON.stringify({ chemistryWtPct: { C: 0.4 }, fromC: 250, toC: 500 }));
    expect(r.code).toBe(2);
    expect(r.stderr).toBe('ausline: stepC: is required\n');
  });
});
