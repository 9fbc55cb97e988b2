/**
 * What the dashboard reads from a stored prediction (Prediction.result): the `ausline predict` output
 * (issue 3, item 9) plus verdicts, overall, hold advice, bainite band and basis (libs/contracts
 * prediction.ts, PredictionResult). Nothing else in the dashboard looks into Prediction.result: when the
 * stored shape changes, this adapter is the one place to follow it. It does not import the zod schema
 * (the bundle stays small and a field the engine adds later must not break the screen); anything missing
 * or malformed reads as "not given" (null), never as a made-up number: a screen that decides whether
 * parts may leave the bath must not show a default.
 */

export type VerdictLevel = 'conforming' | 'at-risk' | 'nonconforming';

export interface Band {
  p05: number;
  p50: number;
  p95: number;
}

export interface CriterionVerdict {
  criterion: string;
  /** Deviation rule the verdict opens when not conforming. */
  rule: string | null;
  verdict: VerdictLevel;
  message: string | null;
  band: Band | null;
  limit: number | null;
  limitMin: number | null;
  limitMax: number | null;
  unit: string | null;
  /** Which inputs drove the value, most important first. */
  drivers: string[];
}

export interface PhaseMix {
  bainiticFerrite: number | null;
  filmAustenite: number | null;
  blockyAustenite: number | null;
  freshMartensite: number | null;
  upperProducts: number | null;
}

export interface PredictionView {
  version: number | null;
  modelVersion: string | null;
  createdAtMs: number | null;
  /** Time of the last sample the prediction used. */
  watermarkMs: number | null;
  phase: string | null;
  temperaturesC: { ae1: number | null; ae3: number | null; bs: number | null; ms: number | null };
  t0: { bathTempC: number | null; t0CarbonWtPct: number | null; t0PrimeCarbonWtPct: number | null };
  bainite: {
    ceilingFraction: number | null;
    fractionAtEnd: number | null;
    timeTo95PctS: number | null;
    /** [tS from INTO_BATH, fraction] */
    curve: Array<[number, number]>;
    /** [tS, p05, p95]; empty when the prediction carries no band. */
    band: Array<[number, number, number]>;
    /** Curve and band beyond this time are projected at the logged temperature, not logged; null = all logged. */
    loggedUntilS: number | null;
  };
  final: PhaseMix & { austeniteCarbonWtPct: number | null; residualAusteniteMsC: number | null };
  properties: { hardnessHV: Band | null; tensileMPa: Band | null; adiGrade: string | null };
  warnings: string[];
  verdicts: CriterionVerdict[];
  /** The worst verdict as stored; null when the spec names no criterion (or the result has none). */
  overall: VerdictLevel | null;
  hold: {
    earliestSafeEndMs: number | null;
    scheduledEndMs: number | null;
    extraHoldMin: number | null;
    /** Logged bath minus the spec's nominal temperature, °C. */
    bathOffsetC: number | null;
    holdBathTempC: number | null;
    nominalBathC: number | null;
    /** Criteria that set the earliest end. */
    limiting: string[];
    /** Why there is no safe end, when there is none. */
    reason: string | null;
  };
  milestone: string | null;
}

/** The Prediction row as GET /v1/batches/:id returns it (latestPrediction). */
export interface PredictionRow {
  milestone?: string | null;
  version?: number;
  modelVersion?: string;
  createdAt?: string;
  watermark?: string | null;
  phase?: string;
  result?: unknown;
}

type Obj = Record<string, unknown>;

const isObj = (v: unknown): v is Obj => typeof v === 'object' && v !== null && !Array.isArray(v);
const num = (v: unknown): number | null => (typeof v === 'number' && Number.isFinite(v) ? v : null);
const str = (v: unknown): string | null => (typeof v === 'string' && v.trim() !== '' ? v : null);
const obj = (v: unknown): Obj => (isObj(v) ? v : {});
const timeMs = (v: unknown): number | null => {
  if (typeof v !== 'string') return null;
  const t = Date.parse(v);
  return Number.isFinite(t) ? t : null;
};

