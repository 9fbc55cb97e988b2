/**
 * Validation of the `predict` and `t0` inputs (CLI files, and anything else that arrives as unknown JSON).
 * Every problem names the field path (e.g. `bath[12][1]`, `section.thicknessMm`) and what is wrong with it.
 */
import { checkChemistry, ELEMENTS, type ChemistryWtPct, type Element, type Material } from './chemistry.js';
import type { Agitation } from './cooling/conduction.js';
import { BAND_QUANTITIES, type BandQuantity, type BatchSetup, type Calibration, type Section, type UncertaintySettings } from './setup.js';

export interface InputIssue {
  path: string;
  message: string;
}

export interface PredictInput extends BatchSetup {
  bath: Array<[number, number]>;
}

export interface T0Input {
  chemistryWtPct: ChemistryWtPct;
  fromC: number;
  toC: number;
  stepC: number;
}

export const DEFAULT_UNCERTAINTY: UncertaintySettings = { samples: 1000, seed: 1 };
export const DEFAULT_AMBIENT_C = 20;
export const MAX_BATH_SAMPLES = 500_000;
export const MAX_ENSEMBLE_SAMPLES = 20_000;

/** Thrown by requirePredictInput; `issues` carry the field paths (an HTTP layer maps them to a 4xx). */
export class InputError extends Error {
  constructor(readonly issues: InputIssue[]) {
    super(issues.map((i) => `${i.path}: ${i.message}`).join('; '));
    this.name = 'InputError';
  }
}

/** parsePredictInput that throws InputError instead of returning the issues. */
export function requirePredictInput(raw: unknown): PredictInput {
  const parsed = parsePredictInput(raw);
  if ('issues' in parsed) throw new InputError(parsed.issues);
  return parsed.input;
}

type Obj = Record<string, unknown>;

function describe(value: unknown): string {
  if (value === null) return 'null';
  if (Array.isArray(value)) return 'an array';
  if (typeof value === 'string') return `the string ${JSON.stringify(value.length > 40 ? value.slice(0, 40) + '…' : value)}`;
  if (typeof value === 'number') return Number.isNaN(value) ? 'NaN' : String(value);
  return typeof value;
}

class Checker {
  readonly issues: InputIssue[] = [];
  fail(path: string, message: string): undefined {
    this.issues.push({ path, message });
    return undefined;
  }
  object(value: unknown, path: string, allowed: readonly string[]): Obj | undefined {
    if (value === null || typeof value !== 'object' || Array.isArray(value)) return this.fail(path, `must be an object; got ${describe(value)}`);
    for (const key of Object.keys(value)) {
      if (!allowed.includes(key)) this.fail(path ? `${path}.${key}` : key, `unknown field; allowed: ${allowed.join(', ')}`);
    }
    return value as Obj;
  }
  number(obj: Obj, key: string, path: string, opts: { min?: number; max?: number; integer?: boolean; optional?: boolean; exclusiveMin?: boolean } = {}): number | undefined {
    const p = path ? `${path}.${key}` : key;
    const value = obj[key];
    if (value === undefined) return opts.optional ? undefined : this.fail(p, 'is required');
    if (typeof value !== 'number' || !Number.isFinite(value)) return this.fail(p, `must be a finite number; got ${describe(value)}`);
    if (opts.integer && !Number.isInteger(value)) return this.fail(p, `must be an integer; got ${value}`);
    if (opts.min !== undefined && (opts.exclusiveMin ? value <= opts.min : value < opts.min)) {
      return this.fail(p, `must be ${opts.exclusiveMin ? 'greater than' : 'at least'} ${opts.min}; got ${value}`);
    }
    if (opts.max !== undefined && value > opts.max) return this.fail(p, `must be at most ${opts.max}; got ${value}`);
    return value;
  }
  oneOf<T extends string>(obj: Obj, key: string, path: string, options: readonly T[]): T | undefined {
    const p = path ? `${path}.${key}` : key;
    const value = obj[key];
    if (value === undefined) return this.fail(p, `is required (one of ${options.map((o) => JSON.stringify(o)).join(', ')})`);
    if (typeof value !== 'string' || !options.includes(value as T)) {
      return this.fail(p, `must be one of ${options.map((o) => JSON.stringify(o)).join(', ')}; got ${describe(value)}`);
    }
    return value as T;
  }
}

