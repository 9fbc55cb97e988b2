import { describe, expect, it } from 'vitest';
import { findExcursions } from './excursions.js';

describe('findExcursions', () => {
  const ts = [0, 10, 20, 30, 40, 50, 60, 70];
  it('finds runs above and below the band with their extremes', () => {
    const v = [370, 382, 385, 379, 370, 355, 358, 370];
    expect(findExcursions(ts, v, 360, 380)).toEqual([
      { fromMs: 10, toMs: 30, side: 'above', extremeC: 385 },
      { fromMs: 50, toMs: 70, side: 'below', extremeC: 355 },
    ]);
  });

  it('ends a run at the last sample when the record stops outside', () => {
    expect(findExcursions([0, 10, 20], [370, 390, 395], 360, 380)).toEqual([{ fromMs: 10, toMs: 20, side: 'above', extremeC: 395 }]);
  });

  it('splits a run that jumps straight from above to below', () => {
    const out = findExcursions([0, 10, 20], [390, 350, 370], 360, 380);
    expect(out.map((e) => e.side)).toEqual(['above', 'below']);
  });

  it('a value on the limit is inside', () => {
    expect(findExcursions([0, 10], [360, 380], 360, 380)).toEqual([]);
  });

  it('a gap ends a run at the last sample before the gap', () => {
    const out = findExcursions([0, 10, 1000, 1010], [390, 391, 392, 370], 360, 380, 100);
    expect(out).toEqual([
      { fromMs: 0, toMs: 10, side: 'above', extremeC: 391 },
      { fromMs: 1000, toMs: 1010, side: 'above', extremeC: 392 },
    ]);
  });
});
