/**
 * Deviation lifecycle (pure). practice.md §3.2 proposes detect -> contain -> review -> disposition -> close;
 * Ausline keeps the states a person acts on, and one system state:
 *
 *   OPEN ──ACKNOWLEDGE (METALLURGIST | QUALITY)──> ACKNOWLEDGED
 *   OPEN | ACKNOWLEDGED ──DISPOSITION (QUALITY; disposition + reason; signer recorded)──> DISPOSITIONED
 *   DISPOSITIONED ──CLOSE (QUALITY)──> CLOSED
 *   OPEN ──CLEAR (system: the condition disappeared on a recompute before anyone acknowledged it)──> CLEARED
 *   CLEARED ──REOPEN (system: the same condition came back)──> OPEN
 *
 * Why a cleared condition REOPENS the same deviation rather than opening a new one: a deviation is keyed by
 * batch + rule + channel (its dedupKey), so "the bath thermocouple 2 excursion of batch 118" is one record
 * whichever way late data moves it. Reopening keeps the whole back-and-forth (opened, cleared, reopened)
 * in one audit trail that a reviewer reads top to bottom, and the list never shows two rows for one
 * condition. The CLEARED period is not lost: it stays in the audit trail with its reason.
 *
 * Once a person has acted (ACKNOWLEDGED, DISPOSITIONED, CLOSED) the system never changes the status: a
 * condition that goes away afterwards is only noted (conditionPresent = false), because the human decision
 * stands and was made on the evidence of its time (practice.md §3.2: records are append-only, corrections
 * add entries). ISO 9001 §8.7.2 asks for who had the authority to decide [practice.md S49]: the
 * DISPOSITION records the signer, the disposition, the reason and, for a concession, the customer's permit
 * reference (IATF 16949 8.7.1.1, practice.md §3.1/§3.2).
 */

export const DEVIATION_STATUSES = ['OPEN', 'ACKNOWLEDGED', 'DISPOSITIONED', 'CLOSED', 'CLEARED'] as const;
export type DeviationStatus = (typeof DEVIATION_STATUSES)[number];

export const DISPOSITIONS = ['USE_AS_IS', 'RETREAT', 'SCRAP', 'CONCESSION'] as const;
export type Disposition = (typeof DISPOSITIONS)[number];

export const DEVIATION_SEVERITIES = ['MINOR', 'MAJOR', 'CRITICAL'] as const;
export type DeviationSeverity = (typeof DEVIATION_SEVERITIES)[number];

export type UserRole = 'METALLURGIST' | 'QUALITY' | 'ADMIN';

export type DeviationActor =
  /** label: the login (email) for audit rows; displayName: the name printed as signer on certificates. */
  | { kind: 'user'; userId: string; label: string; displayName?: string; roles: readonly UserRole[] }
  | { kind: 'system'; label: string };

export type DeviationAction =
  | { type: 'ACKNOWLEDGE'; reason?: string }
  | { type: 'DISPOSITION'; disposition: Disposition; reason: string; dispositionRef?: string }
  | { type: 'CLOSE'; reason?: string }
  | { type: 'CLEAR'; reason: string }
  | { type: 'REOPEN'; reason: string };
export type DeviationActionType = DeviationAction['type'];

/** The part of a deviation the lifecycle reads and writes. */
export interface DeviationLifecycle {
  status: DeviationStatus;
  disposition: Disposition | null;
  dispositionReason: string | null;
  dispositionRef: string | null;
  /** Name of the person who signed the disposition, as printed on certificates. */
  signer: string | null;
  dispositionedById: string | null;
  dispositionedAt: Date | null;
  acknowledgedById: string | null;
  acknowledgedAt: Date | null;
  closedById: string | null;
  closedAt: Date | null;
  clearedAt: Date | null;
  conditionPresent: boolean;
}

/** What goes into the append-only audit trail for one change. */
export interface DeviationAuditEntry {
  action: DeviationActionType;
  fromStatus: DeviationStatus;
  toStatus: DeviationStatus;
  actorKind: 'USER' | 'SYSTEM';
  actorUserId: string | null;
  actorLabel: string;
  reason: string | null;
  disposition: Disposition | null;
  at: Date;
}

/**
 * Why an action was refused, so the HTTP side can answer with the right code:
 * 'forbidden' -> 403 (role), 'conflict' -> 409 (not allowed from the current status),
 * 'invalid' -> 400 (missing reason, unknown disposition, ...).
 */
export type DeviationActionRefusal = 'forbidden' | 'conflict' | 'invalid';

export type DeviationActionResult =
  | { ok: true; next: DeviationLifecycle; audit: DeviationAuditEntry }
  | { ok: false; code: DeviationActionRefusal; reason: string };

/** Shortest reason accepted for a disposition: long enough to say something, e.g. "RA by XRD 8 %, ok". */
export const MIN_DISPOSITION_REASON_LENGTH = 5;

interface TransitionRule {
  from: readonly DeviationStatus[];
  to: DeviationStatus;
  /** Roles allowed to perform it; null means system only. */
  roles: readonly UserRole[] | null;
}

const TRANSITIONS: Record<DeviationActionType, TransitionRule> = {
  ACKNOWLEDGE: { from: ['OPEN'], to: 'ACKNOWLEDGED', roles: ['METALLURGIST', 'QUALITY'] },
  DISPOSITION: { from: ['OPEN', 'ACKNOWLEDGED'], to: 'DISPOSITIONED', roles: ['QUALITY'] },
  CLOSE: { from: ['DISPOSITIONED'], to: 'CLOSED', roles: ['QUALITY'] },
  CLEAR: { from: ['OPEN'], to: 'CLEARED', roles: null },
  REOPEN: { from: ['CLEARED'], to: 'OPEN', roles: null },
};

