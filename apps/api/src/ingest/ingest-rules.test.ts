import { describe, expect, it } from 'vitest';
import { HeatInput } from '@ausline/contracts';
import { labResultRow, orderProblem, statusFrom } from './batches.service.js';
import { futureTimeIssue } from './device-time.js';
import { heatDifferences } from './heats.service.js';
import { parseIdempotencyKey, requestFingerprint, stableStringify } from './idempotency.js';

describe('parseIdempotencyKey', () => {
  it('reads a Structured Field String and a bare token', () => {
    expect(parseIdempotencyKey('"8e03978e-40d5-43e8-bc93-6894a57f9324"')).toBe('8e03978e-40d5-43e8-bc93-6894a57f9324');
    expect(parseIdempotencyKey('  8e03978e-40d5  ')).toBe('8e03978e-40d5');
    expect(parseIdempotencyKey('"a \\"quoted\\" key"')).toBe('a "quoted" key');
    expect(parseIdempotencyKey(undefined)).toBeUndefined();
  });
  it('refuses malformed, too short and repeated keys', () => {
    for (const bad of ['"open', '"bad \\n escape"', 'has space', 'short', `"${'x'.repeat(256)}"`, '"caf\u00e9-latte-1"']) {
      expect(() => parseIdempotencyKey(bad), bad).toThrow();
    }
    expect(() => parseIdempotencyKey('abcdefgh', ['Idempotency-Key', 'abcdefgh', 'idempotency-key', 'abcdefgh'])).toThrow(/one Idempotency-Key/);
  });
});

describe('request fingerprint', () => {
  it('ignores object key order but not array order, method or path', () => {
    expect(stableStringify({ b: 1, a: [{ y: 2, x: 1 }] })).toBe('{"a":[{"x":1,"y":2}],"b":1}');
    const body = { samples: [{ channel: 'tc1', t: 1, value: 2 }] };
    const same = requestFingerprint('POST', '/v1/equipment/e/samples', { samples: [{ value: 2, t: 1, channel: 'tc1' }] });
    expect(requestFingerprint('post', '/v1/equipment/e/samples', body)).toBe(same);
    expect(requestFingerprint('POST', '/v1/equipment/f/samples', body)).not.toBe(same);
    expect(requestFingerprint('POST', '/v1/equipment/e/samples', { samples: [...body.samples, ...body.samples] })).not.toBe(same);
  });
});

describe('load event order', () => {
  const at = (min: number) => new Date(Date.UTC(2026, 2, 1, 8, min));
  const ms = (min: number) => at(min).getTime();
  it('accepts steps arriving out of order as long as their times fit', () => {
    const events = [{ kind: 'INTO_BATH' as const, at: at(70) }];
    expect(orderProblem('CHARGED', ms(0), events)).toBeUndefined();
    expect(orderProblem('OUT_OF_FURNACE', ms(70), events)).toBeUndefined(); // transfer reported as one instant
    expect(orderProblem('OUT_OF_BATH', ms(160), events)).toBeUndefined();
  });
  it('names the step a time contradicts', () => {
    const events = [
      { kind: 'CHARGED' as const, at: at(0) },
      { kind: 'INTO_BATH' as const, at: at(70) },
    ];
    expect(orderProblem('OUT_OF_FURNACE', ms(75), events)?.message).toMatch(/not before INTO_BATH/);
    expect(orderProblem('OUT_OF_FURNACE', ms(0), events)?.message).toMatch(/not after CHARGED/);
    expect(orderProblem('OUT_OF_BATH', ms(70), events)?.message).toMatch(/not after INTO_BATH/);
  });
  it('derives the status from the furthest step', () => {
    expect(statusFrom([])).toBe('PLANNED');
    expect(statusFrom([{ kind: 'INTO_BATH' }, { kind: 'CHARGED' }])).toBe('IN_BATH');
    expect(statusFrom([{ kind: 'OUT_OF_BATH' }])).toBe('DONE');
  });
});

describe('future device times', () => {
  it('allows the configured skew and names the excess beyond it', () => {
    const now = Date.UTC(2026, 2, 1, 8);
    expect(futureTimeIssue(now + 300_000, now, 300_000, 'samples.0.t')).toBeUndefined();
    expect(futureTimeIssue(now + 600_000, now, 300_000, 'samples.0.t')).toEqual({
      path: 'samples.0.t',
      message: '2026-03-01T08:10:00.000Z is 10.0 min ahead of the server clock (limit 5.0 min); check the device clock',
    });
  });
});

describe('heat differences', () => {
  const stored = { material: 'STEEL' as const, grade: null, source: 'mill-certificate', chemistryWtPct: { C: 0.6, Si: 1.5 } };
  it('finds none for the same heat and names each changed field otherwise', () => {
    expect(heatDifferences(stored, HeatInput.parse({ heatNumber: 'H', material: 'STEEL', chemistryWtPct: { Si: 1.5, C: 0.6 } }))).toEqual([]);
    expect(heatDifferences(stored, HeatInput.parse({ heatNumber: 'H', material: 'DUCTILE_IRON', grade: 'G', chemistryWtPct: { C: 0.6, Mn: 0.3 } })).map((i) => i.path)).toEqual([
      'material',
      'grade',
      'chemistryWtPct.Mn',
      'chemistryWtPct.Si',
    ]);
  });
});

describe('lab result rows', () => {
  it('keeps the readings and adds their summary', () => {
    const row = labResultRow({ kind: 'HARDNESS', scale: 'HRC', testStandard: 'ASTM E18', readings: [52, 54, 53], externalRef: 'L-1' });
    expect(row).toMatchObject({ scale: 'HRC', testStandard: 'ASTM E18', measuredAt: null, values: { readings: [52, 54, 53], n: 3, mean: 53, min: 52, max: 54 } });
    const impact = labResultRow({ kind: 'IMPACT', testStandard: 'ISO 148-1', notch: 'V', energiesJ: [30, 36], temperatureC: -20, externalRef: 'I-1', measuredAt: '2026-03-01T09:00:00Z' });
    expect(impact.values).toMatchObject({ meanJ: 33, minJ: 30, temperatureC: -20, notch: 'V' });
    expect(impact.measuredAt?.toISOString()).toBe('2026-03-01T09:00:00.000Z');
  });
});
