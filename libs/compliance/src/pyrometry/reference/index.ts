// The reference sets a plant can choose from, and lookup of keyed values. Logic never names a
// standard: it reads whatever set the equipment (or the customer's purchase order) calls for.

import type { FurnaceClass, InstrumentationType, Keyed, LookupContext, PyrometryReference, Sourced } from '../types.js';
import { AMS2750E, AMS2750F, AMS2750G, AMS2750H } from './ams2750.js';
import { CQI9_3, CQI9_4 } from './cqi9.js';

export { AMS2750E, AMS2750F, AMS2750G, AMS2750H, AMS2750_REVISIONS, type Ams2750Revision } from './ams2750.js';
export { CQI9_3, CQI9_4, CQI9_EDITIONS, CQI9_DIFFERENCES_FROM_AMS2750, type Cqi9Edition } from './cqi9.js';
export { THERMOCOUPLE_METAL, THERMOCOUPLE_WIRE_TOLERANCE, type WireGrade } from './thermocouples.js';
export { FROM_MEMORY, CONFIRM_AGAINST_COPY } from './sourcing.js';

export const PYROMETRY_REFERENCES: readonly PyrometryReference[] = [AMS2750E, AMS2750F, AMS2750G, AMS2750H, CQI9_3, CQI9_4];

/** The built-in set for a standard and revision, or undefined when we have none. */
export function findPyrometryReference(standard: PyrometryReference['standard'], revision: string): PyrometryReference | undefined {
  return PYROMETRY_REFERENCES.find((r) => r.standard === standard && r.revision === revision);
}

/** A looked-up value with the key it was found under, so results can cite "which limit". */
export interface LookedUp<T> {
  readonly key: string;
  readonly sourced: Sourced<T | null>;
}

/**
 * Finds the value a keyed reference item holds for this equipment. The key string names the
 * reference set and cell (e.g. "AMS2750G satDifferenceLimit class 2") for reports.
 */
export function lookupKeyed<T>(reference: PyrometryReference, item: string, keyed: Keyed<T>, context: LookupContext): LookedUp<T> {
  const prefix = `${reference.id} ${item}`;
  switch (keyed.basis) {
    case 'single':
      return { key: prefix, sourced: keyed.value };
    case 'furnace-class':
      return { key: `${prefix} class ${context.furnaceClass}`, sourced: keyed.byClass[context.furnaceClass] };
    case 'class-and-type':
      return {
        key: `${prefix} class ${context.furnaceClass} type ${context.instrumentationType}`,
        sourced: keyed.byClassAndType[context.furnaceClass][context.instrumentationType],
      };
    case 'sat-method': {
      if (!context.satMethod) {
        // The standard keys this item by SAT method; without one no limit can be chosen.
        return {
          key: `${prefix} (SAT method not set)`,
          sourced: { value: null, confirmed: false, note: `${reference.id} keys ${item} by SAT method (probe or comparative); the equipment record names none` },
        };
      }
      return { key: `${prefix} ${context.satMethod} method`, sourced: keyed.byMethod[context.satMethod] };
    }
  }
}

/** Shorthand used by tests and screens. */
export function lookupContext(furnaceClass: FurnaceClass, instrumentationType: InstrumentationType, satMethod?: LookupContext['satMethod']): LookupContext {
  return satMethod ? { furnaceClass, instrumentationType, satMethod } : { furnaceClass, instrumentationType };
}

/** One value of a reference set, flattened for review screens. */
export interface ReferenceValueListing {
  /** Path inside the set, e.g. "satDifferenceLimit.byClass.2". */
  readonly path: string;
  readonly value: unknown;
  readonly confirmed: boolean;
  readonly note: string;
}

/**
 * Every sourced value of a reference set, so a screen can list what the plant must confirm
 * against its own copy of the standard (confirmed: false) next to what practice.md confirmed.
 */
export function listReferenceValues(reference: PyrometryReference): ReferenceValueListing[] {
  const out: ReferenceValueListing[] = [];
  const walk = (node: unknown, path: string): void => {
    if (node === null || typeof node !== 'object') return;
    const o = node as Record<string, unknown>;
    if ('value' in o && 'confirmed' in o && 'note' in o && typeof o.confirmed === 'boolean') {
      out.push({ path, value: o.value, confirmed: o.confirmed, note: String(o.note) });
      return;
    }
    for (const [k, v] of Object.entries(o)) walk(v, path ? `${path}.${k}` : k);
  };
  walk(reference, '');
  return out;
}
