import { describe, expect, it } from 'vitest';
import { SeededRandom } from '@ausline/metallurgy';
import { SamplesPost } from '@ausline/contracts';
import { commonShape, parseSamplesPost } from './samples-parse.js';

/** Seeded (libs/metallurgy's generator), so a failure names its case. */
function rng(seed: number): () => number {
  const random = new SeededRandom(seed);
  return () => random.nextUniform();
}

const MIN = 946_684_800_000; // 2000-01-01 (the schema's bound)
const MAX = 4_102_444_800_000; // 2100-01-01

/** A sample, usually well-formed, sometimes wrong in one of the ways the schema refuses or transforms. */
function sample(r: () => number): unknown {
  const good = { channel: 'tc1', t: 1_764_626_400_000 + Math.floor(r() * 1e9), value: Math.round((r() - 0.3) * 1e5) / 100 };
  const choices: Array<() => unknown> = [
    () => good,
    () => good,
    () => good,
    () => ({ ...good, channel: ' tc1' }),
    () => ({ ...good, channel: 'tc1 ' }),
    () => ({ ...good, channel: '' }),
    () => ({ ...good, channel: 'x'.repeat(64) }),
    () => ({ ...good, channel: 'x'.repeat(65) }),
    () => ({ ...good, channel: 7 }),
    () => ({ ...good, t: MIN }),
    () => ({ ...good, t: MIN - 1 }),
    () => ({ ...good, t: MAX }),
    () => ({ ...good, t: MAX + 1 }),
    () => ({ ...good, t: good.t + 0.5 }),
    () => ({ ...good, t: Math.floor(good.t / 1000) }),
    () => ({ ...good, t: new Date(good.t).toISOString() }),
    () => ({ ...good, t: '2026-03-01T08:00:00' }),
    () => ({ ...good, value: '370' }),
    () => ({ ...good, value: null }),
    () => ({ ...good, extra: 1 }),
    () => ({ channel: good.channel, t: good.t }),
    () => [good],
    () => null,
  ];
  return choices[Math.floor(r() * choices.length)]!();
}

function body(r: () => number): unknown {
  const n = [0, 1, 2, 5, 10_000, 10_001][Math.floor(r() * 6)]!;
  // Some bodies are all well-formed, the others have odd samples among them.
  const odd = [0, 0, 0.3, 0.001][Math.floor(r() * 4)]!;
  const samples = Array.from({ length: n }, () => (r() >= odd ? { channel: `tc${Math.floor(r() * 3)}`, t: MIN + Math.floor(r() * 1e12), value: r() * 400 } : sample(r)));
  const shapes: Array<() => unknown> = [() => ({ samples }), () => ({ samples }), () => ({ samples: samples.slice(0, 3).map(() => sample(r)) }), () => ({ samples, more: 1 }), () => samples, () => ({})];
  return shapes[Math.floor(r() * shapes.length)]!();
}

describe('samples request parsing', () => {
  it('takes only what the schema takes, with the same result, on 3,000 seeded random bodies', () => {
    let taken = 0;
    for (let seed = 1; seed <= 3_000; seed++) {
      const b = body(rng(seed));
      const fast = commonShape(b);
      if (fast === undefined) continue;
      taken += 1;
      const schema = SamplesPost.safeParse(b);
      expect(schema.success, `seed ${seed}`).toBe(true);
      expect(fast, `seed ${seed}`).toEqual(schema.data);
    }
    // The common shape does occur among them (so the check above is not vacuous).
    expect(taken).toBeGreaterThan(300);
  });

  it('gives every other body to the schema: the same data, or the same 400 naming the field', () => {
    const iso = { samples: [{ channel: ' tc1 ', t: '2026-03-01T08:00:00+01:00', value: 1 }] };
    expect(commonShape(iso)).toBeUndefined();
    expect(parseSamplesPost(iso)).toEqual(SamplesPost.parse(iso));
    expect(() => parseSamplesPost({ samples: [{ channel: 'tc1', t: 1_772_348_400, value: 1 }] })).toThrow(/samples\.0\.t/);
    expect(() => parseSamplesPost({ samples: [{ channel: 'tc1', t: 1_772_348_400_000, value: 1, unit: 'C' }] })).toThrow(/samples\.0\.unit/);
  });
});
