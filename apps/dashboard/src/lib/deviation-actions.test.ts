import { describe, expect, it } from 'vitest';
import { allowedDeviationActions, applyDeviationAction, DEVIATION_STATUSES, type DeviationLifecycle } from '@ausline/compliance';
import { ACTION_RULES, deviationActions, type DeviationActionType, type Role } from './deviation-actions.js';

const ROLES: Role[] = ['METALLURGIST', 'QUALITY', 'ADMIN'];

function lifecycle(status: DeviationLifecycle['status']): DeviationLifecycle {
  return {
    status,
    disposition: null,
    dispositionReason: null,
    dispositionRef: null,
    signer: null,
    dispositionedById: null,
    dispositionedAt: null,
    acknowledgedById: null,
    acknowledgedAt: null,
    closedById: null,
    closedAt: null,
    clearedAt: null,
    conditionPresent: true,
  };
}

const sampleAction = (type: DeviationActionType) =>
  type === 'DISPOSITION' ? { type, disposition: 'SCRAP' as const, reason: 'hardness far below the band' } : { type, reason: 'seen' };

describe('deviation actions offered on screen agree with libs/compliance', () => {
  it('offers an action exactly when the lifecycle would accept it', () => {
    for (const status of DEVIATION_STATUSES) {
      const allowed = allowedDeviationActions(status);
      for (const role of ROLES) {
        for (const a of deviationActions(status, [role])) {
          const result = applyDeviationAction(lifecycle(status), sampleAction(a.action), { kind: 'user', userId: 'u', label: 'u@x', roles: [role] }, new Date());
          expect(a.applies, `${a.action} from ${status}`).toBe(allowed.includes(a.action));
          expect(a.applies && a.permitted, `${a.action} from ${status} as ${role}`).toBe(result.ok);
        }
      }
    }
  });

  it('says why an action is not offered', () => {
    const disposition = deviationActions('OPEN', ['METALLURGIST']).find((a) => a.action === 'DISPOSITION')!;
    expect(disposition.permitted).toBe(false);
    expect(disposition.why).toBe('needs the quality role (you are metallurgist)');
    const close = deviationActions('OPEN', ['QUALITY']).find((a) => a.action === 'CLOSE')!;
    expect(close.why).toBe('not possible from status OPEN');
  });

  it('covers the three person actions', () => {
    expect(Object.keys(ACTION_RULES).sort()).toEqual(['ACKNOWLEDGE', 'CLOSE', 'DISPOSITION']);
  });
});