/** Which actions a status allows, for screens that grey out buttons. */
export function allowedDeviationActions(status: DeviationStatus): DeviationActionType[] {
  return (Object.keys(TRANSITIONS) as DeviationActionType[]).filter((a) => TRANSITIONS[a].from.includes(status));
}

function refuse(code: DeviationActionRefusal, reason: string): DeviationActionResult {
  return { ok: false, code, reason };
}

const trimmedOrNull = (s: string | undefined): string | null => {
  const t = s?.trim();
  return t ? t : null;
};

/**
 * Applies one action to a deviation. Pure: returns the next lifecycle fields and the audit entry to write,
 * or a refusal. `at` is the time to record (the caller's clock or the database's).
 */
export function applyDeviationAction(
  deviation: DeviationLifecycle,
  action: DeviationAction,
  actor: DeviationActor,
  at: Date,
): DeviationActionResult {
  const rule = TRANSITIONS[action.type];
  if (!rule) return refuse('invalid', `unknown action ${(action as { type: unknown }).type}`);

  if (rule.roles === null) {
    if (actor.kind !== 'system') return refuse('forbidden', `${action.type} is done by the system only`);
  } else {
    if (actor.kind !== 'user') return refuse('forbidden', `${action.type} must be signed by a person`);
    if (!actor.roles.some((r) => rule.roles!.includes(r))) {
      return refuse('forbidden', `${action.type} needs role ${rule.roles.join(' or ')}`);
    }
  }
  if (!rule.from.includes(deviation.status)) {
    return refuse('conflict', `cannot ${action.type.toLowerCase()} a deviation that is ${deviation.status}`);
  }

  const reason = trimmedOrNull('reason' in action ? action.reason : undefined);
  const next: DeviationLifecycle = { ...deviation, status: rule.to };
  const userId = actor.kind === 'user' ? actor.userId : null;

  switch (action.type) {
    case 'ACKNOWLEDGE':
      next.acknowledgedById = userId;
      next.acknowledgedAt = at;
      break;
    case 'DISPOSITION': {
      if (!(DISPOSITIONS as readonly string[]).includes(action.disposition)) {
        return refuse('invalid', `disposition must be one of ${DISPOSITIONS.join(', ')}`);
      }
      if (!reason || reason.length < MIN_DISPOSITION_REASON_LENGTH) {
        return refuse('invalid', `a disposition needs a reason of at least ${MIN_DISPOSITION_REASON_LENGTH} characters`);
      }
      const ref = trimmedOrNull(action.dispositionRef);
      if (action.disposition === 'CONCESSION' && !ref) {
        // IATF 16949 8.7.1.1 (practice.md §3.1): a concession is the customer's written permit; record its number.
        return refuse('invalid', 'a CONCESSION disposition needs dispositionRef (the customer permit number)');
      }
      next.disposition = action.disposition;
      next.dispositionReason = reason;
      next.dispositionRef = ref;
      next.dispositionedById = userId;
      next.dispositionedAt = at;
      next.signer = actor.kind === 'user' ? (actor.displayName ?? actor.label) : null;
      break;
    }
    case 'CLOSE':
      next.closedById = userId;
      next.closedAt = at;
      break;
    case 'CLEAR':
      if (!reason) return refuse('invalid', 'CLEAR needs a reason');
      next.clearedAt = at;
      next.conditionPresent = false;
      break;
    case 'REOPEN':
      if (!reason) return refuse('invalid', 'REOPEN needs a reason');
      next.clearedAt = null;
      next.conditionPresent = true;
      break;
  }

  return {
    ok: true,
    next,
    audit: {
      action: action.type,
      fromStatus: deviation.status,
      toStatus: rule.to,
      actorKind: actor.kind === 'user' ? 'USER' : 'SYSTEM',
      actorUserId: userId,
      actorLabel: actor.label,
      reason,
      disposition: action.type === 'DISPOSITION' ? action.disposition : null,
      at,
    },
  };
}

/** A new deviation's lifecycle fields. */
export function openedDeviationLifecycle(): DeviationLifecycle {
  return {
    status: 'OPEN',
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

/**
 * What the worker does with one stored deviation after a recompute, given whether its condition is
 * still found (`finding`) and whether the finding's message or severity changed. Pure so the rules of
 * "refresh, never duplicate; clear only if nobody looked; reopen when it returns" are tested once.
 */
export type DeviationSyncStep =
  | { kind: 'create' }
  | { kind: 'refresh'; changed: boolean }
  | { kind: 'reopen' }
  | { kind: 'clear' }
  | { kind: 'note-absent' }
  | { kind: 'note-present-again' }
  | { kind: 'none' };

export function planDeviationSync(
  existing: { status: DeviationStatus; conditionPresent: boolean; message: string; severity: DeviationSeverity } | null,
  finding: { message: string; severity: DeviationSeverity } | null,
): DeviationSyncStep {
  if (existing === null) return finding ? { kind: 'create' } : { kind: 'none' };
  if (finding) {
    if (existing.status === 'CLEARED') return { kind: 'reopen' };
    if (!existing.conditionPresent) return { kind: 'note-present-again' };
    return { kind: 'refresh', changed: existing.message !== finding.message || existing.severity !== finding.severity };
  }
  if (existing.status === 'OPEN') return { kind: 'clear' };
  if (existing.status === 'CLEARED' || !existing.conditionPresent) return { kind: 'none' };
  return { kind: 'note-absent' };
}
