import { Injectable } from '@nestjs/common';
import type { HeatInput, HeatOutcome, HeatQuery, Page } from '@ausline/contracts';
import { Prisma, type Heat, type HeatRevision, type PrismaClient } from '@ausline/db';
import { badRequest, conflict, notFound, type ErrorIssue } from '../http/errors.js';
import { InjectPrisma } from '../prisma.provider.js';
import { decodeCursor, encodeCursor } from '../queries/cursor.js';
import type { HeatCsvRow } from './heat-csv.js';
import { RecomputeQueue } from './recompute-queue.js';

export interface HeatResult {
  outcome: HeatOutcome;
  heat: Heat;
}

export interface HeatWithRevisions extends Heat {
  revisions: HeatRevision[];
}

export interface HeatImportReply {
  created: number;
  revised: number;
  unchanged: number;
  heats: Array<{ row: number; heatNumber: string; id: string; outcome: HeatOutcome; revision: number }>;
}

/** Thrown inside the import transaction to roll it back with the issues of every refused row. */
class RowConflicts extends Error {
  constructor(readonly issues: ErrorIssue[]) {
    super('row conflicts');
  }
}

type Tx = Prisma.TransactionClient;

/**
 * Heats and their chemistry. A heat number is posted once; the same post again is a no-op. Changed
 * chemistry (or material, grade, source) is never taken silently: it needs `revisionReason`, and then
 * becomes a new revision with who, when and why, the old one kept (HeatRevision). Without a reason
 * the post is refused with 409 naming each differing field.
 */
@Injectable()
export class HeatsService {
  constructor(
    @InjectPrisma() private readonly prisma: PrismaClient,
    private readonly recompute: RecomputeQueue,
  ) {}

  async upsert(input: HeatInput, actor: string): Promise<HeatResult> {
    const result = await this.withUniqueRetry(() =>
      this.prisma.$transaction(async (tx) => {
        const outcome = await this.applyInTx(tx, input, actor);
        if ('conflicts' in outcome) {
          throw conflict(
            `Heat ${input.heatNumber} is stored with other values; send revisionReason to record a new revision`,
            outcome.conflicts,
          );
        }
        return outcome;
      }),
    );
    if (result.outcome === 'revised') await this.recomputeBatchesOf([result.heat.id]);
    return result;
  }

  /** The whole file or nothing: every row is applied in one transaction, any refused row rolls all back. */
  async importRows(rows: HeatCsvRow[], actor: string): Promise<HeatImportReply> {
    const reply = await this.withUniqueRetry(() =>
      this.prisma.$transaction(
        async (tx) => {
          const issues: ErrorIssue[] = [];
          const heats: HeatImportReply['heats'] = [];
          for (const { row, heat } of rows) {
            const outcome = await this.applyInTx(tx, heat, actor);
            if ('conflicts' in outcome) {
              for (const c of outcome.conflicts) {
                const column = c.path.startsWith('chemistryWtPct.') ? c.path.slice('chemistryWtPct.'.length) : c.path;
                issues.push({ path: `rows.${row}.${column}`, message: `row ${row}, column ${column}: ${c.message}` });
              }
              continue;
            }
            heats.push({ row, heatNumber: outcome.heat.heatNumber, id: outcome.heat.id, outcome: outcome.outcome, revision: outcome.heat.revision });
          }
          if (issues.length > 0) throw new RowConflicts(issues);
          return {
            created: heats.filter((h) => h.outcome === 'created').length,
            revised: heats.filter((h) => h.outcome === 'revised').length,
            unchanged: heats.filter((h) => h.outcome === 'unchanged').length,
            heats,
          };
        },
        { timeout: 60_000 },
      ),
    ).catch((error: unknown) => {
      if (error instanceof RowConflicts) {
        throw conflict(
          `Import refused, nothing stored: ${error.issues.length} value(s) differ from stored heats; add a revisionReason column to record new revisions`,
          error.issues,
        );
      }
      throw error;
    });
    const revised = reply.heats.filter((h) => h.outcome === 'revised').map((h) => h.id);
    if (revised.length > 0) await this.recomputeBatchesOf(revised);
    return reply;
  }

  async list(query: HeatQuery): Promise<Page<Heat>> {
    const where: Prisma.HeatWhereInput = {
      ...(query.heatNumber ? { heatNumber: query.heatNumber } : {}),
      ...(query.material ? { material: query.material } : {}),
    };
    const after = query.cursor ? decodeCursor(query.cursor, 'query.cursor') : undefined;
    const pageWhere: Prisma.HeatWhereInput = after
      ? { AND: [where, { OR: [{ createdAt: { lt: after.at } }, { createdAt: after.at, id: { lt: after.id } }] }] }
      : where;
    const [total, rows] = await Promise.all([
      this.prisma.heat.count({ where }),
      this.prisma.heat.findMany({ where: pageWhere, orderBy: [{ createdAt: 'desc' }, { id: 'desc' }], take: query.limit + 1 }),
    ]);
    const items = rows.slice(0, query.limit);
    const last = items[items.length - 1];
    return { items, total, nextCursor: rows.length > query.limit && last ? encodeCursor(last.createdAt, last.id) : null };
  }