const PREDICT_FIELDS = [
  'material',
  'chemistryWtPct',
  'grainSizeAstm',
  'section',
  'austenitize',
  'transferS',
  'agitation',
  'heatTransferWPerM2K',
  'bath',
  'ambientC',
  'uncertainty',
  'calibration',
] as const;

/** Validates a predict input. Returns the typed input and the chemistry warnings, or the issues found. */
export function parsePredictInput(raw: unknown): { input: PredictInput; warnings: string[] } | { issues: InputIssue[] } {
  const c = new Checker();
  const root = c.object(raw, '', PREDICT_FIELDS);
  if (!root) return { issues: c.issues };
  const material = c.oneOf<Material>(root, 'material', '', ['steel', 'ductile-iron']);
  let chemistry: ChemistryWtPct | null = null;
  const warnings: string[] = [];
  if (root.chemistryWtPct === undefined) c.fail('chemistryWtPct', 'is required (element symbol → wt%)');
  else if (material) {
    const checked = checkChemistry(root.chemistryWtPct, material);
    for (const issue of checked.issues) {
      const path = issue.field.startsWith('chemistryWtPct') ? issue.field : `chemistryWtPct.${issue.field}`;
      if (issue.severity === 'error') c.fail(path, issue.message);
      else warnings.push(`${path}: ${issue.message}`);
    }
    chemistry = checked.chemistry;
  }
  const grainSizeAstm = c.number(root, 'grainSizeAstm', '', { min: 0, max: 15 });
  const section = parseSection(c, root.section);
  let austenitize: { tempC: number; minutes: number } | undefined;
  if (root.austenitize === undefined) c.fail('austenitize', 'is required ({"tempC": n, "minutes": n})');
  else {
    const a = c.object(root.austenitize, 'austenitize', ['tempC', 'minutes']);
    if (a) {
      const tempC = c.number(a, 'tempC', 'austenitize', { min: 700, max: 1200 });
      const minutes = c.number(a, 'minutes', 'austenitize', { min: 0, max: 100000, exclusiveMin: true });
      if (tempC !== undefined && minutes !== undefined) austenitize = { tempC, minutes };
    }
  }
  const transferS = c.number(root, 'transferS', '', { min: 0, max: 3600 });
  const agitation = c.oneOf<Agitation>(root, 'agitation', '', ['still', 'moderate', 'strong']);
  const heatTransferWPerM2K = c.number(root, 'heatTransferWPerM2K', '', { min: 0, max: 100000, exclusiveMin: true, optional: true });
  const ambientC = c.number(root, 'ambientC', '', { min: -50, max: 80, optional: true }) ?? DEFAULT_AMBIENT_C;
  const bath = parseBath(c, root.bath);
  const uncertainty = parseUncertainty(c, root.uncertainty);
  const calibration = root.calibration === undefined ? undefined : parseCalibration(c, root.calibration);

  if (
    c.issues.length > 0 ||
    !material ||
    !chemistry ||
    grainSizeAstm === undefined ||
    !section ||
    !austenitize ||
    transferS === undefined ||
    !agitation ||
    !bath ||
    !uncertainty
  ) {
    return { issues: c.issues.length ? c.issues : [{ path: '', message: 'invalid input' }] };
  }
  const input: PredictInput = {
    material,
    chemistryWtPct: chemistry,
    grainSizeAstm,
    section,
    austenitize,
    transferS,
    agitation,
    ...(heatTransferWPerM2K !== undefined ? { heatTransferWPerM2K } : {}),
    ambientC,
    uncertainty,
    ...(calibration ? { calibration } : {}),
    bath,
  };
  return { input, warnings };
}

function parseSection(c: Checker, raw: unknown): Section | undefined {
  if (raw === undefined) return c.fail('section', 'is required ({"shape":"plate","thicknessMm":n}, {"shape":"cylinder","diameterMm":n} or {"shape":"sphere","diameterMm":n})');
  if (raw === null || typeof raw !== 'object' || Array.isArray(raw)) return c.fail('section', `must be an object; got ${describe(raw)}`);
  const shape = c.oneOf(raw as Obj, 'shape', 'section', ['plate', 'cylinder', 'sphere'] as const);
  if (!shape) return undefined;
  if (shape === 'plate') {
    const o = c.object(raw, 'section', ['shape', 'thicknessMm']);
    const thicknessMm = o ? c.number(o, 'thicknessMm', 'section', { min: 0, max: 2000, exclusiveMin: true }) : undefined;
    return thicknessMm === undefined ? undefined : { shape, thicknessMm };
  }
  const o = c.object(raw, 'section', ['shape', 'diameterMm']);
  const diameterMm = o ? c.number(o, 'diameterMm', 'section', { min: 0, max: 2000, exclusiveMin: true }) : undefined;
  return diameterMm === undefined ? undefined : { shape, diameterMm };
}

