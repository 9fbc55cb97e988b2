import { Inject, Injectable } from '@nestjs/common';
import {
  deviceTimeMs,
  LOAD_EVENT_EQUIPMENT,
  LOAD_EVENT_ORDER,
  type BatchCreate,
  type BatchStatus,
  type LabResultInput,
  type LoadEventInput,
  type LoadEventKind,
} from '@ausline/contracts';
import { Prisma, type Batch, type LabResult, type LoadEvent, type PrismaClient } from '@ausline/db';
import { API_CONFIG, type ApiConfig } from '../app-config.js';
import type { Principal } from '../auth/access.js';
import { conflict, forbidden, notFound, unprocessable, type ErrorIssue } from '../http/errors.js';
import { InjectPrisma } from '../prisma.provider.js';
import { futureTimeIssue } from './device-time.js';
import { stableStringify } from './idempotency.js';
import { ingestSettingsFrom } from './ingest-settings.js';
import { RecomputeQueue } from './recompute-queue.js';

export interface BatchCreateResult {
  outcome: 'created' | 'unchanged';
  batch: Batch;
}

export interface LoadEventResult {
  outcome: 'created' | 'unchanged';
  event: LoadEvent;
  batchStatus: BatchStatus;
}

export interface LabResultResult {
  outcome: 'created' | 'unchanged';
  labResult: LabResult;
}

/** Batch status after the latest step a load has passed. */
const STATUS_AFTER: Record<LoadEventKind, BatchStatus> = {
  CHARGED: 'IN_FURNACE',
  OUT_OF_FURNACE: 'IN_TRANSFER',
  INTO_BATH: 'IN_BATH',
  OUT_OF_BATH: 'DONE',
};

/**
 * Steps that may share a timestamp with the step before them: transfer is the load moving from the
 * furnace door into the salt, which controllers with one-second resolution can report as one instant.
 */
const MAY_EQUAL_PREVIOUS: ReadonlySet<LoadEventKind> = new Set(['INTO_BATH']);

type Tx = Prisma.TransactionClient;

/**
 * Batches (furnace loads), their load events and lab results: the writes. Every write a controller or
 * a lab may retry is idempotent (batch by code, event by (batch, kind), lab result by externalRef);
 * a retry that contradicts what is stored is refused with 409, never applied silently.
 */
@Injectable()
export class BatchesService {
  private readonly maxFutureMs: number;

  constructor(
    @InjectPrisma() private readonly prisma: PrismaClient,
    @Inject(API_CONFIG) config: ApiConfig,
    private readonly recompute: RecomputeQueue,
  ) {
    this.maxFutureMs = ingestSettingsFrom(config).maxFutureMs;
  }

  // ------------------------------------------------------------------------------------------
  // Batches
  // ------------------------------------------------------------------------------------------

  async create(input: BatchCreate, principal: Principal): Promise<BatchCreateResult> {
    const refs = await this.resolveReferences(input);
    if (principal.kind === 'apiKey') {
      // A controller key may create loads only for the line of a furnace it is scoped to.
      const furnaces = await this.prisma.equipment.count({
        where: { id: { in: principal.equipmentIds }, lineId: refs.lineId, kind: 'FURNACE' },
      });
      if (furnaces === 0) throw forbidden('This API key is not scoped to a furnace of that line');
    }
    const attempt = async (): Promise<BatchCreateResult> => {
      const existing = await this.prisma.batch.findUnique({ where: { code: input.code }, include: { specVersion: { select: { specId: true } } } });
      if (existing) {
        const differences = batchDifferences(existing, existing.specVersion.specId, refs, input);
        if (differences.length > 0) throw conflict(`Batch ${input.code} already exists with other values`, differences);
        const { specVersion: _specVersion, ...batch } = existing;
        return { outcome: 'unchanged', batch };
      }
      const batch = await this.prisma.batch.create({
        data: {
          code: input.code,
          lineId: refs.lineId,
          heatId: refs.heatId,
          specVersionId: refs.specVersionId,
          partCount: input.partCount,
          weightKg: input.weightKg,
          sectionShape: input.sectionShape,
          sectionSizeMm: input.sectionSizeMm,
          scheduledHoldMin: input.scheduledHoldMin ?? null,
        },
      });
      return { outcome: 'created', batch };
    };
    try {
      return await attempt();
    } catch (error) {
      if (error instanceof Prisma.PrismaClientKnownRequestError && error.code === 'P2002') return attempt();
      throw error;
    }
  }

