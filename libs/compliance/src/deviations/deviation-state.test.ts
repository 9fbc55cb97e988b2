import { describe, expect, it } from 'vitest';
import {
  allowedDeviationActions,
  applyDeviationAction,
  openedDeviationLifecycle,
  planDeviationSync,
  type DeviationActor,
  type DeviationLifecycle,
  type DeviationStatus,
} from './deviation-state.js';

const at = new Date('2025-03-04T10:00:00Z');
const quality: DeviationActor = { kind: 'user', userId: 'u-q', label: 'q@plant.test', displayName: 'Q. Inspector', roles: ['QUALITY'] };
const metallurgist: DeviationActor = { kind: 'user', userId: 'u-m', label: 'm@plant.test', roles: ['METALLURGIST'] };
const admin: DeviationActor = { kind: 'user', userId: 'u-a', label: 'a@plant.test', roles: ['ADMIN'] };
const system: DeviationActor = { kind: 'system', label: 'worker' };

const inStatus = (status: DeviationStatus): DeviationLifecycle => ({ ...openedDeviationLifecycle(), status });

describe('applyDeviationAction', () => {
  it('lets a metallurgist or quality acknowledge an open deviation and records who and when', () => {
    for (const actor of [metallurgist, quality]) {
      const r = applyDeviationAction(inStatus('OPEN'), { type: 'ACKNOWLEDGE' }, actor, at);
      expect(r.ok).toBe(true);
      if (!r.ok) continue;
      expect(r.next.status).toBe('ACKNOWLEDGED');
      expect(r.next.acknowledgedById).toBe((actor as { userId: string }).userId);
      expect(r.next.acknowledgedAt).toEqual(at);
      expect(r.audit).toMatchObject({ action: 'ACKNOWLEDGE', fromStatus: 'OPEN', toStatus: 'ACKNOWLEDGED', actorKind: 'USER' });
    }
  });

  it('refuses acknowledge by an admin-only user (403) and by the system', () => {
    const r = applyDeviationAction(inStatus('OPEN'), { type: 'ACKNOWLEDGE' }, admin, at);
    expect(r).toMatchObject({ ok: false, code: 'forbidden' });
    expect(applyDeviationAction(inStatus('OPEN'), { type: 'ACKNOWLEDGE' }, system, at)).toMatchObject({ ok: false, code: 'forbidden' });
  });

  it('dispositions from OPEN or ACKNOWLEDGED by quality, with reason and signer', () => {
    for (const from of ['OPEN', 'ACKNOWLEDGED'] as const) {
      const r = applyDeviationAction(
        inStatus(from),
        { type: 'DISPOSITION', disposition: 'RETREAT', reason: '  re-austenitize and austemper again ' },
        quality,
        at,
      );
      expect(r.ok).toBe(true);
      if (!r.ok) continue;
      expect(r.next).toMatchObject({
        status: 'DISPOSITIONED',
        disposition: 'RETREAT',
        dispositionReason: 're-austenitize and austemper again',
        dispositionedById: 'u-q',
        dispositionedAt: at,
        signer: 'Q. Inspector',
      });
      expect(r.audit).toMatchObject({ fromStatus: from, toStatus: 'DISPOSITIONED', disposition: 'RETREAT', actorUserId: 'u-q' });
    }
  });

  it('refuses a disposition by a metallurgist, without a reason, or with a blank reason', () => {
    const d = inStatus('ACKNOWLEDGED');
    expect(applyDeviationAction(d, { type: 'DISPOSITION', disposition: 'SCRAP', reason: 'cracked parts' }, metallurgist, at)).toMatchObject({ ok: false, code: 'forbidden' });
    expect(applyDeviationAction(d, { type: 'DISPOSITION', disposition: 'SCRAP', reason: '   ' }, quality, at)).toMatchObject({ ok: false, code: 'invalid' });
    expect(applyDeviationAction(d, { type: 'DISPOSITION', disposition: 'SCRAP', reason: 'no' }, quality, at)).toMatchObject({ ok: false, code: 'invalid' });
    expect(applyDeviationAction(d, { type: 'DISPOSITION', disposition: 'MAYBE' as never, reason: 'why not' }, quality, at)).toMatchObject({ ok: false, code: 'invalid' });
  });

  it('requires the customer permit number for a concession (IATF 16949 8.7.1.1 via practice.md §3.1)', () => {
    const d = inStatus('ACKNOWLEDGED');
    expect(applyDeviationAction(d, { type: 'DISPOSITION', disposition: 'CONCESSION', reason: 'customer accepts' }, quality, at)).toMatchObject({ ok: false, code: 'invalid' });
    const r = applyDeviationAction(d, { type: 'DISPOSITION', disposition: 'CONCESSION', reason: 'customer accepts', dispositionRef: 'DP-2025-017' }, quality, at);
    expect(r.ok && r.next.dispositionRef).toBe('DP-2025-017');
  });

  it('closes only a dispositioned deviation, by quality', () => {
    const r = applyDeviationAction(inStatus('DISPOSITIONED'), { type: 'CLOSE' }, quality, at);
    expect(r.ok && r.next).toMatchObject({ status: 'CLOSED', closedById: 'u-q', closedAt: at });
    expect(applyDeviationAction(inStatus('DISPOSITIONED'), { type: 'CLOSE' }, metallurgist, at)).toMatchObject({ ok: false, code: 'forbidden' });
    for (const s of ['OPEN', 'ACKNOWLEDGED', 'CLOSED', 'CLEARED'] as const) {
      expect(applyDeviationAction(inStatus(s), { type: 'CLOSE' }, quality, at)).toMatchObject({ ok: false, code: 'conflict' });
    }
  });

  it('answers conflict for actions out of order (acknowledge twice, disposition after close)', () => {
    expect(applyDeviationAction(inStatus('ACKNOWLEDGED'), { type: 'ACKNOWLEDGE' }, quality, at)).toMatchObject({ ok: false, code: 'conflict' });
    expect(applyDeviationAction(inStatus('CLOSED'), { type: 'DISPOSITION', disposition: 'SCRAP', reason: 'scrap it' }, quality, at)).toMatchObject({ ok: false, code: 'conflict' });
    expect(applyDeviationAction(inStatus('CLEARED'), { type: 'ACKNOWLEDGE' }, quality, at)).toMatchObject({ ok: false, code: 'conflict' });
  });

  it('lets only the system clear an open deviation, and reopen a cleared one', () => {
    const cleared = applyDeviationAction(inStatus('OPEN'), { type: 'CLEAR', reason: 'condition gone on recompute' }, system, at);
    expect(cleared.ok && cleared.next).toMatchObject({ status: 'CLEARED', conditionPresent: false, clearedAt: at });
    expect(cleared.ok && cleared.audit).toMatchObject({ actorKind: 'SYSTEM', actorUserId: null, actorLabel: 'worker' });
    expect(applyDeviationAction(inStatus('OPEN'), { type: 'CLEAR', reason: 'x' }, quality, at)).toMatchObject({ ok: false, code: 'forbidden' });
    expect(applyDeviationAction(inStatus('ACKNOWLEDGED'), { type: 'CLEAR', reason: 'x' }, system, at)).toMatchObject({ ok: false, code: 'conflict' });

    if (!cleared.ok) throw new Error('unreachable');
    const reopened = applyDeviationAction(cleared.next, { type: 'REOPEN', reason: 'condition back' }, system, at);
    expect(reopened.ok && reopened.next).toMatchObject({ status: 'OPEN', conditionPresent: true, clearedAt: null });
  });

  it('does not mutate its input', () => {
    const d = inStatus('OPEN');
    const copy = structuredClone(d);
    applyDeviationAction(d, { type: 'ACKNOWLEDGE' }, quality, at);
    expect(d).toEqual(copy);
  });

  it('lists the actions each status allows', () => {
    expect(allowedDeviationActions('OPEN').sort()).toEqual(['ACKNOWLEDGE', 'CLEAR', 'DISPOSITION']);
    expect(allowedDeviationActions('ACKNOWLEDGED')).toEqual(['DISPOSITION']);
    expect(allowedDeviationActions('DISPOSITIONED')).toEqual(['CLOSE']);
    expect(allowedDeviationActions('CLOSED')).toEqual([]);
    expect(allowedDeviationActions('CLEARED')).toEqual(['REOPEN']);
  });
});

