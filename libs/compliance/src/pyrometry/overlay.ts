// A customer's stricter limits on top of a standard's reference set. Purchase orders and customer
// specifications often tighten the standard (practice.md §1.1: "some primes accept ±5.0 °C" for
// class 2), never loosen it, so an overlay may only make a value stricter or fill a value the
// reference set does not give. A looser value is rejected with a message naming the entry; nothing
// is merged unless every entry is acceptable.

import { compareIntervals, describeInterval, assertInterval } from './calendar.js';
import { deltaCToDeltaF } from './limits.js';
import { deepFreeze } from './reference/sourcing.js';
import type {
  AccuracyLimit,
  CalibrationIntervalValue,
  FurnaceClass,
  InstrumentationType,
  InstrumentUse,
  Interval,
  Keyed,
  PyrometryReference,
  SatMethod,
  SensorMetal,
  SensorUse,
  Sourced,
  UniformityTolerance,
  UsesLimit,
} from './types.js';
import { FURNACE_CLASSES, INSTRUMENTATION_TYPES, SAT_METHODS } from './types.js';

/** An accuracy limit as an overlay states it; a missing °F value is derived from °C. */
export interface OverlayAccuracyLimit {
  readonly plusMinusC: number;
  readonly plusMinusF?: number;
  /** Omitted = no percentage alternative (the absolute value alone governs). */
  readonly pctOfReading?: number | null;
}

interface Selectors {
  readonly furnaceClass?: FurnaceClass;
  readonly instrumentationType?: InstrumentationType;
  readonly satMethod?: SatMethod;
}

export type OverlayEntry =
  | ({ readonly item: 'uniformityTolerance'; readonly value: { readonly plusMinusC: number; readonly plusMinusF?: number } } & Selectors)
  | ({ readonly item: 'satDifferenceLimit'; readonly value: OverlayAccuracyLimit } & Selectors)
  | ({ readonly item: 'satInterval'; readonly value: Interval } & Selectors)
  | ({ readonly item: 'tusInterval'; readonly value: Interval } & Selectors)
  | { readonly item: 'sensorAccuracy'; readonly sensorUse: SensorUse; readonly value: OverlayAccuracyLimit }
  | { readonly item: 'instrumentAccuracy'; readonly instrumentUse: InstrumentUse; readonly value: OverlayAccuracyLimit }
  | { readonly item: 'sensorCalibrationInterval'; readonly sensorUse: SensorUse; readonly metal?: SensorMetal; readonly value: Interval }
  | { readonly item: 'instrumentCalibrationInterval'; readonly instrumentUse: InstrumentUse; readonly value: Interval }
  | {
      readonly item: 'sensorReplacement';
      /** Which band: its upper edge as in the reference (null = the open top band). */
      readonly upToC: number | null;
      readonly metal?: SensorMetal;
      readonly expendable?: boolean;
      readonly maxUses?: number;
      readonly maxAge?: Interval;
    }
  | { readonly item: 'satProbeTipDistanceMaxMm'; readonly value: number };

export interface ReferenceOverlay {
  /** The customer document the limits come from, e.g. "Customer spec HT-100 rev C §4.2". */
  readonly source: string;
  readonly entries: readonly OverlayEntry[];
}

export interface OverlayError {
  readonly path: string;
  readonly message: string;
}

export type OverlayResult = { readonly ok: true; readonly reference: PyrometryReference } | { readonly ok: false; readonly errors: readonly OverlayError[] };

type Mutable<T> = { -readonly [K in keyof T]: Mutable<T[K]> };

