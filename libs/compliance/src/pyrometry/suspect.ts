// Suspect product: when a test fails, or is found overdue, every batch processed on that equipment
// since its last passing result must be reviewed (practice.md §0 item 2, §1.1 TUS "Failure" [M];
// IATF 16949 suspect product [S53, M]).
//
// Interval semantics (ours; each edge has a test):
// - A batch occupies the closed interval [startedAt, endedAt]; a batch still running (endedAt null)
//   extends to +∞.
// - The suspect window is (lastPassingResultAt, event.at]: open at the last pass, because the pass
//   proves the equipment good up to and including that instant; closed at the event, because at
//   the instant of the failure the equipment is already shown bad.
// - A batch is suspect when it overlaps the window: startedAt ≤ event.at and endedAt >
//   lastPassingResultAt. So a batch straddling the last pass is suspect (part of it ran after the
//   last proof); one that ended at or before the last pass is not; one that straddles the event is;
//   one that started after the event is not suspect *here*: the equipment was already known bad or
//   overdue when it started, so the compliance check at its start (isEquipmentCompliantAt) raises
//   its own deviation, and listing it twice would double-count it.
// - No passing result ever (lastPassingResultAt null): every batch up to the event is suspect.
// - For a test found overdue, event.at is when it was found; the window still opens at the last
//   pass, as the issue asks ("since its last passing result"), not at the due date.

import { PyrometryInputError, requireInstant } from './errors.js';

export interface SuspectTrigger {
  readonly equipmentId: string;
  readonly kind: 'failed-test' | 'found-overdue';
  /** What failed or is overdue: 'tus', 'sat', a sensor or instrument id, ... (for the evidence). */
  readonly subject: string;
  /** When the failure was established, or when the overdue item was found. */
  readonly at: Date;
  /** Free text or a record id shown to quality with the list. */
  readonly evidence?: string;
}

export interface BatchOnEquipment {
  readonly batchId: string;
  readonly equipmentId: string;
  readonly startedAt: Date;
  /** null while the batch is still running. */
  readonly endedAt: Date | null;
}

export interface SuspectBatch {
  readonly batchId: string;
  readonly startedAt: Date;
  readonly endedAt: Date | null;
  /** Started at or before the last pass and ended after it. */
  readonly straddlesLastPass: boolean;
  /** Started at or before the event and ended after it (or is still running). */
  readonly straddlesEvent: boolean;
  readonly reason: string;
}

export interface SuspectSelection {
  readonly equipmentId: string;
  readonly trigger: SuspectTrigger;
  /** The window (afterExclusive, untilInclusive]; afterExclusive null = since the beginning. */
  readonly window: { readonly afterExclusive: Date | null; readonly untilInclusive: Date };
  readonly batches: readonly SuspectBatch[];
  readonly evidence: string;
}

export function selectSuspectBatches(
  failedOrOverdueEvent: SuspectTrigger,
  batchesOnEquipment: readonly BatchOnEquipment[],
  lastPassingResultAt: Date | null,
): SuspectSelection {
  const event = failedOrOverdueEvent;
  requireInstant(event.at, 'event.at');
  if (lastPassingResultAt !== null) {
    requireInstant(lastPassingResultAt, 'lastPassingResultAt');
    if (lastPassingResultAt.getTime() > event.at.getTime()) {
      throw new PyrometryInputError('lastPassingResultAt', `is after the event (${lastPassingResultAt.toISOString()} > ${event.at.toISOString()}); pass the last pass before the event`);
    }
  }
  batchesOnEquipment.forEach((b, i) => {
    requireInstant(b.startedAt, `batches[${i}].startedAt`);
    if (b.endedAt !== null) {
      requireInstant(b.endedAt, `batches[${i}].endedAt`);
      if (b.endedAt.getTime() < b.startedAt.getTime()) throw new PyrometryInputError(`batches[${i}].endedAt`, 'is before startedAt');
    }
  });

  const eventMs = event.at.getTime();
  const passMs = lastPassingResultAt?.getTime() ?? Number.NEGATIVE_INFINITY;
  const since = lastPassingResultAt ? `since the last passing result at ${lastPassingResultAt.toISOString()}` : 'with no passing result on record';
  const what = event.kind === 'failed-test' ? `${event.subject} failed at ${event.at.toISOString()}` : `${event.subject} found overdue at ${event.at.toISOString()}`;

  const batches: SuspectBatch[] = batchesOnEquipment
    // The caller passes batches "on the equipment"; filtering again keeps a wrong list from
    // putting other equipment's product on hold.
    .filter((b) => b.equipmentId === event.equipmentId)
    .filter((b) => {
      const endMs = b.endedAt?.getTime() ?? Number.POSITIVE_INFINITY;
      return b.startedAt.getTime() <= eventMs && endMs > passMs;
    })
    .map((b) => {
      const startMs = b.startedAt.getTime();
      const endMs = b.endedAt?.getTime() ?? Number.POSITIVE_INFINITY;
      const straddlesLastPass = lastPassingResultAt !== null && startMs <= passMs && endMs > passMs;
      const straddlesEvent = startMs <= eventMs && endMs > eventMs;
      const extra = [straddlesLastPass ? 'started at or before the last pass and ran on after it' : null, straddlesEvent ? 'was in process at the event' : null]
        .filter(Boolean)
        .join('; ');
      return {
        batchId: b.batchId,
        startedAt: b.startedAt,
        endedAt: b.endedAt,
        straddlesLastPass,
        straddlesEvent,
        reason: `processed on ${event.equipmentId} ${since}; ${what}${extra ? ` (${extra})` : ''}`,
      };
    })
    .sort((a, b) => a.startedAt.getTime() - b.startedAt.getTime() || (a.batchId < b.batchId ? -1 : a.batchId > b.batchId ? 1 : 0));

  return {
    equipmentId: event.equipmentId,
    trigger: event,
    window: { afterExclusive: lastPassingResultAt, untilInclusive: event.at },
    batches,
    evidence: `${what}; batches ${since} up to then are suspect${event.evidence ? `; evidence: ${event.evidence}` : ''}`,
  };
}
