import { describe, expect, it } from 'vitest';
import { selectSuspectBatches, type BatchOnEquipment, type SuspectTrigger } from './suspect.js';

const d = (iso: string) => new Date(iso);
const lastPass = d('2025-03-01T08:00:00Z');
const failure: SuspectTrigger = { equipmentId: 'F-1', kind: 'failed-test', subject: 'uniformity survey', at: d('2025-03-10T14:00:00Z'), evidence: 'TUS record 42' };
const batch = (batchId: string, startedAt: string, endedAt: string | null, equipmentId = 'F-1'): BatchOnEquipment => ({
  batchId,
  equipmentId,
  startedAt: d(startedAt),
  endedAt: endedAt === null ? null : d(endedAt),
});

describe('selectSuspectBatches: window (last pass, event], batches as [start, end]', () => {
  const batches = [
    batch('ended-before-pass', '2025-02-28T20:00:00Z', '2025-03-01T06:00:00Z'),
    batch('ended-at-pass', '2025-03-01T02:00:00Z', '2025-03-01T08:00:00Z'),
    batch('straddles-pass', '2025-03-01T06:00:00Z', '2025-03-01T12:00:00Z'),
    batch('starts-at-pass', '2025-03-01T08:00:00Z', '2025-03-01T16:00:00Z'),
    batch('inside', '2025-03-05T08:00:00Z', '2025-03-05T16:00:00Z'),
    batch('straddles-failure', '2025-03-10T10:00:00Z', '2025-03-10T18:00:00Z'),
    batch('starts-at-failure', '2025-03-10T14:00:00Z', '2025-03-10T22:00:00Z'),
    batch('starts-after-failure', '2025-03-10T14:00:00.001Z', '2025-03-10T22:00:00Z'),
    batch('other-equipment', '2025-03-05T08:00:00Z', '2025-03-05T16:00:00Z', 'F-2'),
  ];

  it('selects exactly the batches processed since the last pass up to the failure', () => {
    const r = selectSuspectBatches(failure, batches, lastPass);
    expect(r.batches.map((b) => b.batchId)).toEqual(['straddles-pass', 'starts-at-pass', 'inside', 'straddles-failure', 'starts-at-failure']);
    expect(r.window).toEqual({ afterExclusive: lastPass, untilInclusive: failure.at });
  });

  it('a batch that straddles the last pass is suspect and marked so', () => {
    const r = selectSuspectBatches(failure, batches, lastPass);
    expect(r.batches.find((b) => b.batchId === 'straddles-pass')).toMatchObject({ straddlesLastPass: true, straddlesEvent: false });
    expect(r.batches.find((b) => b.batchId === 'straddles-pass')?.reason).toMatch(/started at or before the last pass and ran on after it/);
  });

  it('a batch that ended before, or exactly at, the last pass is not suspect', () => {
    const ids = selectSuspectBatches(failure, batches, lastPass).batches.map((b) => b.batchId);
    expect(ids).not.toContain('ended-before-pass');
    expect(ids).not.toContain('ended-at-pass');
  });

  it('a batch started after the failure is not suspect here (the compliance check at its start catches it); one starting at the failure instant is', () => {
    const r = selectSuspectBatches(failure, batches, lastPass);
    expect(r.batches.map((b) => b.batchId)).not.toContain('starts-after-failure');
    expect(r.batches.find((b) => b.batchId === 'starts-at-failure')).toMatchObject({ straddlesEvent: true });
    expect(r.batches.find((b) => b.batchId === 'straddles-failure')?.reason).toMatch(/was in process at the event/);
  });

  it('a batch still running counts as running up to now', () => {
    const r = selectSuspectBatches(failure, [batch('running', '2025-02-20T08:00:00Z', null)], lastPass);
    expect(r.batches).toMatchObject([{ batchId: 'running', straddlesLastPass: true, straddlesEvent: true }]);
  });

  it('with no passing result ever, every batch up to the event is suspect', () => {
    const r = selectSuspectBatches(failure, batches, null);
    expect(r.batches.map((b) => b.batchId)).toEqual([
      'ended-before-pass',
      'ended-at-pass',
      'straddles-pass',
      'starts-at-pass',
      'inside',
      'straddles-failure',
      'starts-at-failure',
    ]);
    expect(r.window.afterExclusive).toBeNull();
    expect(r.evidence).toMatch(/no passing result on record/);
  });

  it('an overdue item found later opens the same window, since the last pass', () => {
    const found: SuspectTrigger = { equipmentId: 'F-1', kind: 'found-overdue', subject: 'accuracy test of F1-TC-ctl', at: d('2025-03-06T00:00:00Z') };
    const r = selectSuspectBatches(found, batches, lastPass);
    expect(r.batches.map((b) => b.batchId)).toEqual(['straddles-pass', 'starts-at-pass', 'inside']);
    expect(r.evidence).toMatch(/found overdue at 2025-03-06/);
  });

  it('is deterministic: sorted by start, then batch id, whatever the input order', () => {
    const same = [batch('b', '2025-03-05T08:00:00Z', '2025-03-05T09:00:00Z'), batch('a', '2025-03-05T08:00:00Z', '2025-03-05T09:00:00Z')];
    expect(selectSuspectBatches(failure, same, lastPass).batches.map((b) => b.batchId)).toEqual(['a', 'b']);
    expect(selectSuspectBatches(failure, [...batches].reverse(), lastPass).batches).toEqual(selectSuspectBatches(failure, batches, lastPass).batches);
  });

  it('refuses a last pass after the event and batches ending before they start', () => {
    expect(() => selectSuspectBatches(failure, batches, d('2025-03-11T00:00:00Z'))).toThrow(/lastPassingResultAt: is after the event/);
    expect(() => selectSuspectBatches(failure, [batch('bad', '2025-03-05T08:00:00Z', '2025-03-05T07:00:00Z')], lastPass)).toThrow(/batches\[0\]\.endedAt: is before startedAt/);
  });
});