function parseBath(c: Checker, raw: unknown): Array<[number, number]> | undefined {
  if (raw === undefined) return c.fail('bath', 'is required (array of [tS, tempC] from the load entering the bath to leaving it)');
  if (!Array.isArray(raw)) return c.fail('bath', `must be an array of [tS, tempC] pairs; got ${describe(raw)}`);
  if (raw.length < 2) return c.fail('bath', `needs at least 2 samples; got ${raw.length}`);
  if (raw.length > MAX_BATH_SAMPLES) return c.fail('bath', `has ${raw.length} samples; at most ${MAX_BATH_SAMPLES} are accepted`);
  const out: Array<[number, number]> = new Array(raw.length);
  let prev = -Infinity;
  for (let i = 0; i < raw.length; i++) {
    const s = raw[i];
    const p = `bath[${i}]`;
    if (!Array.isArray(s) || s.length !== 2) return c.fail(p, `must be a pair [tS, tempC]; got ${describe(s)}${Array.isArray(s) ? ` of length ${s.length}` : ''}`);
    const [t, temp] = s as unknown[];
    if (typeof t !== 'number' || !Number.isFinite(t)) return c.fail(`${p}[0]`, `tS must be a finite number of seconds; got ${describe(t)}`);
    if (typeof temp !== 'number' || !Number.isFinite(temp)) return c.fail(`${p}[1]`, `tempC must be a finite number; got ${describe(temp)}`);
    if (t < 0) return c.fail(`${p}[0]`, `tS must be ≥ 0 (seconds since the load entered the bath); got ${t}`);
    if (t <= prev) return c.fail(`${p}[0]`, `tS must increase strictly; got ${t} after ${prev}`);
    if (temp < 20 || temp > 900) return c.fail(`${p}[1]`, `tempC ${temp} is not a plausible bath temperature (20–900 °C)`);
    prev = t;
    out[i] = [t, temp];
  }
  return out;
}

function parseUncertainty(c: Checker, raw: unknown): UncertaintySettings | undefined {
  if (raw === undefined) return { ...DEFAULT_UNCERTAINTY };
  const o = c.object(raw, 'uncertainty', ['samples', 'seed', 'thermocoupleSdC', 'chemistrySdWtPct']);
  if (!o) return undefined;
  const samples = c.number(o, 'samples', 'uncertainty', { min: 0, max: MAX_ENSEMBLE_SAMPLES, integer: true });
  const seed = c.number(o, 'seed', 'uncertainty', { min: -2147483648, max: 2147483647, integer: true });
  const thermocoupleSdC = c.number(o, 'thermocoupleSdC', 'uncertainty', { min: 0, max: 50, optional: true });
  let chemistrySdWtPct: Partial<Record<Element, number>> | undefined;
  if (o.chemistrySdWtPct !== undefined) {
    const sd = c.object(o.chemistrySdWtPct, 'uncertainty.chemistrySdWtPct', ELEMENTS);
    if (sd) {
      chemistrySdWtPct = {};
      for (const el of Object.keys(sd) as Element[]) {
        const v = c.number(sd, el, 'uncertainty.chemistrySdWtPct', { min: 0, max: 5 });
        if (v !== undefined) chemistrySdWtPct[el] = v;
      }
    }
  }
  if (samples === undefined || seed === undefined) return undefined;
  return {
    samples,
    seed,
    ...(thermocoupleSdC !== undefined ? { thermocoupleSdC } : {}),
    ...(chemistrySdWtPct ? { chemistrySdWtPct } : {}),
  };
}

