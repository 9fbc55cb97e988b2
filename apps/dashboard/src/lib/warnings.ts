import { CRITERION_NAMES } from './prediction.js';

/**
 * Model and advice warnings in plain words. The engine tags each warning with the part of the model it came
 * from ("temperaturesC: Ms below …", "advice: no bath temperature …"); that tag helps a developer, not the shift,
 * so the screen drops it. The same warning can reach a page twice (the heat diagram repeats the advice's), so
 * the list is also made unique. Criterion ids inside the text ('min-film-to-block') become their names.
 */

/** A leading internal tag: one identifier (letters, digits, dots) and a colon, e.g. `temperaturesC:`. */
const INTERNAL_TAG = /^[a-z][A-Za-z0-9.]*:\s+/;

/** Hyphenated criterion ids as whole words (a plain word such as 'hardness' is left as it is). */
const CRITERION_ID = new RegExp(`(?<![\\w-])(${Object.keys(CRITERION_NAMES).filter((id) => id.includes('-')).map((id) => id.replace(/[-]/g, '\\-')).join('|')})(?![\\w-])`, 'g');

export function plainWarning(text: string): string {
  const stripped = text.trim().replace(INTERNAL_TAG, '').replace(CRITERION_ID, (id) => lowerFirst(CRITERION_NAMES[id] ?? id));
  return stripped.charAt(0).toUpperCase() + stripped.slice(1);
}

/**
 * 'Minimum bainite …' inside a sentence; a leading element symbol or acronym ('Si + Al', 'Ms', 'HV') keeps its case:
 * only a first word of three or more letters, capital then lower case, is a plain word.
 */
function lowerFirst(name: string): string {
  return /^[A-Z][a-z]{2,}\b/.test(name) ? name.charAt(0).toLowerCase() + name.slice(1) : name;
}

/** Plain and unique, first occurrence kept, in order. */
export function plainWarnings(...lists: ReadonlyArray<readonly string[] | null | undefined>): string[] {
  const seen = new Set<string>();
  const out: string[] = [];
  for (const list of lists) {
    for (const w of list ?? []) {
      const plain = plainWarning(w);
      if (plain === '' || seen.has(plain)) continue;
      seen.add(plain);
      out.push(plain);
    }
  }
  return out;
}
