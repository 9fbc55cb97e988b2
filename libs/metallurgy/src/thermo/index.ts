/** CALPHAD thermodynamics of austenite/ferrite for T0/T0′ and the Fe–C diagram (metallurgy.md §2). */
export {
  BAINITE_STORED_ENERGY_J_PER_MOL,
  ALT_SHIFT_K_PER_AT_PCT,
  type ThermoDescription,
  type DrivingForce,
  drivingForce,
  drivingForceForSiteFractions,
  type AltShiftElement,
  t0MoleFraction,
  t0CarbonWtPct,
  t0PrimeCarbonWtPct,
  t0Curve,
  t0TemperatureC,
  pureIronBccMinusFcc,
} from './t0.js';
export { gibbsFcc, gibbsBcc, thermoSiteFractions } from './solution.js';
export {
  type FeCBoundaries,
  feCBoundaries,
  feCEutectoid,
  gibbsCementite,
  pureIronAlphaGammaC,
  pureIronGammaDeltaC,
  ironCurieC,
  bccIronHeatCapacity,
  pureIronFccMinusBcc,
  paraequilibriumAe3C,
} from './fe-c.js';
export { magneticGibbs } from './magnetic.js';
export { ghserFe, ghserC, fccFeMinusBcc } from './unaries.js';