/** Merges an overlay into a reference set; all-or-nothing. */
export function applyReferenceOverlay(base: PyrometryReference, overlay: ReferenceOverlay): OverlayResult {
  const errors: OverlayError[] = [];
  if (!overlay.source || overlay.source.trim() === '') {
    return { ok: false, errors: [{ path: 'source', message: 'name the customer document the limits come from' }] };
  }
  // Reference sets are plain data, so a structured clone is a full, independent copy.
  const ref = structuredClone(base) as Mutable<PyrometryReference>;
  const sourceNote = (path: string, old: Sourced<unknown>, oldText: string) =>
    `customer overlay "${overlay.source}" (${path}); ${old.value === null ? `fills a value ${base.id} does not give` : `stricter than ${base.id} ${oldText}`}`;

  overlay.entries.forEach((entry, i) => {
    const path = `entries[${i}]`;
    const fail = (message: string, sub = '') => errors.push({ path: `${path}${sub}`, message });
    switch (entry.item) {
      case 'uniformityTolerance': {
        const v = entry.value;
        if (!positive(v.plusMinusC) || (v.plusMinusF !== undefined && !positive(v.plusMinusF))) {
          return fail('tolerance values must be positive numbers', '.value');
        }
        const value: UniformityTolerance = { plusMinusC: v.plusMinusC, plusMinusF: v.plusMinusF ?? deltaCToDeltaF(v.plusMinusC) };
        forCells(ref.uniformityTolerance as Keyed<UniformityTolerance>, entry, base.id, 'uniformityTolerance', fail, (cell, where) => {
          const old = cell.value;
          if (old && (value.plusMinusC > old.plusMinusC || value.plusMinusF > old.plusMinusF)) {
            fail(`±${value.plusMinusC} °C / ±${value.plusMinusF} °F is looser than ${base.id} ${where} ±${old.plusMinusC} °C / ±${old.plusMinusF} °F`, '.value');
            return null;
          }
          return { value, confirmed: true, note: sourceNote(path, cell, `${where} ±${old?.plusMinusC} °C / ±${old?.plusMinusF} °F`) };
        });
        return;
      }
      case 'satDifferenceLimit': {
        const value = toLimit(entry.value, (m) => fail(m, '.value'));
        if (!value) return;
        forCells(ref.satDifferenceLimit as Keyed<AccuracyLimit>, entry, base.id, 'satDifferenceLimit', fail, (cell, where) =>
          replaceLimit(cell, value, `${base.id} ${where}`, sourceNote(path, cell, `${where} ${limitText(cell.value)}`), (m) => fail(m, '.value')),
        );
        return;
      }
      case 'satInterval':
      case 'tusInterval': {
        const interval = checkInterval(entry.value, (m) => fail(m, '.value'));
        if (!interval) return;
        forCells(ref[entry.item] as Keyed<Interval>, entry, base.id, entry.item, fail, (cell, where) =>
          replaceInterval(cell, interval, `${base.id} ${where}`, sourceNote(path, cell, `${where} ${intervalText(cell.value)}`), (m) => fail(m, '.value')),
        );
        return;
      }
      case 'sensorAccuracy': {
        const value = toLimit(entry.value, (m) => fail(m, '.value'));
        const cell = ref.sensorAccuracy[entry.sensorUse];
        if (!cell) return fail(`unknown sensor use ${JSON.stringify(entry.sensorUse)}`, '.sensorUse');
        if (!value) return;
        const replaced = replaceLimit(cell, value, `${base.id} sensorAccuracy ${entry.sensorUse}`, sourceNote(path, cell, `sensorAccuracy ${entry.sensorUse} ${limitText(cell.value)}`), (m) =>
          fail(m, '.value'),
        );
        if (replaced) ref.sensorAccuracy[entry.sensorUse] = replaced;
        return;
      }
      case 'instrumentAccuracy': {
        const value = toLimit(entry.value, (m) => fail(m, '.value'));
        const cell = ref.instrumentAccuracy[entry.instrumentUse];
        if (!cell) return fail(`unknown instrument use ${JSON.stringify(entry.instrumentUse)}`, '.instrumentUse');
        if (!value) return;
        const replaced = replaceLimit(
          cell,
          value,
          `${base.id} instrumentAccuracy ${entry.instrumentUse}`,
          sourceNote(path, cell, `instrumentAccuracy ${entry.instrumentUse} ${limitText(cell.value)}`),
          (m) => fail(m, '.value'),
        );
        if (replaced) ref.instrumentAccuracy[entry.instrumentUse] = replaced;
        return;
      }
      case 'sensorCalibrationInterval': {
        const interval = checkInterval(entry.value, (m) => fail(m, '.value'));
        const byMetal = ref.sensorCalibrationInterval[entry.sensorUse];
        if (!byMetal) return fail(`unknown sensor use ${JSON.stringify(entry.sensorUse)}`, '.sensorUse');
        if (!interval) return;
        for (const metal of entry.metal ? [entry.metal] : (['base-metal', 'noble-metal'] as const)) {
          const cell = byMetal[metal];
          const replaced = replaceInterval(
            cell,
            interval,
            `${base.id} sensorCalibrationInterval ${entry.sensorUse} ${metal}`,
            sourceNote(path, cell, `sensorCalibrationInterval ${entry.sensorUse} ${metal} ${intervalText(cell.value)}`),
            (m) => fail(m, '.value'),
          );
          if (replaced) byMetal[metal] = replaced;
        }
        return;
      }
      case 'instrumentCalibrationInterval': {
        const interval = checkInterval(entry.value, (m) => fail(m, '.value'));
        const cell = ref.instrumentCalibrationInterval[entry.instrumentUse];
        if (!cell) return fail(`unknown instrument use ${JSON.stringify(entry.instrumentUse)}`, '.instrumentUse');
        if (!interval) return;
        const replaced = replaceInterval(
          cell,
          interval,
          `${base.id} instrumentCalibrationInterval ${entry.instrumentUse}`,
          sourceNote(path, cell, `instrumentCalibrationInterval ${entry.instrumentUse} ${intervalText(cell.value)}`),
          (m) => fail(m, '.value'),
        );
        if (replaced) ref.instrumentCalibrationInterval[entry.instrumentUse] = replaced;
        return;
      }
      case 'sensorReplacement': {
        const metal = entry.metal ?? 'base-metal';
        const expendable = entry.expendable ?? false;
        const rule = ref.sensorReplacement.find((r) => r.appliesTo.metal === metal && r.appliesTo.expendable === expendable);
        if (!rule) return fail(`${base.id} has no replacement table for ${expendable ? 'expendable' : 'nonexpendable'} ${metal} sensors`);
        const band = rule.bands.find((b) => b.upToC === entry.upToC);
        if (!band) {
          return fail(`${base.id} has no band ending at ${entry.upToC ?? 'open top'}; bands end at ${rule.bands.map((b) => b.upToC ?? 'open top').join(', ')}`, '.upToC');
        }
        if (entry.maxUses === undefined && entry.maxAge === undefined) return fail('give maxUses, maxAge or both');
        const bandName = `sensorReplacement ${metal} band ≤${entry.upToC ?? '∞'} °C`;
        if (entry.maxUses !== undefined) {
          if (!Number.isInteger(entry.maxUses) || entry.maxUses < 1) return fail('must be a whole number ≥ 1', '.maxUses');
          const old = band.maxUses.value;
          if (typeof old === 'number' && entry.maxUses > old) {
            fail(`${entry.maxUses} uses is looser than ${base.id} ${bandName} ${old} uses`, '.maxUses');
          } else {
            band.maxUses = { value: entry.maxUses as UsesLimit, confirmed: true, note: sourceNote(path, band.maxUses, `${bandName} ${old} uses`) };
          }
        }
        if (entry.maxAge !== undefined) {
          const interval = checkInterval(entry.maxAge, (m) => fail(m, '.maxAge'));
          if (interval) {
            const old = band.maxAge;
            const replaced =
              old.value === 'unlimited'
                ? { value: interval, confirmed: true, note: sourceNote(path, old, `${bandName} unlimited age`) }
                : replaceInterval(old as Sourced<Interval | null>, interval, `${base.id} ${bandName} age`, sourceNote(path, old, `${bandName} ${intervalText(old.value as Interval | null)}`), (m) =>
                    fail(m, '.maxAge'),
                  );
            if (replaced) band.maxAge = replaced;
          }
        }
        return;
      }
      case 'satProbeTipDistanceMaxMm': {
        if (!positive(entry.value)) return fail('must be a positive number of millimetres', '.value');
        const old = ref.satProbeTipDistanceMaxMm;
        if (old.value !== null && entry.value > old.value) return fail(`${entry.value} mm is looser than ${base.id} ${old.value} mm`, '.value');
        ref.satProbeTipDistanceMaxMm = { value: entry.value, confirmed: true, note: sourceNote(path, old, `${old.value} mm`) };
        return;
      }
      default: {
        const unknown: never = entry;
        fail(`unknown item ${JSON.stringify((unknown as { item?: unknown }).item)}`, '.item');
      }
    }
  });

  if (errors.length > 0) return { ok: false, errors };
  ref.id = `${base.id}+overlay(${overlay.source})`;
  ref.overlays = [...base.overlays, overlay.source];
  return { ok: true, reference: deepFreeze(ref as PyrometryReference) };
}