describe('planDeviationSync', () => {
  const f = { message: 'bath TC1 above 300.0 °C for 95 s', severity: 'MAJOR' as const };
  const stored = (status: DeviationStatus, conditionPresent = true, message = f.message) => ({ status, conditionPresent, message, severity: 'MAJOR' as const });

  it('creates a deviation for a new finding and does nothing without one', () => {
    expect(planDeviationSync(null, f)).toEqual({ kind: 'create' });
    expect(planDeviationSync(null, null)).toEqual({ kind: 'none' });
  });
  it('refreshes (never duplicates) a deviation whose condition is still there, saying whether it changed', () => {
    expect(planDeviationSync(stored('OPEN'), f)).toEqual({ kind: 'refresh', changed: false });
    expect(planDeviationSync(stored('ACKNOWLEDGED', true, 'older text'), f)).toEqual({ kind: 'refresh', changed: true });
  });
  it('clears only an unacknowledged deviation whose condition went away', () => {
    expect(planDeviationSync(stored('OPEN'), null)).toEqual({ kind: 'clear' });
    for (const s of ['ACKNOWLEDGED', 'DISPOSITIONED', 'CLOSED'] as const) {
      expect(planDeviationSync(stored(s), null)).toEqual({ kind: 'note-absent' });
      expect(planDeviationSync(stored(s, false), null)).toEqual({ kind: 'none' });
      expect(planDeviationSync(stored(s, false), f)).toEqual({ kind: 'note-present-again' });
    }
    expect(planDeviationSync(stored('CLEARED', false), null)).toEqual({ kind: 'none' });
  });
  it('reopens a cleared deviation when the condition returns', () => {
    expect(planDeviationSync(stored('CLEARED', false), f)).toEqual({ kind: 'reopen' });
  });
});
