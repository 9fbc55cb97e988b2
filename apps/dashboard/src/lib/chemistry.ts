/**
 * A heat's chemistry against a product spec's limits, element by element (the receipt check on
 * chemistry). An element the spec limits but the heat does not state is "missing": it is not assumed
 * to be inside, because a certificate that omits a limited element cannot show conformance.
 */

export interface ElementLimit {
  minWtPct?: number;
  maxWtPct?: number;
}

export type ElementStatus = 'inside' | 'below' | 'above' | 'missing' | 'not-limited';

export interface ElementCheck {
  element: string;
  wtPct: number | null;
  minWtPct: number | null;
  maxWtPct: number | null;
  status: ElementStatus;
}

/** Display order: C first, then the usual alloying order, then anything else alphabetically. */
const ORDER = ['C', 'Si', 'Mn', 'Ni', 'Cr', 'Mo', 'Al', 'Cu', 'V', 'Nb', 'Ti', 'B', 'N', 'P', 'S', 'Co', 'W'];

export function checkChemistry(
  chemistryWtPct: Readonly<Record<string, unknown>> | null | undefined,
  limits: Readonly<Record<string, ElementLimit | undefined>> | null | undefined,
): ElementCheck[] {
  const chem = chemistryWtPct ?? {};
  const lim = limits ?? {};
  const elements = new Set([...Object.keys(chem), ...Object.keys(lim).filter((k) => lim[k] !== undefined)]);
  const rank = (e: string): number => {
    const i = ORDER.indexOf(e);
    return i === -1 ? ORDER.length : i;
  };
  return [...elements]
    .sort((a, b) => rank(a) - rank(b) || a.localeCompare(b))
    .map((element) => {
      const raw = chem[element];
      const wtPct = typeof raw === 'number' && Number.isFinite(raw) ? raw : null;
      const l = lim[element];
      const minWtPct = typeof l?.minWtPct === 'number' ? l.minWtPct : null;
      const maxWtPct = typeof l?.maxWtPct === 'number' ? l.maxWtPct : null;
      let status: ElementStatus;
      if (minWtPct === null && maxWtPct === null) status = 'not-limited';
      else if (wtPct === null) status = 'missing';
      else if (minWtPct !== null && wtPct < minWtPct) status = 'below';
      else if (maxWtPct !== null && wtPct > maxWtPct) status = 'above';
      else status = 'inside';
      return { element, wtPct, minWtPct, maxWtPct, status };
    });
}

/** True when every limited element is stated and inside its limits. */
export function chemistryConforms(checks: readonly ElementCheck[]): boolean {
  return checks.every((c) => c.status === 'inside' || c.status === 'not-limited');
}