  private async resolveReferences(input: BatchCreate): Promise<{ lineId: string; heatId: string; specId: string; specVersionId: string }> {
    const issues: ErrorIssue[] = [];
    const [line, heat, spec] = await Promise.all([
      input.lineId
        ? this.prisma.line.findUnique({ where: { id: input.lineId }, select: { id: true } })
        : this.prisma.line.findUnique({ where: { code: input.lineCode! }, select: { id: true } }),
      input.heatId
        ? this.prisma.heat.findUnique({ where: { id: input.heatId }, select: { id: true, material: true, heatNumber: true } })
        : this.prisma.heat.findUnique({ where: { heatNumber: input.heatNumber! }, select: { id: true, material: true, heatNumber: true } }),
      input.productSpecId
        ? this.prisma.productSpec.findUnique({ where: { id: input.productSpecId }, select: { id: true, code: true, material: true } })
        : this.prisma.productSpec.findUnique({ where: { code: input.productSpecCode! }, select: { id: true, code: true, material: true } }),
    ]);
    const linePath = input.lineId ? 'lineId' : 'lineCode';
    const heatPath = input.heatId ? 'heatId' : 'heatNumber';
    const specPath = input.productSpecId ? 'productSpecId' : 'productSpecCode';
    if (!line) issues.push({ path: linePath, message: `no line ${input.lineId ?? input.lineCode}` });
    if (!heat) issues.push({ path: heatPath, message: `no heat ${input.heatId ?? input.heatNumber}; post the heat first` });
    if (!spec) issues.push({ path: specPath, message: `no product spec ${input.productSpecId ?? input.productSpecCode}` });
    let specVersionId: string | undefined;
    if (spec) {
      const inForce = await this.prisma.productSpecVersion.findFirst({
        where: { specId: spec.id, status: 'APPROVED' },
        orderBy: { version: 'desc' },
        select: { id: true },
      });
      if (!inForce) issues.push({ path: specPath, message: `product spec ${spec.code} has no APPROVED version` });
      specVersionId = inForce?.id;
      if (heat && heat.material !== spec.material) {
        issues.push({ path: heatPath, message: `heat ${heat.heatNumber} is ${heat.material} but product spec ${spec.code} is for ${spec.material}` });
      }
    }
    if (issues.length > 0 || !line || !heat || !spec || !specVersionId) {
      throw unprocessable(`Batch refused: ${issues[0]!.path}: ${issues[0]!.message}`, issues);
    }
    return { lineId: line.id, heatId: heat.id, specId: spec.id, specVersionId };
  }

  // ------------------------------------------------------------------------------------------
  // Load events
  // ------------------------------------------------------------------------------------------

  async addEvent(batchId: string, input: LoadEventInput, principal: Principal): Promise<LoadEventResult> {
    const atMs = deviceTimeMs(input.at);
    const future = futureTimeIssue(atMs, Date.now(), this.maxFutureMs, 'at');
    if (future) throw unprocessable(`Event refused: at: ${future.message}`, [future]);

    const reply = await this.prisma.$transaction(async (tx) => {
      // Lock the batch: events of one load are checked against each other and must not interleave.
      const locked = await tx.$queryRaw<Array<{ id: string; lineId: string }>>`
        SELECT "id", "lineId" FROM "Batch" WHERE "id" = ${batchId}::uuid FOR UPDATE`;
      const batch = locked[0];
      if (!batch) throw notFound(`Batch ${batchId} does not exist`);

      const equipmentPath = input.equipmentId ? 'equipmentId' : 'equipmentCode';
      const equipment = input.equipmentId
        ? await tx.equipment.findUnique({ where: { id: input.equipmentId } })
        : await tx.equipment.findUnique({ where: { code: input.equipmentCode! } });
      if (!equipment) throw unprocessable(`Event refused: no equipment ${input.equipmentId ?? input.equipmentCode}`, [{ path: equipmentPath, message: 'unknown equipment' }]);
      if (principal.kind === 'apiKey' && !principal.equipmentIds.includes(equipment.id)) {
        throw forbidden(`This API key is not scoped to equipment ${equipment.code}`);
      }
      if (equipment.lineId !== batch.lineId) {
        throw unprocessable(`Event refused: equipment ${equipment.code} is not on the batch's line`, [
          { path: equipmentPath, message: "not on the batch's line" },
        ]);
      }
      const expectedKind = LOAD_EVENT_EQUIPMENT[input.kind];
      if (equipment.kind !== expectedKind) {
        throw unprocessable(`Event refused: ${input.kind} is reported by a ${expectedKind}, and ${equipment.code} is a ${equipment.kind}`, [
          { path: equipmentPath, message: `${input.kind} needs a ${expectedKind}` },
        ]);
      }

      const events = await tx.loadEvent.findMany({ where: { batchId } });
      const same = events.find((e) => e.kind === input.kind);
      if (same) {
        if (same.at.getTime() === atMs && same.equipmentId === equipment.id) {
          return { outcome: 'unchanged' as const, event: same, batchStatus: statusFrom(events) };
        }
        throw conflict(
          `${input.kind} is already recorded for this batch at ${same.at.toISOString()}${same.equipmentId !== equipment.id ? ' from other equipment' : ''}; it is not changed`,
          [{ path: same.at.getTime() !== atMs ? 'at' : equipmentPath, message: `stored ${same.at.toISOString()}, sent ${new Date(atMs).toISOString()}` }],
        );
      }
      const orderIssue = orderProblem(input.kind, atMs, events);
      if (orderIssue) throw unprocessable(`Event refused: ${orderIssue.message}`, [orderIssue]);

      const event = await tx.loadEvent.create({ data: { batchId, kind: input.kind, at: new Date(atMs), equipmentId: equipment.id } });
      const batchStatus = statusFrom([...events, event]);
      await tx.batch.update({ where: { id: batchId }, data: { status: batchStatus } });
      return { outcome: 'created' as const, event, batchStatus };
    });
    // Queued on "unchanged" too: a retry may follow a first attempt that committed and then died before it
    // queued anything, and nothing else would recompute a finished batch. The deduplicated job id folds
    // this into the batch's pending recompute, so a plain retry costs one Redis call.
    await this.recompute.enqueue([batchId], 'load-event');
    return reply;
  }