function positive(n: unknown): n is number {
  return typeof n === 'number' && Number.isFinite(n) && n > 0;
}

function checkInterval(interval: Interval, fail: (m: string) => void): Interval | null {
  try {
    if (interval.unit !== 'day' && interval.unit !== 'month') throw new RangeError(`unit must be 'day' or 'month'`);
    assertInterval(interval);
    return interval;
  } catch (e) {
    fail((e as Error).message);
    return null;
  }
}

function toLimit(v: OverlayAccuracyLimit, fail: (m: string) => void): AccuracyLimit | null {
  if (!positive(v.plusMinusC)) return fail('plusMinusC must be a positive number'), null;
  if (v.plusMinusF !== undefined && !positive(v.plusMinusF)) return fail('plusMinusF must be a positive number'), null;
  if (v.pctOfReading !== undefined && v.pctOfReading !== null && !positive(v.pctOfReading)) return fail('pctOfReading must be a positive number or null'), null;
  return { plusMinusC: v.plusMinusC, plusMinusF: v.plusMinusF ?? deltaCToDeltaF(v.plusMinusC), pctOfReading: v.pctOfReading ?? null };
}

function limitText(l: AccuracyLimit | null): string {
  if (!l) return '(not given)';
  return `±${l.plusMinusC} °C${l.plusMinusF === null ? '' : ` / ±${l.plusMinusF} °F`}${l.pctOfReading === null ? '' : ` or ${l.pctOfReading} %`}`;
}