function band(v: unknown): Band | null {
  if (!isObj(v)) return null;
  const p05 = num(v['p05']);
  const p50 = num(v['p50']);
  const p95 = num(v['p95']);
  return p05 !== null && p50 !== null && p95 !== null ? { p05, p50, p95 } : null;
}

function pairs(v: unknown): Array<[number, number]> {
  if (!Array.isArray(v)) return [];
  const out: Array<[number, number]> = [];
  for (const p of v) {
    if (Array.isArray(p) && num(p[0]) !== null && num(p[1]) !== null) out.push([p[0] as number, p[1] as number]);
  }
  return out;
}

function triples(v: unknown): Array<[number, number, number]> {
  if (!Array.isArray(v)) return [];
  const out: Array<[number, number, number]> = [];
  for (const p of v) {
    if (Array.isArray(p) && num(p[0]) !== null && num(p[1]) !== null && num(p[2]) !== null) out.push([p[0] as number, p[1] as number, p[2] as number]);
  }
  return out;
}

const VERDICTS: readonly VerdictLevel[] = ['conforming', 'at-risk', 'nonconforming'];

function verdictLevel(v: unknown): VerdictLevel | null {
  if (typeof v !== 'string') return null;
  const norm = v.trim().toLowerCase().replace(/[_\s]/g, '-');
  return (VERDICTS as readonly string[]).includes(norm) ? (norm as VerdictLevel) : null;
}

function verdicts(v: unknown): CriterionVerdict[] {
  if (!Array.isArray(v)) return [];
  const out: CriterionVerdict[] = [];
  for (const item of v) {
    if (!isObj(item)) continue;
    const level = verdictLevel(item['verdict']);
    const criterion = str(item['criterion']);
    if (!level || !criterion) continue;
    out.push({
      criterion,
      rule: str(item['rule']),
      verdict: level,
      message: str(item['message']),
      band: band(item),
      limit: num(item['limit']),
      limitMin: num(item['limitMin']),
      limitMax: num(item['limitMax']),
      unit: str(item['unit']),
      drivers: strings(item['drivers']),
    });
  }
  return out;
}

function strings(v: unknown): string[] {
  return Array.isArray(v) ? v.filter((x): x is string => typeof x === 'string') : [];
}

/** Reads a stored prediction; null when there is none. */
export function readPrediction(row: PredictionRow | null | undefined): PredictionView | null {
  if (!row || !isObj(row.result)) return null;
  const r = row.result;
  const temps = obj(r['temperaturesC']);
  const t0 = obj(r['t0']);
  const bainite = obj(r['bainite']);
  const final = obj(r['final']);
  const props = obj(r['properties']);
  const hold = obj(r['hold']);
  return {
    version: num(row.version),
    modelVersion: str(row.modelVersion) ?? str(r['modelVersion']),
    createdAtMs: timeMs(row.createdAt),
    watermarkMs: timeMs(row.watermark),
    phase: str(row.phase),
    temperaturesC: { ae1: num(temps['ae1']), ae3: num(temps['ae3']), bs: num(temps['bs']), ms: num(temps['ms']) },
    t0: { bathTempC: num(t0['bathTempC']), t0CarbonWtPct: num(t0['t0CarbonWtPct']), t0PrimeCarbonWtPct: num(t0['t0PrimeCarbonWtPct']) },
    bainite: {
      ceilingFraction: num(bainite['ceilingFraction']),
      fractionAtEnd: num(bainite['fractionAtEnd']),
      timeTo95PctS: num(bainite['timeTo95PctS']),
      curve: pairs(bainite['curve']),
      band: triples(bainite['band']),
      loggedUntilS: num(bainite['loggedUntilS']),
    },
    final: {
      bainiticFerrite: num(final['bainiticFerrite']),
      filmAustenite: num(final['filmAustenite']),
      blockyAustenite: num(final['blockyAustenite']),
      freshMartensite: num(final['freshMartensite']),
      upperProducts: num(final['upperProducts']),
      austeniteCarbonWtPct: num(final['austeniteCarbonWtPct']),
      residualAusteniteMsC: num(final['residualAusteniteMsC']),
    },
    properties: { hardnessHV: band(props['hardnessHV']), tensileMPa: band(props['tensileMPa']), adiGrade: str(props['adiGrade']) },
    warnings: strings(r['warnings']),
    verdicts: verdicts(r['verdicts']),
    overall: 'overall' in r ? verdictLevel(r['overall']) : null,
    hold: {
      earliestSafeEndMs: timeMs(hold['earliestSafeEndAt']),
      scheduledEndMs: timeMs(hold['scheduledEndAt']),
      extraHoldMin: num(hold['extraHoldMin']),
      bathOffsetC: num(hold['bathOffsetC']),
      holdBathTempC: num(hold['holdBathTempC']),
      nominalBathC: num(hold['nominalBathC']),
      limiting: strings(hold['limiting']),
      reason: str(hold['reason']),
    },
    milestone: str(row.milestone),
  };
}

