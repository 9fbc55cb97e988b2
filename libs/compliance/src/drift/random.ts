// Seeded pseudo-random numbers for the Monte-Carlo run lengths and the synthetic lot series in tests.
//
// Generator: xoshiro128** (Blackman & Vigna, "Scrambled linear pseudorandom number generators", 2018),
// a 128-bit-state generator with 32-bit output that needs only 32-bit integer arithmetic, so it is exact
// in JavaScript via Math.imul and >>> 0. The four state words are filled from the seed by splitmix32
// (the 32-bit variant of Steele, Lea & Flood's SplitMix), as the xoshiro authors recommend, so that
// nearby seeds give unrelated streams. Normal deviates use the Box–Muller transform (Box & Muller 1958),
// which needs only log, sqrt and cos: no coefficient tables to get wrong. Everything is deterministic
// for a given seed on every platform.

export interface SeededRandom {
  /** Next 32-bit unsigned integer. */
  nextUint32(): number;
  /** Uniform on the open interval (0, 1) with 53 random bits. */
  nextUniform(): number;
  /** Standard normal deviate N(0, 1). */
  nextNormal(): number;
}

function splitmix32(seed: number): () => number {
  let state = seed >>> 0;
  return () => {
    state = (state + 0x9e3779b9) >>> 0;
    let z = state;
    z = Math.imul(z ^ (z >>> 16), 0x85ebca6b) >>> 0;
    z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35) >>> 0;
    return (z ^ (z >>> 16)) >>> 0;
  };
}

function rotl(x: number, k: number): number {
  return ((x << k) | (x >>> (32 - k))) >>> 0;
}

/** A seeded xoshiro128** generator. Any finite number is accepted as a seed (it is reduced to 32 bits). */
export function createSeededRandom(seed: number): SeededRandom {
  if (!Number.isFinite(seed)) throw new RangeError(`seed must be a finite number, got ${seed}`);
  const mix = splitmix32(Math.trunc(seed) >>> 0);
  let s0 = mix();
  let s1 = mix();
  let s2 = mix();
  let s3 = mix();
  if ((s0 | s1 | s2 | s3) === 0) s0 = 1; // the all-zero state is the one fixed point of xoshiro

  const nextUint32 = (): number => {
    const result = Math.imul(rotl(Math.imul(s1, 5) >>> 0, 7), 9) >>> 0;
    const t = (s1 << 9) >>> 0;
    s2 = (s2 ^ s0) >>> 0;
    s3 = (s3 ^ s1) >>> 0;
    s1 = (s1 ^ s2) >>> 0;
    s0 = (s0 ^ s3) >>> 0;
    s2 = (s2 ^ t) >>> 0;
    s3 = rotl(s3, 11);
    return result;
  };

  const nextUniform = (): number => {
    // 27 + 26 = 53 bits, then shift by half a unit so that 0 and 1 can never come out (log(0) in Box–Muller).
    const hi = nextUint32() >>> 5;
    const lo = nextUint32() >>> 6;
    return (hi * 67108864 + lo + 0.5) / 9007199254740992;
  };

  // Box–Muller yields normals in pairs; keep the second for the next call.
  let spare: number | null = null;
  const nextNormal = (): number => {
    if (spare !== null) {
      const v = spare;
      spare = null;
      return v;
    }
    const u1 = nextUniform();
    const u2 = nextUniform();
    const radius = Math.sqrt(-2 * Math.log(u1));
    const angle = 2 * Math.PI * u2;
    spare = radius * Math.sin(angle);
    return radius * Math.cos(angle);
  };

  return { nextUint32, nextUniform, nextNormal };
}
