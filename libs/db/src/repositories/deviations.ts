import {
  applyDeviationAction,
  planDeviationSync,
  type DeviationAction,
  type DeviationActionRefusal,
  type DeviationActor,
  type DeviationAuditEntry,
  type DeviationLifecycle,
  type DeviationSeverity,
  type DeviationStatus,
} from '@ausline/compliance';
import type { Deviation, DeviationAudit, Prisma, PrismaClient } from '../generated/prisma/client.js';

/**
 * Deviations and their append-only audit trail. All writes go through here:
 *  - the worker syncs a batch's findings (openOrRefresh, clearIfUnacknowledged, or both in syncFindings);
 *  - the API moves a deviation through its lifecycle (transition), which libs/compliance decides.
 * Every change writes a DeviationAudit row in the same transaction (who, when, from, to, why). Rows of
 * one deviation are serialized with SELECT ... FOR UPDATE, so a person's action and a recompute never
 * interleave.
 */

/** A rule result to store, as libs/compliance produces it. */
export interface DeviationFindingInput {
  rule: string;
  severity: DeviationSeverity;
  dedupKey: string;
  channelId: string | null;
  message: string;
  details: Record<string, unknown>;
}

/** The batch a finding belongs to (denormalised onto the deviation for the list filters). */
export interface DeviationBatchRef {
  batchId: string;
  lineId: string;
  productSpecId: string | null;
}

/** One change to a deviation, for live events; published by the caller after the commit. */
export interface DeviationChange {
  deviationId: string;
  batchId: string | null;
  lineId: string;
  rule: string;
  status: DeviationStatus;
  kind: 'opened' | 'refreshed' | 'reopened' | 'cleared' | 'noted' | 'transitioned';
}

export type DeviationTransitionResult =
  | { ok: true; deviation: Deviation; change: DeviationChange }
  | { ok: false; code: DeviationActionRefusal | 'not-found'; reason: string };

export interface DeviationListFilter {
  /** openedAt >= from */
  from?: Date;
  /** openedAt < to */
  to?: Date;
  lineId?: string;
  batchId?: string;
  productSpecId?: string;
  severity?: readonly DeviationSeverity[];
  status?: readonly DeviationStatus[];
  rule?: readonly string[];
  /** Page size, 1..500. */
  limit: number;
  /** Keyset: rows strictly after this (openedAt, id) in newest-first order. */
  after?: { at: Date; id: string };
}

export type DeviationListItem = Deviation & {
  batch: { code: string } | null;
  line: { code: string };
  channel: { code: string } | null;
};

export interface DeviationPage {
  items: DeviationListItem[];
  total: number;
  /** Cursor for the next page (the last item's openedAt and id); null on the last page. */
  next: { at: Date; id: string } | null;
}

export type DeviationWithAudit = DeviationListItem & { audits: DeviationAudit[] };

type Tx = Prisma.TransactionClient;

const WORKER: DeviationActor = { kind: 'system', label: 'worker' };

export class DeviationRepository {
  constructor(private readonly prisma: PrismaClient) {}

  /** Runs `fn` in the given transaction, or in a new one. */
  private inTx<T>(tx: Tx | undefined, fn: (tx: Tx) => Promise<T>): Promise<T> {
    return tx ? fn(tx) : this.prisma.$transaction(fn, { timeout: 30_000 });
  }

  /**
   * Stores one finding: opens a new deviation, refreshes the open one (same dedupKey: a recompute never
   * duplicates), or reopens a CLEARED one (the documented choice in libs/compliance deviation-state.ts).
   * Returns the change, or null when nothing changed.
   */
  openOrRefresh(finding: DeviationFindingInput, batch: DeviationBatchRef, tx?: Tx): Promise<DeviationChange | null> {
    return this.inTx(tx, async (t) => {
      const now = await dbNow(t);
      const existing = await lockByDedupKey(t, finding.dedupKey);
      if (!existing) {
        const id = await insertIfAbsent(t, finding, batch, now);
        if (id) {
          await t.deviationAudit.create({
            data: audit(id, { action: 'OPEN', fromStatus: null, toStatus: 'OPEN', reason: finding.message, at: now, details: finding.details }),
          });
          return change({ id, batchId: batch.batchId, lineId: batch.lineId, rule: finding.rule, status: 'OPEN' }, 'opened');
        }
        // Another transaction inserted it between our look and our insert: treat it as existing.
      }
      const row = existing ?? (await lockByDedupKey(t, finding.dedupKey));
      if (!row) throw new Error(`deviation ${finding.dedupKey} vanished while locked`);
      return this.applyFinding(t, row, finding, now);
    });
  }

