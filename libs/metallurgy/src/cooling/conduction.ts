/**
 * 1-D transient heat conduction in a plate (slab), long cylinder or sphere with a convective surface
 * (metallurgy.md §7.3). Finite volumes on a node-centred radial grid, backward-Euler in time (unconditionally
 * stable; no oscillation at the sudden start of a quench), temperature-dependent conductivity and specific heat
 * evaluated at the previous step (lagged), one tridiagonal (Thomas) solve per step.
 *
 * Verified against the exact series solutions of §8.8 in conduction.test.ts. Latent heat of transformation is not
 * included: the part stays (metastable) austenite during an austempering quench, and the small amounts of upper
 * products that may form release too little heat to matter at screening accuracy.
 */

export type SectionShape = 'plate' | 'cylinder' | 'sphere';

export interface ConductionProperties {
  conductivityWPerMK(tempC: number): number;
  specificHeatJPerKgK(tempC: number): number;
  densityKgPerM3: number;
}

export interface CoolingStage {
  durationS: number;
  ambientC: number;
  /** Surface heat-transfer coefficient as a function of the surface temperature, W/(m² K). */
  heatTransferWPerM2K(surfaceC: number): number;
}

export interface ConductionRun {
  /** Time since the start of the first stage, s. */
  tS: number[];
  centreC: number[];
  surfaceC: number[];
}

export interface ConductionOptions {
  shape: SectionShape;
  /** Half-thickness of a plate, radius of a cylinder or sphere, m. */
  halfSizeM: number;
  props: ConductionProperties;
  initialC: number;
  stages: CoolingStage[];
  /** Radial nodes including centre and surface (default 41). */
  nodes?: number;
  dtS?: number;
  /** Let the step grow by 1 % per step up to this value (default: fixed step). Backward Euler stays stable. */
  dtMaxS?: number;
  /** Record every n-th step (default 1). */
  recordEvery?: number;
  /** Stop early (checked after each step of the LAST stage). */
  stopWhen?: (centreC: number, surfaceC: number, tS: number) => boolean;
}

export function geometryExponent(shape: SectionShape): number {
  return shape === 'plate' ? 0 : shape === 'cylinder' ? 1 : 2;
}

export function solveConduction(opts: ConductionOptions): ConductionRun {
  const n = Math.max(3, opts.nodes ?? 41);
  let dt = opts.dtS ?? 0.05;
  const dtMax = Math.max(dt, opts.dtMaxS ?? dt);
  const recordEvery = Math.max(1, opts.recordEvery ?? 1);
  const m = geometryExponent(opts.shape);
  const R = opts.halfSizeM;
  const dr = R / (n - 1);
  const rho = opts.props.densityKgPerM3;

  // Control-volume sizes (∫ r^m dr) and face areas (r^m) – the common 2π / 4π factors cancel.
  const vol = new Float64Array(n);
  const faceArea = new Float64Array(n); // face between node i and i+1
  const shell = (a: number, b: number) => (Math.pow(b, m + 1) - Math.pow(a, m + 1)) / (m + 1);
  for (let i = 0; i < n; i++) {
    const a = i === 0 ? 0 : (i - 0.5) * dr;
    const b = i === n - 1 ? R : (i + 0.5) * dr;
    vol[i] = shell(a, b);
    if (i < n - 1) faceArea[i] = Math.pow((i + 0.5) * dr, m);
  }
  const surfaceArea = Math.pow(R, m);

  let T = new Float64Array(n).fill(opts.initialC);
  let Tnew = new Float64Array(n);
  const lower = new Float64Array(n);
  const diag = new Float64Array(n);
  const upper = new Float64Array(n);
  const rhs = new Float64Array(n);
  const cPrime = new Float64Array(n);
  const dPrime = new Float64Array(n);
  const kNode = new Float64Array(n);

  const run: ConductionRun = { tS: [0], centreC: [T[0]], surfaceC: [T[n - 1]] };
  let time = 0;
  let step = 0;
  for (let s = 0; s < opts.stages.length; s++) {
    const stage = opts.stages[s];
    const isLast = s === opts.stages.length - 1;
    const stageEnd = time + stage.durationS;
    while (time < stageEnd - 1e-9) {
      const dtStep = Math.min(dt, stageEnd - time);
      for (let i = 0; i < n; i++) kNode[i] = opts.props.conductivityWPerMK(T[i]);
      const h = stage.heatTransferWPerM2K(T[n - 1]);
      for (let i = 0; i < n; i++) {
        const cap = (rho * opts.props.specificHeatJPerKgK(T[i]) * vol[i]) / dtStep;
        const west = i > 0 ? (0.5 * (kNode[i - 1] + kNode[i]) * faceArea[i - 1]) / dr : 0;
        const east = i < n - 1 ? (0.5 * (kNode[i] + kNode[i + 1]) * faceArea[i]) / dr : 0;
        const film = i === n - 1 ? h * surfaceArea : 0;
        lower[i] = -west;
        upper[i] = -east;
        diag[i] = cap + west + east + film;
        rhs[i] = cap * T[i] + film * stage.ambientC;
      }
      // Thomas algorithm.
      cPrime[0] = upper[0] / diag[0];
      dPrime[0] = rhs[0] / diag[0];
      for (let i = 1; i < n; i++) {
        const den = diag[i] - lower[i] * cPrime[i - 1];
        cPrime[i] = upper[i] / den;
        dPrime[i] = (rhs[i] - lower[i] * dPrime[i - 1]) / den;
      }
      Tnew[n - 1] = dPrime[n - 1];
      for (let i = n - 2; i >= 0; i--) Tnew[i] = dPrime[i] - cPrime[i] * Tnew[i + 1];
      const swap = T;
      T = Tnew;
      Tnew = swap;
      time += dtStep;
      step++;
      if (dt < dtMax) dt = Math.min(dtMax, dt * 1.01);
      const stop = isLast && opts.stopWhen !== undefined && opts.stopWhen(T[0], T[n - 1], time);
      if (step % recordEvery === 0 || stop) {
        run.tS.push(time);
        run.centreC.push(T[0]);
        run.surfaceC.push(T[n - 1]);
      }
      if (stop) return run;
    }
  }
  if (run.tS[run.tS.length - 1] !== time) {
    run.tS.push(time);
    run.centreC.push(T[0]);
    run.surfaceC.push(T[n - 1]);
  }
  return run;
}

