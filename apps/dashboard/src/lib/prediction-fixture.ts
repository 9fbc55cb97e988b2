/**
 * An invented stored prediction in the shape of libs/contracts PredictionResult (the `ausline predict`
 * output plus verdicts, overall, hold advice, bands and basis), for tests of the screens. No model
 * produced these numbers: a 0.55 C, 1.4 Si spring steel held 45 min at 300 °C, made up to look
 * plausible. `intoBathMs` places the hold advice in time.
 */
export function inventedPrediction(intoBathMs: number, holdMin = 45): Record<string, unknown> {
  const min = 60_000;
  const curve: Array<[number, number]> = [];
  const band: Array<[number, number, number]> = [];
  for (let tS = 0; tS <= holdMin * 60; tS += 60) {
    const f = 0.575 * (1 - Math.exp(-((tS / 900) ** 1.6)));
    curve.push([tS, Math.round(f * 1000) / 1000]);
    band.push([tS, Math.round(f * 0.93 * 1000) / 1000, Math.round(Math.min(0.59, f * 1.05) * 1000) / 1000]);
  }
  const b = (p05: number, p50: number, p95: number) => ({ p05, p50, p95 });
  return {
    modelVersion: 'invented-fixture',
    material: 'steel',
    temperaturesC: { ae1: 742, ae3: 778, bs: 561, ms: 276 },
    t0: { bathTempC: 300, t0CarbonWtPct: 1.52, t0PrimeCarbonWtPct: 1.31 },
    bainite: { ceilingFraction: 0.59, fractionAtEnd: 0.575, timeTo95PctS: 2280, earliestHoldEndS: 2400, curve, band, loggedUntilS: holdMin * 60 },
    quench: { upperProductsFraction: 0.025, coreReachesBathS: 6, idealCriticalDiameterMm: 38 },
    final: { bainiticFerrite: 0.575, filmAustenite: 0.27, blockyAustenite: 0.09, freshMartensite: 0.04, upperProducts: 0.025, austeniteCarbonWtPct: 1.18, residualAusteniteMsC: -12 },
    properties: { hardnessHV: b(470, 492, 515), tensileMPa: b(1540, 1610, 1680), adiGrade: null },
    bands: { bainiticFerrite: b(0.56, 0.575, 0.59), blockyAustenite: b(0.08, 0.09, 0.11), freshMartensite: b(0.03, 0.04, 0.05) },
    warnings: ['grain size not given: ASTM 9 assumed'],
    verdicts: [
      { criterion: 'min-bainite', rule: 'predicted-bainite-min', verdict: 'conforming', message: 'Bainitic ferrite predicted 56.0–59.0 % against a minimum of 55.0 %: conforming', p05: 0.56, p50: 0.575, p95: 0.59, limit: 0.55, unit: 'fraction', drivers: ['T0′ ceiling 59 % at 300 °C'] },
      { criterion: 'max-blocky-austenite', rule: 'predicted-blocky-austenite-max', verdict: 'at-risk', message: 'Blocky retained austenite predicted 8.0–11.0 % against a maximum of 10.0 %: at risk', p05: 0.08, p50: 0.09, p95: 0.11, limit: 0.1, unit: 'fraction', drivers: ['bath 300 °C leaves coarse blocks between sheaves'] },
      { criterion: 'hardness', rule: 'predicted-hardness', verdict: 'conforming', message: 'Hardness predicted 470–515 HV against 460–545 HV: conforming', p05: 470, p50: 492, p95: 515, limitMin: 460, limitMax: 545, unit: 'HV', drivers: [] },
    ],
    overall: 'at-risk',
    hold: {
      earliestSafeEndAt: new Date(intoBathMs + 40 * min).toISOString(),
      scheduledEndAt: new Date(intoBathMs + holdMin * min).toISOString(),
      extraHoldMin: 1.5,
      bathOffsetC: 0.4,
      holdBathTempC: 300.4,
      nominalBathC: 300,
      limiting: ['complete-transformation'],
      reason: null,
    },
    basis: {
      phase: 'DONE',
      loggedUntilS: holdMin * 60,
      judgedUntilS: holdMin * 60,
      projection: null,
      inputs: {
        heatId: 'invented', heatRevision: 1, specVersionId: 'invented', material: 'steel', section: { shape: 'PLATE', sizeMm: 4 },
        austenitize: { tempC: 875, minutes: 59, source: 'furnace log' }, transferS: { value: 10, source: 'load events' }, agitation: 'moderate',
        heatTransferWPerM2K: null, grainSizeAstm: 9, ambientC: 25, bathMeanC: 300.1,
        bathChannels: [{ channelId: 'invented', code: 'tc1', used: true, samples: 540 }], uncertainty: { samples: 200, seed: 1 },
      },
    },
  };
}