  private async applyFinding(t: Tx, row: Deviation, finding: DeviationFindingInput, now: Date): Promise<DeviationChange | null> {
    const contentChanged =
      row.message !== finding.message ||
      row.severity !== finding.severity ||
      (row.channelId ?? null) !== finding.channelId ||
      canonicalJson(row.details) !== canonicalJson(finding.details);
    const step = planDeviationSync(
      { status: row.status, conditionPresent: row.conditionPresent, message: row.message, severity: row.severity },
      { message: finding.message, severity: finding.severity },
    );
    const content = {
      message: finding.message,
      severity: finding.severity,
      channelId: finding.channelId,
      details: finding.details as Prisma.InputJsonValue,
      lastEvaluatedAt: now,
    };
    switch (step.kind) {
      case 'refresh': {
        if (!contentChanged) {
          await t.deviation.update({ where: { id: row.id }, data: { lastEvaluatedAt: now } });
          return null;
        }
        await t.deviation.update({ where: { id: row.id }, data: { ...content, version: { increment: 1 } } });
        await t.deviationAudit.create({
          data: audit(row.id, {
            action: 'REFRESH',
            fromStatus: row.status,
            toStatus: row.status,
            reason: finding.message,
            at: now,
            details: { previousMessage: row.message, previousSeverity: row.severity, ...(finding.details as object) },
          }),
        });
        return change(row, 'refreshed');
      }
      case 'reopen': {
        const r = applyDeviationAction(lifecycleOf(row), { type: 'REOPEN', reason: `condition found again: ${finding.message}` }, WORKER, now);
        if (!r.ok) throw new Error(`reopen refused: ${r.reason}`);
        await t.deviation.update({ where: { id: row.id }, data: { ...content, ...r.next, version: { increment: 1 } } });
        await t.deviationAudit.create({ data: auditFrom(row.id, r.audit, finding.details) });
        return change({ ...row, status: r.next.status }, 'reopened');
      }
      case 'note-present-again': {
        await t.deviation.update({ where: { id: row.id }, data: { ...content, conditionPresent: true, version: { increment: 1 } } });
        await t.deviationAudit.create({
          data: audit(row.id, {
            action: 'NOTE',
            fromStatus: row.status,
            toStatus: row.status,
            reason: `condition present again: ${finding.message}`,
            at: now,
            details: finding.details,
          }),
        });
        return change(row, 'noted');
      }
      default:
        throw new Error(`unexpected sync step ${step.kind} for a present finding`);
    }
  }

  /**
   * After a recompute: deviations of `batchId` (limited to `rules`, the rules that were evaluated) whose
   * dedupKey is no longer among the current findings. An OPEN one is CLEARED (kept in history); one a
   * person already acted on keeps its status and gets a note that the condition is gone.
   */
  clearIfUnacknowledged(
    batchId: string,
    currentDedupKeys: readonly string[],
    options: { rules?: readonly string[] } = {},
    tx?: Tx,
  ): Promise<DeviationChange[]> {
    return this.inTx(tx, async (t) => {
      const now = await dbNow(t);
      const rules = options.rules === undefined ? null : [...options.rules];
      const locked = await t.$queryRaw<{ id: string }[]>`
        SELECT "id" FROM "Deviation"
        WHERE "batchId" = ${batchId}::uuid
          AND "conditionPresent"
          AND NOT ("dedupKey" = ANY(${[...currentDedupKeys]}::text[]))
          AND (${rules}::text[] IS NULL OR "rule" = ANY(${rules}::text[]))
        ORDER BY "dedupKey"
        FOR UPDATE`;
      const rows = await t.deviation.findMany({ where: { id: { in: locked.map((r) => r.id) } }, orderBy: { dedupKey: 'asc' } });
      const changes: DeviationChange[] = [];
      for (const row of rows) {
        const step = planDeviationSync(
          { status: row.status, conditionPresent: row.conditionPresent, message: row.message, severity: row.severity },
          null,
        );
        if (step.kind === 'clear') {
          const r = applyDeviationAction(lifecycleOf(row), { type: 'CLEAR', reason: 'condition no longer found on recompute, before anyone acknowledged it' }, WORKER, now);
          if (!r.ok) throw new Error(`clear refused: ${r.reason}`);
          await t.deviation.update({ where: { id: row.id }, data: { ...r.next, lastEvaluatedAt: now, version: { increment: 1 } } });
          await t.deviationAudit.create({ data: auditFrom(row.id, r.audit, null) });
          changes.push(change({ ...row, status: r.next.status }, 'cleared'));
        } else if (step.kind === 'note-absent') {
          await t.deviation.update({ where: { id: row.id }, data: { conditionPresent: false, lastEvaluatedAt: now, version: { increment: 1 } } });
          await t.deviationAudit.create({
            data: audit(row.id, {
              action: 'NOTE',
              fromStatus: row.status,
              toStatus: row.status,
              reason: 'condition no longer found on recompute; status kept (already reviewed)',
              at: now,
              details: null,
            }),
          });
          changes.push(change(row, 'noted'));
        }
      }
      return changes;
    });
  }