  async get(id: string): Promise<HeatWithRevisions> {
    const heat = await this.prisma.heat.findUnique({ where: { id }, include: { revisions: { orderBy: { revision: 'asc' } } } });
    if (!heat) throw notFound(`Heat ${id} does not exist`);
    return heat;
  }

  /**
   * Creates, leaves alone or revises one heat inside `tx`; returns the per-field conflicts instead when
   * the stored heat differs and no revision reason was given.
   */
  private async applyInTx(tx: Tx, input: HeatInput, actor: string): Promise<HeatResult | { conflicts: ErrorIssue[] }> {
    const locked = await tx.$queryRaw<Array<{ id: string }>>`
      SELECT "id" FROM "Heat" WHERE "heatNumber" = ${input.heatNumber} FOR UPDATE`;
    const grade = input.grade ?? null;
    if (!locked[0]) {
      const heat = await tx.heat.create({
        data: {
          heatNumber: input.heatNumber,
          material: input.material,
          grade,
          chemistryWtPct: input.chemistryWtPct,
          source: input.source,
          revision: 1,
          revisions: {
            create: {
              revision: 1,
              material: input.material,
              grade,
              chemistryWtPct: input.chemistryWtPct,
              source: input.source,
              changedBy: actor,
              reason: input.revisionReason ?? 'first posted',
            },
          },
        },
      });
      return { outcome: 'created', heat };
    }
    const stored = await tx.heat.findUniqueOrThrow({ where: { id: locked[0].id } });
    const differences = heatDifferences(stored, input);
    if (differences.length === 0) return { outcome: 'unchanged', heat: stored };
    if (!input.revisionReason) return { conflicts: differences };

    const revision = stored.revision + 1;
    const heat = await tx.heat.update({
      where: { id: stored.id },
      data: {
        material: input.material,
        grade,
        chemistryWtPct: input.chemistryWtPct,
        source: input.source,
        revision,
        revisions: {
          create: {
            revision,
            material: input.material,
            grade,
            chemistryWtPct: input.chemistryWtPct,
            source: input.source,
            changedBy: actor,
            reason: input.revisionReason,
          },
        },
      },
    });
    return { outcome: 'revised', heat };
  }

  private async recomputeBatchesOf(heatIds: string[]): Promise<void> {
    const batches = await this.prisma.batch.findMany({ where: { heatId: { in: heatIds } }, select: { id: true } });
    await this.recompute.enqueue(
      batches.map((b) => b.id),
      'heat',
    );
  }

  /** Two first posts of one new heat number race on the unique index: the loser retries and compares. */
  private async withUniqueRetry<T>(work: () => Promise<T>): Promise<T> {
    try {
      return await work();
    } catch (error) {
      if (error instanceof Prisma.PrismaClientKnownRequestError && error.code === 'P2002') return work();
      throw error;
    }
  }
}

/** Per-field differences between a stored heat and a post, as issues ('chemistryWtPct.Si: stored 1.45 wt%, sent 1.5 wt%'). */
export function heatDifferences(stored: Pick<Heat, 'material' | 'grade' | 'source' | 'chemistryWtPct'>, input: HeatInput): ErrorIssue[] {
  const issues: ErrorIssue[] = [];
  if (stored.material !== input.material) issues.push({ path: 'material', message: `stored ${stored.material}, sent ${input.material}` });
  if ((stored.grade ?? null) !== (input.grade ?? null)) {
    issues.push({ path: 'grade', message: `stored ${stored.grade ?? '(none)'}, sent ${input.grade ?? '(none)'}` });
  }
  if (stored.source !== input.source) issues.push({ path: 'source', message: `stored ${stored.source}, sent ${input.source}` });
  const storedChem = (stored.chemistryWtPct ?? {}) as Record<string, number>;
  const sentChem = input.chemistryWtPct as Record<string, number>;
  const symbols = [...new Set([...Object.keys(storedChem), ...Object.keys(sentChem)])].sort();
  for (const symbol of symbols) {
    const a = storedChem[symbol];
    const b = sentChem[symbol];
    if (a !== b) {
      issues.push({
        path: `chemistryWtPct.${symbol}`,
        message: `stored ${a === undefined ? '(not stated)' : `${a} wt%`}, sent ${b === undefined ? '(not stated)' : `${b} wt%`}`,
      });
    }
  }
  return issues;
}

export function assertCsvBody(body: unknown): string {
  if (typeof body !== 'string' || body.trim() === '') {
    throw badRequest('Send the heats as a text/csv body with a header row', [{ path: 'body', message: 'expected a non-empty text/csv body' }]);
  }
  return body;
}
