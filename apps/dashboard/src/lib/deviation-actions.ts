/**
 * Which deviation actions the signed-in person may take, for the screens. The API decides (403 for the
 * role, 409 for the status); this only keeps buttons that would be refused from being offered, and
 * says why. tests check it against libs/compliance's transition table so the two cannot drift apart.
 */

export type Role = 'METALLURGIST' | 'QUALITY' | 'ADMIN';
export type DeviationStatus = 'OPEN' | 'ACKNOWLEDGED' | 'DISPOSITIONED' | 'CLOSED' | 'CLEARED';
export type DeviationActionType = 'ACKNOWLEDGE' | 'DISPOSITION' | 'CLOSE';

export const ACTION_RULES: Record<DeviationActionType, { from: readonly DeviationStatus[]; roles: readonly Role[] }> = {
  ACKNOWLEDGE: { from: ['OPEN'], roles: ['METALLURGIST', 'QUALITY'] },
  DISPOSITION: { from: ['OPEN', 'ACKNOWLEDGED'], roles: ['QUALITY'] },
  CLOSE: { from: ['DISPOSITIONED'], roles: ['QUALITY'] },
};

export interface ActionAvailability {
  action: DeviationActionType;
  /** The status allows it. */
  applies: boolean;
  /** The person's roles allow it. */
  permitted: boolean;
  /** Why not, in plain words; null when it can be done. */
  why: string | null;
}

const ROLE_NAMES: Record<Role, string> = { METALLURGIST: 'metallurgist', QUALITY: 'quality', ADMIN: 'admin' };

export function deviationActions(status: DeviationStatus, roles: readonly Role[]): ActionAvailability[] {
  return (Object.keys(ACTION_RULES) as DeviationActionType[]).map((action) => {
    const rule = ACTION_RULES[action];
    const applies = rule.from.includes(status);
    const permitted = roles.some((r) => rule.roles.includes(r));
    let why: string | null = null;
    if (!applies) why = `not possible from status ${status}`;
    else if (!permitted) {
      why = `needs the ${rule.roles.map((r) => ROLE_NAMES[r]).join(' or ')} role (you are ${roles.map((r) => ROLE_NAMES[r]).join(', ') || 'without a role'})`;
    }
    return { action, applies, permitted, why };
  });
}
