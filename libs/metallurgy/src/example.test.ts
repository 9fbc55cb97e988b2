import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { requirePredictInput } from './input.js';
import { predict } from './predict.js';

// The worked example of README.md, explained there number by number. These are regression values [C] of this
// package (not outside references): if a model change moves them, update the README's explanation with them.
describe('README worked example (invented spring steel AS-60)', () => {
  const input = requirePredictInput(JSON.parse(readFileSync(new URL('../examples/spring-steel.json', import.meta.url), 'utf8')));
  const out = predict(input);

  it('matches the numbers the README explains', () => {
    expect(out.temperaturesC).toEqual({ ae1: 766.1, ae3: 827.4, bs: 557.4, ms: 252.5 });
    expect(out.t0).toEqual({ bathTempC: 320.23, t0CarbonWtPct: 1.3405, t0PrimeCarbonWtPct: 1.1301 });
    expect(out.bainite).toMatchObject({ ceilingFraction: 0.4767, fractionAtEnd: 0.4782, timeTo95PctS: 3440, earliestHoldEndS: 12655 });
    expect(out.quench).toEqual({
      upperProductsFraction: 0.0107,
      coreReachesBathS: 28.6,
      idealCriticalDiameterMm: 110.9,
      heatTransferWPerM2K: 1543,
      ferriteOnsetIndex: 0.2974,
      pearliteOnsetIndex: 1.1923,
    });
    expect(out.final).toEqual({
      bainiticFerrite: 0.4782,
      filmAustenite: 0.0717,
      blockyAustenite: 0.1613,
      freshMartensite: 0.2781,
      upperProducts: 0.0107,
      bathMartensite: 0,
      austeniteCarbonWtPct: 1.1333,
      residualAusteniteMsC: 117.3,
      filmToBlockyRatio: 0.163,
    });
    expect(out.properties.hardnessHV).toEqual({ p05: 461, p50: 573, p95: 676 });
    expect(out.properties.tensileMPa).toEqual({ p05: 1455, p50: 1852, p95: 2261 });
    // 12 model warnings plus the A255 grain-size note (the example's grain size is 8, the factors are for 7).
    expect(out.warnings).toHaveLength(13);
    expect(out.warnings).toContain(
      "quench.idealCriticalDiameterMm: computed for ASTM grain size 7 (the A255 factors' basis); the setup's grain size 8 is not applied (the A255 grain-size carbon factors are not in our sources)",
    );
  });
});