function intervalText(v: CalibrationIntervalValue): string {
  if (v === null) return '(not given)';
  if (v === 'not-required') return '(not required)';
  return describeInterval(v);
}

/** A limit is stricter when no alternative it allows is wider than the old one's. */
function replaceLimit(
  cell: Sourced<AccuracyLimit | null>,
  value: AccuracyLimit,
  where: string,
  note: string,
  fail: (m: string) => void,
): Sourced<AccuracyLimit | null> | null {
  const old = cell.value;
  if (old) {
    const looser: string[] = [];
    if (value.plusMinusC > old.plusMinusC) looser.push(`±${value.plusMinusC} °C > ±${old.plusMinusC} °C`);
    if (old.plusMinusF !== null && value.plusMinusF !== null && value.plusMinusF > old.plusMinusF) looser.push(`±${value.plusMinusF} °F > ±${old.plusMinusF} °F`);
    if (value.pctOfReading !== null && (old.pctOfReading === null || value.pctOfReading > old.pctOfReading)) {
      looser.push(`${value.pctOfReading} % of reading where ${where} allows ${old.pctOfReading === null ? 'no percentage' : `${old.pctOfReading} %`}`);
    }
    if (looser.length > 0) {
      fail(`${limitText(value)} is looser than ${where} ${limitText(old)}: ${looser.join('; ')}`);
      return null;
    }
  }
  return { value, confirmed: true, note };
}

