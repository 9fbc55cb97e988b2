import { describe, expect, it } from 'vitest';
import { checkChemistry, chemistryConforms } from './chemistry.js';

describe('checkChemistry', () => {
  it('marks each element inside, below, above, missing or not limited', () => {
    const checks = checkChemistry(
      { C: 0.98, Si: 1.2, Mn: 1.3, Cu: 0.1 },
      { C: { minWtPct: 0.95, maxWtPct: 1.1 }, Si: { minWtPct: 1.4 }, Mn: { maxWtPct: 1.2 }, Cr: { maxWtPct: 1.6 } },
    );
    expect(checks.map((c) => [c.element, c.status])).toEqual([
      ['C', 'inside'],
      ['Si', 'below'],
      ['Mn', 'above'],
      ['Cr', 'missing'],
      ['Cu', 'not-limited'],
    ]);
    expect(chemistryConforms(checks)).toBe(false);
  });

  it('a value on a limit is inside', () => {
    const checks = checkChemistry({ C: 1.1 }, { C: { minWtPct: 0.95, maxWtPct: 1.1 } });
    expect(checks[0]!.status).toBe('inside');
    expect(chemistryConforms(checks)).toBe(true);
  });
});