  /**
   * The worker's write after evaluating a batch: every finding opened or refreshed, every vanished one
   * cleared (or noted), in one transaction.
   */
  syncFindings(
    batch: DeviationBatchRef,
    findings: readonly DeviationFindingInput[],
    options: { rules?: readonly string[] } = {},
    tx?: Tx,
  ): Promise<DeviationChange[]> {
    return this.inTx(tx, async (t) => {
      const changes: DeviationChange[] = [];
      // Sorted by dedupKey so two writers lock rows in the same order (no deadlock).
      for (const f of [...findings].sort((a, b) => (a.dedupKey < b.dedupKey ? -1 : 1))) {
        const c = await this.openOrRefresh(f, batch, t);
        if (c) changes.push(c);
      }
      changes.push(...(await this.clearIfUnacknowledged(batch.batchId, findings.map((f) => f.dedupKey), options, t)));
      return changes;
    });
  }

  /**
   * A person's action (acknowledge, disposition, close), decided by libs/compliance applyDeviationAction.
   * Locks the row, checks `expectedVersion` when given (optimistic check for clients that showed a
   * version), updates it and writes the audit row in the same transaction.
   */
  transition(
    id: string,
    action: DeviationAction,
    actor: DeviationActor,
    options: { expectedVersion?: number } = {},
  ): Promise<DeviationTransitionResult> {
    return this.prisma.$transaction(async (t) => {
      const row = await lockById(t, id);
      if (!row) return { ok: false, code: 'not-found', reason: `deviation ${id} not found` } as const;
      if (options.expectedVersion !== undefined && options.expectedVersion !== row.version) {
        return {
          ok: false,
          code: 'conflict',
          reason: `deviation changed meanwhile (version ${row.version}, expected ${options.expectedVersion}); reload and retry`,
        } as const;
      }
      const now = await dbNow(t);
      const r = applyDeviationAction(lifecycleOf(row), action, actor, now);
      if (!r.ok) return r;
      const deviation = await t.deviation.update({ where: { id }, data: { ...r.next, version: { increment: 1 } } });
      await t.deviationAudit.create({ data: auditFrom(id, r.audit, 'dispositionRef' in action && action.dispositionRef ? { dispositionRef: action.dispositionRef } : null) });
      return { ok: true, deviation, change: change(deviation, 'transitioned') } as const;
    });
  }

  async list(filter: DeviationListFilter): Promise<DeviationPage> {
    const where: Prisma.DeviationWhereInput = {
      ...(filter.from || filter.to ? { openedAt: { ...(filter.from && { gte: filter.from }), ...(filter.to && { lt: filter.to }) } } : {}),
      ...(filter.lineId && { lineId: filter.lineId }),
      ...(filter.batchId && { batchId: filter.batchId }),
      ...(filter.productSpecId && { productSpecId: filter.productSpecId }),
      ...(filter.severity && { severity: { in: [...filter.severity] } }),
      ...(filter.status && { status: { in: [...filter.status] } }),
      ...(filter.rule && { rule: { in: [...filter.rule] } }),
    };
    const page: Prisma.DeviationWhereInput = filter.after
      ? { OR: [{ openedAt: { lt: filter.after.at } }, { openedAt: filter.after.at, id: { lt: filter.after.id } }] }
      : {};
    const [items, total] = await Promise.all([
      this.prisma.deviation.findMany({
        where: { AND: [where, page] },
        orderBy: [{ openedAt: 'desc' }, { id: 'desc' }],
        take: filter.limit + 1,
        include: listInclude,
      }),
      this.prisma.deviation.count({ where }),
    ]);
    const more = items.length > filter.limit;
    const shown = more ? items.slice(0, filter.limit) : items;
    const last = shown[shown.length - 1];
    return { items: shown, total, next: more && last ? { at: last.openedAt, id: last.id } : null };
  }

  /** One deviation with its whole audit trail, oldest entry first. */
  get(id: string): Promise<DeviationWithAudit | null> {
    return this.prisma.deviation.findUnique({
      where: { id },
      include: { ...listInclude, audits: { orderBy: [{ at: 'asc' }, { id: 'asc' }] } },
    });
  }
}

