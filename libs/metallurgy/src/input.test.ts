import { describe, expect, it } from 'vitest';
import { InputError, parsePredictInput, parseT0Input, requirePredictInput } from './input.js';

const good = {
  material: 'steel',
  chemistryWtPct: { C: 0.6, Si: 1.6, Mn: 0.8 },
  grainSizeAstm: 8,
  section: { shape: 'plate', thicknessMm: 6 },
  austenitize: { tempC: 880, minutes: 20 },
  transferS: 5,
  agitation: 'moderate',
  bath: [
    [0, 300],
    [60, 301],
  ],
};

function firstIssue(raw: unknown): { path: string; message: string } {
  const r = parsePredictInput(raw);
  if (!('issues' in r)) throw new Error('expected issues');
  return r.issues[0];
}

describe('predict input validation', () => {
  it('accepts a good input and fills the defaults', () => {
    const r = parsePredictInput(good);
    if ('issues' in r) throw new Error(JSON.stringify(r.issues));
    expect(r.input.ambientC).toBe(20);
    expect(r.input.uncertainty).toEqual({ samples: 1000, seed: 1 });
    expect(r.warnings.some((w) => w.startsWith('chemistryWtPct.'))).toBe(true);
  });

  it.each([
    [{ ...good, material: 'iron' }, 'material', /one of "steel", "ductile-iron"/],
    [{ ...good, chemistryWtPct: { C: 0.6, Mn: -1 } }, 'chemistryWtPct.Mn', /negative/],
    [{ ...good, chemistryWtPct: { C: 0.6, mn: 1 } }, 'chemistryWtPct.mn', /did you mean 'Mn'/],
    [{ ...good, grainSizeAstm: 'eight' }, 'grainSizeAstm', /finite number/],
    [{ ...good, section: { shape: 'plate', diameterMm: 6 } }, 'section.diameterMm', /unknown field/],
    [{ ...good, section: { shape: 'cube', sideMm: 6 } }, 'section.shape', /one of/],
    [{ ...good, section: { shape: 'cylinder', diameterMm: 0 } }, 'section.diameterMm', /greater than 0/],
    [{ ...good, austenitize: { tempC: 500, minutes: 20 } }, 'austenitize.tempC', /at least 700/],
    [{ ...good, agitation: 'violent' }, 'agitation', /one of "still", "moderate", "strong"/],
    [{ ...good, bath: [[0, 300]] }, 'bath', /at least 2 samples/],
    [{ ...good, bath: [[0, 300], [60]] }, 'bath[1]', /pair/],
    [{ ...good, bath: [[0, 300], [60, null]] }, 'bath[1][1]', /finite number/],
    [{ ...good, bath: [[0, 300], [0, 301]] }, 'bath[1][0]', /increase strictly/],
    [{ ...good, bath: [[0, 300], [60, 3000]] }, 'bath[1][1]', /plausible bath temperature/],
    [{ ...good, uncertainty: { samples: 1.5, seed: 1 } }, 'uncertainty.samples', /integer/],
    [{ ...good, uncertainty: { samples: 10 } }, 'uncertainty.seed', /required/],
    [{ ...good, bathTemp: 300 }, 'bathTemp', /unknown field/],
    [{ ...good, calibration: { bands: { hardness: { bias: 1 } } } }, 'calibration.bands.hardness', /unknown field/],
    [{ ...good, transferS: undefined }, 'transferS', /required/],
    [{ ...good, calibration: { bainiteTimeLnSd: -0.1 } }, 'calibration.bainiteTimeLnSd', /at least 0/],
    [{ ...good, calibration: { t0PrimeSdWtPct: 0.6 } }, 'calibration.t0PrimeSdWtPct', /at most 0.5/],
    [{ ...good, calibration: { hardnessFactor: 0.2 } }, 'calibration.hardnessFactor', /at least 0.5/],
  ])('rejects %j at %s', (raw, path, message) => {
    const issue = firstIssue(raw);
    expect(issue.path).toBe(path);
    expect(issue.message).toMatch(message);
  });

  it('requirePredictInput throws an InputError carrying every issue', () => {
    expect(requirePredictInput(good).material).toBe('steel');
    try {
      requirePredictInput({ ...good, grainSizeAstm: -1, agitation: 'none' });
      throw new Error('did not throw');
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      expect((e as InputError).issues.map((i) => i.path)).toEqual(['grainSizeAstm', 'agitation']);
      expect((e as Error).message).toMatch(/^grainSizeAstm: must be at least 0/);
    }
  });

  it('rejects a non-object and a ductile iron with steel carbon', () => {
    expect(firstIssue([1, 2]).message).toMatch(/must be an object/);
    const iron = firstIssue({ ...good, material: 'ductile-iron' });
    expect(iron.path).toBe('chemistryWtPct.C');
  });
});

describe('t0 input validation', () => {
  it('accepts a range and rejects a bad step', () => {
    expect('input' in parseT0Input({ chemistryWtPct: { C: 0.4 }, fromC: 250, toC: 450, stepC: 50 })).toBe(true);
    const r = parseT0Input({ chemistryWtPct: { C: 0.4 }, fromC: 250, toC: 450, stepC: 0 });
    expect('issues' in r && r.issues[0].path).toBe('stepC');
    expect('input' in parseT0Input({ chemistryWtPct: { C: 3.6, Si: 2.5 }, fromC: 250, toC: 450, stepC: 50, material: 'ductile-iron' })).toBe(true);
    const iron = parseT0Input({ chemistryWtPct: { C: 3.6, Si: 2.5 }, fromC: 250, toC: 450, stepC: 50 });
    expect('issues' in iron && iron.issues[0].path).toBe('chemistryWtPct.C');
    const far = parseT0Input({ chemistryWtPct: { C: 0.4 }, fromC: 0, toC: 900, stepC: 0.1 });
    expect('issues' in far && far.issues[0].message).toMatch(/at most 2001/);
  });
});