  // ------------------------------------------------------------------------------------------
  // Lab results
  // ------------------------------------------------------------------------------------------

  async addLabResult(batchId: string, input: LabResultInput): Promise<LabResultResult> {
    const batch = await this.prisma.batch.findUnique({ where: { id: batchId }, select: { id: true } });
    if (!batch) throw notFound(`Batch ${batchId} does not exist`);
    const row = labResultRow(input);
    const find = () => this.prisma.labResult.findUnique({ where: { batchId_kind_externalRef: { batchId, kind: input.kind, externalRef: input.externalRef } } });
    const compare = (existing: LabResult): LabResultResult => {
      const differences = labResultDifferences(existing, row);
      if (differences.length > 0) {
        throw conflict(`Lab result ${input.externalRef} (${input.kind}) is already recorded with other values`, differences);
      }
      return { outcome: 'unchanged', labResult: existing };
    };
    const existing = await find();
    if (existing) return this.requeued(batchId, compare(existing));
    let labResult: LabResult;
    try {
      labResult = await this.prisma.labResult.create({
        data: { batchId, kind: input.kind, externalRef: input.externalRef, values: row.values, scale: row.scale, testStandard: row.testStandard, measuredAt: row.measuredAt },
      });
    } catch (error) {
      if (error instanceof Prisma.PrismaClientKnownRequestError && error.code === 'P2002') {
        const raced = await find();
        if (raced) return this.requeued(batchId, compare(raced));
      }
      throw error;
    }
    await this.recompute.enqueue([batchId], 'lab-result');
    return { outcome: 'created', labResult };
  }

  /**
   * An unchanged lab result is queued again, as an unchanged load event is: the first attempt may have
   * committed and died before it queued the batch. Only a reply that matches the stored row gets here (a
   * conflict throws first), so nothing is queued for a refused write.
   */
  private async requeued(batchId: string, reply: LabResultResult): Promise<LabResultResult> {
    await this.recompute.enqueue([batchId], 'lab-result');
    return reply;
  }
}

/** Status from the furthest step a load has passed. */
export function statusFrom(events: ReadonlyArray<Pick<LoadEvent, 'kind'>>): BatchStatus {
  let furthest = -1;
  for (const e of events) furthest = Math.max(furthest, LOAD_EVENT_ORDER.indexOf(e.kind));
  return furthest < 0 ? 'PLANNED' : STATUS_AFTER[LOAD_EVENT_ORDER[furthest]!];
}

/**
 * Whether a new event's time fits the events already stored: every earlier step before it, every
 * later step after it. Steps may arrive out of order (two controllers, store-and-forward), so a
 * missing earlier step is fine; a contradicting time is not.
 */