const listInclude = {
  batch: { select: { code: true } },
  line: { select: { code: true } },
  channel: { select: { code: true } },
} as const;

async function dbNow(t: Tx): Promise<Date> {
  const [{ now }] = await t.$queryRaw<{ now: Date }[]>`SELECT clock_timestamp() AS now`;
  return now;
}

/** Locks one deviation row for this transaction (SELECT ... FOR UPDATE), then reads it typed. */
async function lockByDedupKey(t: Tx, dedupKey: string): Promise<Deviation | null> {
  const rows = await t.$queryRaw<{ id: string }[]>`SELECT "id" FROM "Deviation" WHERE "dedupKey" = ${dedupKey} FOR UPDATE`;
  return rows[0] ? t.deviation.findUnique({ where: { id: rows[0].id } }) : null;
}

async function lockById(t: Tx, id: string): Promise<Deviation | null> {
  const rows = await t.$queryRaw<{ id: string }[]>`SELECT "id" FROM "Deviation" WHERE "id" = ${id}::uuid FOR UPDATE`;
  return rows[0] ? t.deviation.findUnique({ where: { id } }) : null;
}

/** INSERT ... ON CONFLICT DO NOTHING: a unique violation would abort the whole transaction. */
async function insertIfAbsent(t: Tx, f: DeviationFindingInput, b: DeviationBatchRef, now: Date): Promise<string | null> {
  const rows = await t.$queryRaw<{ id: string }[]>`
    INSERT INTO "Deviation" ("batchId", "lineId", "productSpecId", "channelId", "rule", "severity", "status", "message",
                             "details", "dedupKey", "openedAt", "lastEvaluatedAt", "updatedAt")
    VALUES (${b.batchId}::uuid, ${b.lineId}::uuid, ${b.productSpecId}::uuid, ${f.channelId}::uuid, ${f.rule},
            ${f.severity}::"DeviationSeverity", 'OPEN'::"DeviationStatus", ${f.message}, ${JSON.stringify(f.details)}::jsonb,
            ${f.dedupKey}, ${now}, ${now}, ${now})
    ON CONFLICT ("dedupKey") DO NOTHING
    RETURNING "id"`;
  return rows[0]?.id ?? null;
}

function lifecycleOf(row: Deviation): DeviationLifecycle {
  return {
    status: row.status,
    disposition: row.disposition,
    dispositionReason: row.dispositionReason,
    dispositionRef: row.dispositionRef,
    signer: row.signer,
    dispositionedById: row.dispositionedById,
    dispositionedAt: row.dispositionedAt,
    acknowledgedById: row.acknowledgedById,
    acknowledgedAt: row.acknowledgedAt,
    closedById: row.closedById,
    closedAt: row.closedAt,
    clearedAt: row.clearedAt,
    conditionPresent: row.conditionPresent,
  };
}

function audit(
  deviationId: string,
  a: { action: string; fromStatus: DeviationStatus | null; toStatus: DeviationStatus; reason: string | null; at: Date; details: unknown },
): Prisma.DeviationAuditUncheckedCreateInput {
  return {
    deviationId,
    action: a.action,
    actorKind: 'SYSTEM',
    actor: WORKER.label,
    fromStatus: a.fromStatus,
    toStatus: a.toStatus,
    reason: a.reason,
    at: a.at,
    ...(a.details !== null && a.details !== undefined ? { details: a.details as Prisma.InputJsonValue } : {}),
  };
}

function auditFrom(deviationId: string, e: DeviationAuditEntry, details: unknown): Prisma.DeviationAuditUncheckedCreateInput {
  return {
    deviationId,
    action: e.action,
    actorKind: e.actorKind,
    actorUserId: e.actorUserId,
    actor: e.actorLabel,
    fromStatus: e.fromStatus,
    toStatus: e.toStatus,
    reason: e.reason,
    disposition: e.disposition,
    at: e.at,
    ...(details !== null && details !== undefined ? { details: details as Prisma.InputJsonValue } : {}),
  };
}

function change(
  row: { id: string; batchId: string | null; lineId: string; rule: string; status: DeviationStatus },
  kind: DeviationChange['kind'],
): DeviationChange {
  return { deviationId: row.id, batchId: row.batchId, lineId: row.lineId, rule: row.rule, status: row.status, kind };
}

/** JSON with object keys sorted: jsonb gives keys back in its own order, so compare canonically. */
export function canonicalJson(value: unknown): string {
  return JSON.stringify(value, (_key, v: unknown) =>
    v && typeof v === 'object' && !Array.isArray(v)
      ? Object.fromEntries(Object.entries(v as Record<string, unknown>).sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0)))
      : v,
  );
}
