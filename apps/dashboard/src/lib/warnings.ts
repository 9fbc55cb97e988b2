/**
 * Model and advice warnings in plain words. The engine tags each warning with the part of the model it came
 * from ("temperaturesC: Ms below …", "advice: no bath temperature …"); that tag helps a developer, not the shift,
 * so the screen drops it. The same warning can reach a page twice (the heat diagram repeats the advice's), so
 * the list is also made unique.
 */

/** A leading internal tag: one identifier (letters, digits, dots) and a colon, e.g. `temperaturesC:`. */
const INTERNAL_TAG = /^[a-z][A-Za-z0-9.]*:\s+/;

export function plainWarning(text: string): string {
  const stripped = text.trim().replace(INTERNAL_TAG, '');
  return stripped.charAt(0).toUpperCase() + stripped.slice(1);
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