export function orderProblem(kind: LoadEventKind, atMs: number, events: ReadonlyArray<Pick<LoadEvent, 'kind' | 'at'>>): ErrorIssue | undefined {
  const index = LOAD_EVENT_ORDER.indexOf(kind);
  for (const other of events) {
    const otherIndex = LOAD_EVENT_ORDER.indexOf(other.kind);
    const otherMs = other.at.getTime();
    if (otherIndex < index) {
      const allowEqual = otherIndex === index - 1 && MAY_EQUAL_PREVIOUS.has(kind);
      if (atMs < otherMs || (atMs === otherMs && !allowEqual)) {
        return { path: 'at', message: `${kind} at ${new Date(atMs).toISOString()} is not after ${other.kind} at ${other.at.toISOString()}` };
      }
    } else if (otherIndex > index) {
      const allowEqual = otherIndex === index + 1 && MAY_EQUAL_PREVIOUS.has(other.kind);
      if (atMs > otherMs || (atMs === otherMs && !allowEqual)) {
        return { path: 'at', message: `${kind} at ${new Date(atMs).toISOString()} is not before ${other.kind} at ${other.at.toISOString()}` };
      }
    }
  }
  return undefined;
}

function batchDifferences(
  stored: Batch,
  storedSpecId: string,
  refs: { lineId: string; heatId: string; specId: string },
  input: BatchCreate,
): ErrorIssue[] {
  const issues: ErrorIssue[] = [];
  const check = (path: string, a: unknown, b: unknown): void => {
    if (a !== b) issues.push({ path, message: `stored ${String(a ?? '(none)')}, sent ${String(b ?? '(none)')}` });
  };
  check(input.lineId ? 'lineId' : 'lineCode', stored.lineId, refs.lineId);
  check(input.heatId ? 'heatId' : 'heatNumber', stored.heatId, refs.heatId);
  check(input.productSpecId ? 'productSpecId' : 'productSpecCode', storedSpecId, refs.specId);
  check('partCount', stored.partCount, input.partCount);
  check('weightKg', stored.weightKg, input.weightKg);
  check('sectionShape', stored.sectionShape, input.sectionShape);
  check('sectionSizeMm', stored.sectionSizeMm, input.sectionSizeMm);
  check('scheduledHoldMin', stored.scheduledHoldMin ?? null, input.scheduledHoldMin ?? null);
  return issues;
}

interface LabResultRow {
  values: Prisma.InputJsonObject;
  scale: string | null;
  testStandard: string;
  measuredAt: Date | null;
}

const mean = (xs: readonly number[]): number => xs.reduce((s, x) => s + x, 0) / xs.length;

/** What is stored for one lab result: the readings as sent plus their summary, per kind. */
export function labResultRow(input: LabResultInput): LabResultRow {
  const common = {
    ...(input.location !== undefined ? { location: input.location } : {}),
    ...(input.note !== undefined ? { note: input.note } : {}),
  };
  const measuredAt = input.measuredAt !== undefined ? new Date(deviceTimeMs(input.measuredAt)) : null;
  switch (input.kind) {
    case 'HARDNESS':
      return {
        values: {
          readings: input.readings,
          n: input.readings.length,
          mean: mean(input.readings),
          min: Math.min(...input.readings),
          max: Math.max(...input.readings),
          ...(input.testForce !== undefined ? { testForce: input.testForce } : {}),
          ...common,
        },
        scale: input.scale,
        testStandard: input.testStandard,
        measuredAt,
      };
    case 'RETAINED_AUSTENITE':
      return { values: { volumePct: input.volumePct, method: input.method, ...common }, scale: null, testStandard: input.testStandard, measuredAt };
    case 'TENSILE':
      return {
        values: { rmMPa: input.rmMPa, rp02MPa: input.rp02MPa, elongationPct: input.elongationPct, ...common },
        scale: null,
        testStandard: input.testStandard,
        measuredAt,
      };
    case 'IMPACT':
      return {
        values: {
          energiesJ: input.energiesJ,
          n: input.energiesJ.length,
          meanJ: mean(input.energiesJ),
          minJ: Math.min(...input.energiesJ),
          temperatureC: input.temperatureC,
          notch: input.notch,
          ...common,
        },
        scale: null,
        testStandard: input.testStandard,
        measuredAt,
      };
  }
}

function labResultDifferences(stored: LabResult, row: LabResultRow): ErrorIssue[] {
  const issues: ErrorIssue[] = [];
  if (stableStringify(stored.values) !== stableStringify(row.values)) issues.push({ path: 'values', message: 'the results differ from the stored ones' });
  if ((stored.scale ?? null) !== row.scale) issues.push({ path: 'scale', message: `stored ${stored.scale ?? '(none)'}, sent ${row.scale ?? '(none)'}` });
  if ((stored.testStandard ?? null) !== row.testStandard) issues.push({ path: 'testStandard', message: `stored ${stored.testStandard ?? '(none)'}, sent ${row.testStandard}` });
  if ((stored.measuredAt?.getTime() ?? null) !== (row.measuredAt?.getTime() ?? null)) issues.push({ path: 'measuredAt', message: 'differs from the stored time' });
  return issues;
}