function replaceInterval(
  cell: Sourced<CalibrationIntervalValue>,
  value: Interval,
  where: string,
  note: string,
  fail: (m: string) => void,
): Sourced<Interval> | null {
  const old = cell.value;
  // Requiring a calibration where the reference requires none, or filling a gap, is stricter.
  if (old !== null && old !== 'not-required') {
    const cmp = compareIntervals(value, old);
    if (Number.isNaN(cmp)) {
      fail(`${describeInterval(value)} cannot be compared with ${where} ${describeInterval(old)} on every date (months vary in length); state it in ${old.unit}s`);
      return null;
    }
    if (cmp > 0) {
      fail(`${describeInterval(value)} is looser than ${where} ${describeInterval(old)}`);
      return null;
    }
  }
  return { value, confirmed: true, note };
}

/** Applies `replace` to every cell of a keyed item that the entry's selectors pick. */
function forCells<T>(
  keyed: Keyed<T>,
  selectors: Selectors,
  refId: string,
  item: string,
  fail: (message: string, sub?: string) => void,
  replace: (cell: Sourced<T | null>, where: string) => Sourced<T | null> | null,
): void {
  const k = keyed as Mutable<Keyed<T>>;
  const refuse = (selector: keyof Selectors, basis: string) =>
    fail(`${refId} keys ${item} ${basis}; an entry for it may not name ${selector}`, `.${selector}`);
  switch (k.basis) {
    case 'single': {
      for (const s of ['furnaceClass', 'instrumentationType', 'satMethod'] as const) if (selectors[s] !== undefined) return refuse(s, 'by nothing (one value)');
      const r = replace(k.value as Sourced<T | null>, item);
      if (r) k.value = r as never;
      return;
    }
    case 'furnace-class': {
      for (const s of ['instrumentationType', 'satMethod'] as const) if (selectors[s] !== undefined) return refuse(s, 'by furnace class only');
      for (const c of selectors.furnaceClass ? [selectors.furnaceClass] : FURNACE_CLASSES) {
        if (!FURNACE_CLASSES.includes(c)) return fail(`unknown furnace class ${JSON.stringify(c)}`, '.furnaceClass');
        const r = replace(k.byClass[c] as Sourced<T | null>, `${item} class ${c}`);
        if (r) k.byClass[c] = r as never;
      }
      return;
    }
    case 'class-and-type': {
      if (selectors.satMethod !== undefined) return refuse('satMethod', 'by furnace class and instrumentation type');
      for (const c of selectors.furnaceClass ? [selectors.furnaceClass] : FURNACE_CLASSES) {
        if (!FURNACE_CLASSES.includes(c)) return fail(`unknown furnace class ${JSON.stringify(c)}`, '.furnaceClass');
        for (const t of selectors.instrumentationType ? [selectors.instrumentationType] : INSTRUMENTATION_TYPES) {
          if (!INSTRUMENTATION_TYPES.includes(t)) return fail(`unknown instrumentation type ${JSON.stringify(t)}`, '.instrumentationType');
          const r = replace(k.byClassAndType[c][t] as Sourced<T | null>, `${item} class ${c} type ${t}`);
          if (r) k.byClassAndType[c][t] = r as never;
        }
      }
      return;
    }
    case 'sat-method': {
      for (const s of ['furnaceClass', 'instrumentationType'] as const) if (selectors[s] !== undefined) return refuse(s, 'by SAT method');
      for (const m of selectors.satMethod ? [selectors.satMethod] : SAT_METHODS) {
        if (!SAT_METHODS.includes(m)) return fail(`unknown SAT method ${JSON.stringify(m)}`, '.satMethod');
        const r = replace(k.byMethod[m] as Sourced<T | null>, `${item} ${m} method`);
        if (r) k.byMethod[m] = r as never;
      }
      return;
    }
  }
}