/** Constant properties (for verification against the analytic series). */
export function constantProperties(conductivityWPerMK: number, densityKgPerM3: number, specificHeatJPerKgK: number): ConductionProperties {
  return { conductivityWPerMK: () => conductivityWPerMK, specificHeatJPerKgK: () => specificHeatJPerKgK, densityKgPerM3 };
}

/**
 * Austenite of a low-alloy steel, T-dependent [M]: k ≈ 15 + 0.012·T W/(m K) and c_p ≈ 470 + 0.18·T J/(kg K)
 * (T in °C; ≈ 18.6 / 25.2 W/(m K) and 524 / 623 J/(kg K) at 300 / 850 °C), ρ = 7800 kg/m³. Values of the order of
 * handbook austenite data, from memory; the quench is treated as fully austenitic (metastable) throughout.
 */
export const STEEL_AUSTENITE_PROPERTIES: ConductionProperties = {
  conductivityWPerMK: (t) => 15 + 0.012 * t,
  specificHeatJPerKgK: (t) => 470 + 0.18 * t,
  densityKgPerM3: 7800,
};

/**
 * Austenitised ductile iron [M]: the graphite nodules raise conductivity slightly and lower density; taken as
 * k ≈ 20 + 0.010·T, c_p as steel, ρ = 7100 kg/m³. From memory, order of magnitude only.
 */
export const DUCTILE_IRON_AUSTENITE_PROPERTIES: ConductionProperties = {
  conductivityWPerMK: (t) => 20 + 0.01 * t,
  specificHeatJPerKgK: (t) => 470 + 0.18 * t,
  densityKgPerM3: 7100,
};

const STEFAN_BOLTZMANN = 5.670374419e-8;

/**
 * Still air during the transfer from furnace to bath: linearised radiation (emissivity 0.8 for oxidised steel [M])
 * plus natural convection ≈ 10 W/(m² K) [M].
 */
export function airTransferHeatTransfer(ambientC: number, emissivity = 0.8, convectionWPerM2K = 10): (surfaceC: number) => number {
  const ta = ambientC + 273.15;
  return (surfaceC: number) => {
    const ts = surfaceC + 273.15;
    return emissivity * STEFAN_BOLTZMANN * (ts * ts + ta * ta) * (ts + ta) + convectionWPerM2K;
  };
}

export type Agitation = 'still' | 'moderate' | 'strong';

/**
 * Default salt-bath quench severity by agitation, Grossmann H in 1/in [M]. metallurgy.md §7.2 found no
 * authoritative H for nitrite–nitrate salt at 200–400 °C and says agitated salt is usually described as
 * "oil-like"; we take the oil column (none 0.25–0.30, moderate 0.35–0.40, strong 0.50–0.80) rounded up slightly
 * for salt's absence of a vapour blanket. THIS IS THE PER-LINE PARAMETER A PLANT SHOULD CALIBRATE (probe
 * thermocouple or logged part temperatures) and pass as `heatTransferWPerM2K`.
 */
export const SALT_BATH_SEVERITY_PER_INCH: Readonly<Record<Agitation, number>> = { still: 0.3, moderate: 0.45, strong: 0.7 };

/** h = 2·k·H (§7.2) with k = 28 W/(m K) for hot steel and H converted from 1/in to 1/m. */
export function bathHeatTransferWPerM2K(agitation: Agitation): number {
  return 2 * 28 * SALT_BATH_SEVERITY_PER_INCH[agitation] * 39.37;
}

/**
 * Round bar diameter that cools at its centre like the given section: the first eigenvalue of the slowest mode at
 * Bi → ∞ gives time constants L²/ζ₁² with ζ₁ = π/2 (slab, L = half-thickness), 2.4048 (cylinder, L = R) and π (sphere,
 * L = R) [C from the §7.3 series], so D_eq = 1.531·thickness for a plate and 0.765·D for a sphere.
 */
export function equivalentRoundDiameterMm(shape: SectionShape, sizeMm: number): number {
  const zCyl = 2.404825557695773;
  if (shape === 'cylinder') return sizeMm;
  if (shape === 'plate') return (sizeMm * zCyl) / (Math.PI / 2); // L = t/2 → R = (t/2)·ζcyl/(π/2), D = 2R
  return sizeMm * (zCyl / Math.PI);
}
