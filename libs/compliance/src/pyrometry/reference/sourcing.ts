// Helpers that attach provenance to every reference value. A value is `confirmed` only for the
// revisions practice.md saw it in ([S n] tag); everywhere else it carries the same number as a
// placeholder, flagged so a plant checks it against its own copy of the standard.

import type { Sourced } from '../types.js';

export const CONFIRM_AGAINST_COPY = "confirm against the plant's copy of the standard";
export const FROM_MEMORY = `from memory — ${CONFIRM_AGAINST_COPY}`;

/** A fact as practice.md gives it, with the revisions it was actually seen for. */
export interface Fact<T> {
  readonly value: T;
  /** practice.md location and source tags, e.g. "practice.md §1.1 furnace classes [S2, S70]". */
  readonly source: string;
  /** Revisions (or editions) the source confirms the value for; empty = from memory [M]. */
  readonly confirmedIn: readonly string[];
  /** Extra caution that stays with the value whatever the revision. */
  readonly caveat?: string;
  /** Why the value may differ in a revision that is not confirmed (e.g. "H changed Table 6 [S3]"). */
  readonly changedIn?: Readonly<Record<string, string>>;
}

export function fact<T>(
  value: T,
  source: string,
  confirmedIn: readonly string[],
  extra: { caveat?: string; changedIn?: Readonly<Record<string, string>> } = {},
): Fact<T> {
  return { value, source, confirmedIn, ...extra };
}

/** Resolves a fact for one revision of a standard: confirmed there, or a flagged placeholder. */
export function forRevision<T>(f: Fact<T>, standard: string, revision: string): Sourced<T> {
  const confirmed = f.confirmedIn.includes(revision);
  const pieces = [f.source];
  if (f.caveat) pieces.push(f.caveat);
  if (!confirmed) {
    const changed = f.changedIn?.[revision];
    if (changed) pieces.push(`${changed}; value carried over unconfirmed`);
    if (f.confirmedIn.length === 0) {
      pieces.push(FROM_MEMORY);
    } else {
      pieces.push(
        `seen for ${standard} ${f.confirmedIn.join('/')} only, not for ${revision} — ${CONFIRM_AGAINST_COPY}`,
      );
    }
  }
  return { value: f.value, confirmed, note: pieces.join('; ') };
}

/** A value practice.md does not give: null, unconfirmed, and says so. */
export function notGiven<T>(what: string): Sourced<T | null> {
  return {
    value: null,
    confirmed: false,
    note: `not given in practice.md (${what}); enter it from the plant's copy of the standard`,
  };
}

/**
 * Freezes a reference set all the way down. The sets are shared module constants; a caller that
 * changed one in place would silently change every later judgement in the process.
 */
export function deepFreeze<T>(value: T): T {
  if (value !== null && typeof value === 'object' && !Object.isFrozen(value)) {
    Object.freeze(value);
    for (const v of Object.values(value as Record<string, unknown>)) deepFreeze(v);
  }
  return value;
}