/** The stored overall verdict, else the worst of the list; null when there is none (no verdict is not "conforming"). */
export function verdictOf(p: PredictionView): VerdictLevel | null {
  return p.overall ?? overallVerdict(p.verdicts);
}

/** The worst verdict of a list; null when the list is empty (no verdict is not "conforming"). */
export function overallVerdict(list: readonly CriterionVerdict[]): VerdictLevel | null {
  let worst: VerdictLevel | null = null;
  for (const v of list) {
    if (worst === null || VERDICTS.indexOf(v.verdict) > VERDICTS.indexOf(worst)) worst = v.verdict;
  }
  return worst;
}

/** Fraction on the curve at tS (linear between points; the last value after the end; null before data). */
export function fractionAt(curve: ReadonlyArray<readonly [number, number]>, tS: number): number | null {
  if (curve.length === 0 || tS < curve[0]![0]) return null;
  for (let i = 1; i < curve.length; i++) {
    const [t1, f1] = curve[i]!;
    if (tS <= t1) {
      const [t0, f0] = curve[i - 1]!;
      return t1 === t0 ? f1 : f0 + ((f1 - f0) * (tS - t0)) / (t1 - t0);
    }
  }
  return curve[curve.length - 1]![1];
}

export const VERDICT_TEXT: Record<VerdictLevel, string> = {
  conforming: 'Conforming',
  'at-risk': 'At risk',
  nonconforming: 'Nonconforming',
};

/** Plain names of the criteria ids (libs/contracts PREDICTION_CRITERIA). */
export const CRITERION_NAMES: Readonly<Record<string, string>> = {
    'min-bainite': 'Minimum bainite (ausferrite) fraction',
    'complete-transformation': 'Transformation complete before the end of hold',
    'max-fresh-martensite': 'Maximum fresh martensite',
    'max-blocky-austenite': 'Maximum blocky austenite',
    'min-film-to-block': 'Minimum film-to-block ratio',
    'max-retained-austenite': 'Maximum retained austenite',
    'ms-margin': 'Bath above Ms by the margin',
    'bs-margin': 'Bath below Bs by the margin',
    'max-upper-products': 'No upper products in the quench',
    'stable-retained-austenite': 'Retained austenite stable at ambient',
    'min-si-plus-al': 'Si + Al keeps cementite out',
    hardness: 'Hardness band',
    tensile: 'Tensile band',
    'adi-stage-i': 'ADI stage I complete',
    'adi-stage-ii': 'ADI stage II not begun',
    'hold-length': 'Scheduled hold long enough',
};

/** The plain name of a criterion id; unknown ids are shown as they are. */
export function criterionName(id: string): string {
  return CRITERION_NAMES[id] ?? id;
}