function parseCalibration(c: Checker, raw: unknown): Calibration | undefined {
  const o = c.object(raw, 'calibration', ['bainiteTimeFactor', 'ferritePearliteTimeFactor', 't0PrimeBiasWtPct', 'bainiteTimeLnSd', 'ferritePearliteTimeLnSd', 't0PrimeSdWtPct', 'hardnessFactor', 'hardnessLnSd', 'bands']);
  if (!o) return undefined;
  const out: Calibration = {};
  const f = c.number(o, 'bainiteTimeFactor', 'calibration', { min: 0, max: 1000, exclusiveMin: true, optional: true });
  if (f !== undefined) out.bainiteTimeFactor = f;
  const fp = c.number(o, 'ferritePearliteTimeFactor', 'calibration', { min: 0, max: 1e6, exclusiveMin: true, optional: true });
  if (fp !== undefined) out.ferritePearliteTimeFactor = fp;
  const b = c.number(o, 't0PrimeBiasWtPct', 'calibration', { min: -1, max: 1, optional: true });
  if (b !== undefined) out.t0PrimeBiasWtPct = b;
  const bsd = c.number(o, 'bainiteTimeLnSd', 'calibration', { min: 0, max: 3, optional: true });
  if (bsd !== undefined) out.bainiteTimeLnSd = bsd;
  const fsd = c.number(o, 'ferritePearliteTimeLnSd', 'calibration', { min: 0, max: 3, optional: true });
  if (fsd !== undefined) out.ferritePearliteTimeLnSd = fsd;
  const tsd = c.number(o, 't0PrimeSdWtPct', 'calibration', { min: 0, max: 0.5, optional: true });
  if (tsd !== undefined) out.t0PrimeSdWtPct = tsd;
  const hf = c.number(o, 'hardnessFactor', 'calibration', { min: 0.5, max: 2, optional: true });
  if (hf !== undefined) out.hardnessFactor = hf;
  const hsd = c.number(o, 'hardnessLnSd', 'calibration', { min: 0, max: 1, optional: true });
  if (hsd !== undefined) out.hardnessLnSd = hsd;
  if (o.bands !== undefined) {
    const bands = c.object(o.bands, 'calibration.bands', BAND_QUANTITIES);
    if (bands) {
      out.bands = {};
      for (const q of Object.keys(bands) as BandQuantity[]) {
        const path = `calibration.bands.${q}`;
        const entry = c.object(bands[q], path, ['bias', 'sd']);
        if (!entry) continue;
        const bias = c.number(entry, 'bias', path, { optional: true });
        const sd = c.number(entry, 'sd', path, { min: 0, optional: true });
        out.bands[q] = { ...(bias !== undefined ? { bias } : {}), ...(sd !== undefined ? { sd } : {}) };
      }
    }
  }
  return out;
}

/**
 * Validates a t0 input ({chemistryWtPct, fromC, toC, stepC}, optional material, default "steel"). The alloy's own
 * carbon does not enter T0, so an iron's chemistry is accepted with material "ductile-iron".
 */
export function parseT0Input(raw: unknown): { input: T0Input; warnings: string[] } | { issues: InputIssue[] } {
  const c = new Checker();
  const root = c.object(raw, '', ['chemistryWtPct', 'fromC', 'toC', 'stepC', 'material']);
  if (!root) return { issues: c.issues };
  const material: Material | undefined = root.material === undefined ? 'steel' : c.oneOf<Material>(root, 'material', '', ['steel', 'ductile-iron']);
  const warnings: string[] = [];
  let chemistry: ChemistryWtPct | null = null;
  if (root.chemistryWtPct === undefined) c.fail('chemistryWtPct', 'is required (element symbol → wt%)');
  else if (material) {
    const checked = checkChemistry(root.chemistryWtPct, material);
    for (const issue of checked.issues) {
      const path = issue.field.startsWith('chemistryWtPct') ? issue.field : `chemistryWtPct.${issue.field}`;
      if (issue.severity === 'error') c.fail(path, issue.message);
      else warnings.push(`${path}: ${issue.message}`);
    }
    chemistry = checked.chemistry;
  }
  const fromC = c.number(root, 'fromC', '', { min: 0, max: 900 });
  const toC = c.number(root, 'toC', '', { min: 0, max: 900 });
  const stepC = c.number(root, 'stepC', '', { min: 0, max: 900, exclusiveMin: true });
  if (fromC !== undefined && toC !== undefined && stepC !== undefined && Math.abs(toC - fromC) / stepC > 2000) {
    c.fail('stepC', `gives ${Math.floor(Math.abs(toC - fromC) / stepC) + 1} rows; at most 2001 are allowed`);
  }
  if (c.issues.length > 0 || !chemistry || fromC === undefined || toC === undefined || stepC === undefined) {
    return { issues: c.issues.length ? c.issues : [{ path: '', message: 'invalid input' }] };
  }
  return { input: { chemistryWtPct: chemistry, fromC, toC, stepC }, warnings };
}
