/**
 * Seeded, stateless randomness for the simulator. Every reading is a pure function of (seed, channel,
 * time), so a re-generated sample always has the same value (a controller re-sending its buffer sends
 * identical data) and a scenario is the same whichever day it is played on.
 */

/** 32-bit string hash (FNV-1a), for turning names into seeds. */
export function hashString(text: string): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < text.length; i++) {
    h ^= text.charCodeAt(i);
    h = Math.imul(h, 0x01000193);
  }
  return h >>> 0;
}

/** Mixes integers into one well-spread 32-bit value (a murmur3-style finaliser per input). */
export function mix(...values: number[]): number {
  let h = 0x9e3779b9;
  for (const v of values) {
    // Split doubles into two 32-bit halves so large millisecond offsets keep all their bits.
    const lo = v >>> 0;
    const hi = Math.floor(v / 4294967296) >>> 0;
    for (const part of [lo, hi]) {
      let k = Math.imul(part, 0xcc9e2d51);
      k = (k << 15) | (k >>> 17);
      k = Math.imul(k, 0x1b873593);
      h ^= k;
      h = (h << 13) | (h >>> 19);
      h = (Math.imul(h, 5) + 0xe6546b64) | 0;
    }
  }
  h ^= h >>> 16;
  h = Math.imul(h, 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  h ^= h >>> 16;
  return h >>> 0;
}

/** Uniform in (0, 1) from the inputs. */
export function uniform(...values: number[]): number {
  return (mix(...values) + 0.5) / 4294967296;
}

/** Standard normal from the inputs (Box–Muller on two independent uniforms). */
export function gaussian(...values: number[]): number {
  const u1 = uniform(...values, 1);
  const u2 = uniform(...values, 2);
  return Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * u2);
}

/** A sequential generator (mulberry32) for building scenario data, e.g. lab readings. */
export function sequence(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/**
 * Slow wander: a sum of sines with seeded phases. Bounded by the sum of the amplitudes, smooth, and the
 * same at the same time offset in every run.
 */
export function wander(seed: number, tS: number, components: ReadonlyArray<{ amplitude: number; periodS: number }>): number {
  let sum = 0;
  components.forEach((c, i) => {
    const phase = 2 * Math.PI * uniform(seed, i, 77);
    sum += c.amplitude * Math.sin((2 * Math.PI * tS) / c.periodS + phase);
  });
  return sum;
}

/** Rounds to a recorder's resolution (AMS 2750 recorders show 0.1°: practice.md §5.1). */
export function roundTo(value: number, step: number): number {
  const decimals = Math.max(0, Math.round(-Math.log10(step)));
  return Number((Math.round(value / step) * step).toFixed(decimals));
}
