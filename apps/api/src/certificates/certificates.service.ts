import { createHash } from 'node:crypto';
import { Injectable } from '@nestjs/common';
import { AcceptanceCriteria, ChemistryLimits, ProcessWindow } from '@ausline/contracts';
import {
  LotKeyError,
  acceptanceChecks,
  batchRelease,
  lotKeyOf,
  parseLotKey,
  plantDate,
  processRecord,
  type LotIdentity,
} from '@ausline/compliance';
import { RecomputeInputsRepository, canonicalJson, type PrismaClient } from '@ausline/db';
import { badRequest, notFound } from '../http/errors.js';
import { InjectPrisma } from '../prisma.provider.js';

export const LOT_DEFINITION =
  'A lot is every batch of one product spec made from one heat that went into the bath on one plant day (the date in the line’s time zone of INTO_BATH, else CHARGED, else the batch’s creation). lotKey = <spec code>:<heat number>:<YYYY-MM-DD>, codes percent-encoded.';

/** Predicted quantities a certificate shows (p05/p50/p95 of the latest prediction). */
const CERTIFICATE_BANDS = ['hardnessHV', 'hardnessHRC', 'hardnessHBW', 'tensileMPa', 'fractionAtEnd', 'bainiticFerrite', 'blockyAustenite', 'filmAustenite', 'retainedAusteniteFraction', 'freshMartensite', 'upperProductsFraction'] as const;

type BatchRow = Awaited<ReturnType<CertificatesService['loadBatches']>>[number];

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}
const iso = (d: Date | null | undefined) => (d ? d.toISOString() : null);

/**
 * Certificate data (issue 4, item 7; practice.md §3.3): per batch or per lot, the record a customer
 * certificate is printed from – heat and chemistry with its revision, spec version, the process actually run
 * (austenitize temperature and soak, transfer, bath mean/min/max and hold, from the logs), the latest
 * prediction (bands, verdicts), the lab results against the acceptance criteria, the deviations with their
 * dispositions and who signed, the model versions. Deterministic: the same records give the same JSON (no
 * generation time in it; arrays in a fixed order), and `recordDigest` (SHA-256 of the canonical JSON)
 * identifies exactly the records it was made from.
 */
@Injectable()
export class CertificatesService {
  private readonly inputs: RecomputeInputsRepository;

  constructor(@InjectPrisma() private readonly prisma: PrismaClient) {
    this.inputs = new RecomputeInputsRepository(prisma);
  }

  async forBatch(batchId: string) {
    const [batch] = await this.loadBatches({ id: batchId });
    if (!batch) throw notFound(`Batch ${batchId} does not exist`);
    const lot = this.lotOf(batch);
    return this.assemble('batch', lot, [batch]);
  }

  async forLot(lotKey: string) {
    let lot: LotIdentity;
    try {
      lot = parseLotKey(lotKey);
    } catch (error) {
      if (error instanceof LotKeyError) throw badRequest(`Invalid lot key: ${error.message}`, [{ path: 'params.lotKey', message: error.message }]);
      throw error;
    }
    const [spec, heat] = await Promise.all([
      this.prisma.productSpec.findUnique({ where: { code: lot.specCode }, select: { id: true } }),
      this.prisma.heat.findUnique({ where: { heatNumber: lot.heatNumber }, select: { id: true } }),
    ]);
    if (!spec) throw notFound(`Lot ${lotKey}: product spec ${lot.specCode} does not exist`);
    if (!heat) throw notFound(`Lot ${lotKey}: heat ${lot.heatNumber} does not exist`);
    const batches = (await this.loadBatches({ heatId: heat.id, specVersion: { specId: spec.id } })).filter((b) => this.lotOf(b).date === lot.date);
    if (batches.length === 0) throw notFound(`Lot ${lotKey}: no batch of ${lot.specCode} from heat ${lot.heatNumber} went into the bath on ${lot.date}`);
    return this.assemble('lot', lot, batches);
  }

  private loadBatches(where: { id: string } | { heatId: string; specVersion: { specId: string } }) {
    return this.prisma.batch.findMany({
      where,
      include: {
        line: { select: { id: true, code: true, name: true, timeZone: true } },
        heat: { include: { revisions: { orderBy: { revision: 'asc' } } } },
        specVersion: { include: { spec: true } },
        loadEvents: { include: { equipment: { select: { id: true, code: true, name: true, kind: true } } } },
        labResults: true,
        predictions: { orderBy: { version: 'desc' }, take: 1 },
        labComparisons: true,
        deviations: {
          include: {
            audits: { orderBy: [{ at: 'asc' }, { id: 'asc' }] },
            dispositionedBy: { select: { email: true, displayName: true } },
            acknowledgedBy: { select: { email: true, displayName: true } },
            closedBy: { select: { email: true, displayName: true } },
          },
        },
      },
    });
  }

  private startOf(b: BatchRow): Date {
    const at = (k: string) => b.loadEvents.find((e) => e.kind === k)?.at;
    return at('INTO_BATH') ?? at('CHARGED') ?? b.createdAt;
  }

  private lotOf(b: BatchRow): LotIdentity & { lotKey: string } {
    const id = { specCode: b.specVersion.spec.code, heatNumber: b.heat.heatNumber, date: plantDate(this.startOf(b).getTime(), b.line.timeZone) };
    return { ...id, lotKey: lotKeyOf(id) };
  }

  private async assemble(kind: 'batch' | 'lot', lot: LotIdentity, rows: BatchRow[]) {
    const batches = [...rows].sort((a, b) => this.startOf(a).getTime() - this.startOf(b).getTime() || (a.code < b.code ? -1 : 1));
    const first = batches[0];
    const spec = first.specVersion.spec;
    const heat = first.heat;
    const versions = [...new Map(batches.map((b) => [b.specVersion.id, b.specVersion])).values()].sort((a, b) => a.version - b.version);
    const limits = ChemistryLimits.safeParse(versions.at(-1)!.chemistryLimits);
    const chemistryCheck = limits.success
      ? Object.entries(limits.data)
          .sort(([a], [b]) => (a < b ? -1 : 1))
          .map(([element, l]) => {
            const v = (heat.chemistryWtPct as Record<string, number>)[element];
            const value = typeof v === 'number' ? v : null;
            const verdict = value === null ? 'missing' : l?.minWtPct !== undefined && value < l.minWtPct ? 'below' : l?.maxWtPct !== undefined && value > l.maxWtPct ? 'above' : 'ok';
            return { element, valueWtPct: value, minWtPct: l?.minWtPct ?? null, maxWtPct: l?.maxWtPct ?? null, verdict };
          })
      : [];
    const latestRevision = heat.revisions.at(-1) ?? null;

    const batchRecords = [];
    for (const b of batches) batchRecords.push(await this.batchRecord(b));

    const lotKey = lotKeyOf(lot);
    const body = {
      schema: 'ausline.certificate/v1' as const,
      kind,
      lot: { lotKey, specCode: lot.specCode, heatNumber: lot.heatNumber, date: lot.date, definition: LOT_DEFINITION },
      product: { specId: spec.id, code: spec.code, name: spec.name, material: spec.material, description: spec.description },
      specVersions: versions.map((v) => ({
        id: v.id,
        version: v.version,
        status: v.status,
        createdBy: v.createdBy,
        approvedBy: v.approvedBy,
        approvedAt: iso(v.approvedAt),
        chemistryLimits: v.chemistryLimits,
        processWindow: v.processWindow,
        acceptanceCriteria: v.acceptanceCriteria,
      })),
      heat: {
        id: heat.id,
        heatNumber: heat.heatNumber,
        material: heat.material,
        grade: heat.grade,
        source: heat.source,
        revision: heat.revision,
        chemistryWtPct: heat.chemistryWtPct,
        revisedAt: iso(latestRevision?.changedAt),
        revisedBy: latestRevision?.changedBy ?? null,
        revisionReason: latestRevision?.reason ?? null,
        chemistryCheck,
      },
      batches: batchRecords,
      summary: this.summary(batchRecords),
    };
    return { ...body, recordDigest: createHash('sha256').update(canonicalJson(body)).digest('hex') };
  }

  private summary(records: Awaited<ReturnType<CertificatesService['batchRecord']>>[]) {
    const statuses = records.map((r) => r.release.status);
    const order = ['scrap', 'retreat', 'failed-acceptance', 'pending-disposition', 'in-process', 'accepted-use-as-is', 'conforming-under-concession', 'conforming'];
    const worst = statuses.sort((a, b) => order.indexOf(a) - order.indexOf(b))[0] ?? 'conforming';
    const hardness = records.flatMap((r) => r.acceptance.filter((c) => c.criterion === 'hardness').map((c) => c.measured));
    const withReadings = hardness.filter((h) => typeof h.readings === 'number' && (h.readings as number) > 0);
    const n = withReadings.reduce((s, h) => s + (h.readings as number), 0);
    return {
      batches: records.length,
      partCount: records.reduce((s, r) => s + r.partCount, 0),
      weightKg: Math.round(records.reduce((s, r) => s + r.weightKg, 0) * 1000) / 1000,
      release: worst,
      concessions: [...new Set(records.flatMap((r) => r.release.concessions))].sort(),
      hardness: withReadings.length
        ? {
            scale: withReadings[0].scale,
            readings: n,
            min: Math.min(...withReadings.map((h) => h.min as number)),
            max: Math.max(...withReadings.map((h) => h.max as number)),
            mean: Math.round((withReadings.reduce((s, h) => s + (h.mean as number) * (h.readings as number), 0) / n) * 10) / 10,
          }
        : null,
      deviations: records.reduce((s, r) => s + r.deviations.length, 0),
      modelVersions: [...new Set(records.map((r) => r.prediction?.modelVersion).filter((v): v is string => typeof v === 'string'))].sort(),
    };
  }

  private async batchRecord(b: BatchRow) {
    const window = ProcessWindow.safeParse(b.specVersion.processWindow);
    const criteria = AcceptanceCriteria.safeParse(b.specVersion.acceptanceCriteria);
    const eventAt = (k: string) => b.loadEvents.find((e) => e.kind === k);
    const complete = eventAt('OUT_OF_BATH') !== undefined;

    let process = null;
    if (window.success) {
      const loaded = await this.inputs.load(b.id, { leadMs: window.data.maxChannelGapS * 1000 });
      const into = eventAt('INTO_BATH');
      const bathChannels = into
        ? await this.prisma.channel.findMany({ where: { equipmentId: into.equipmentId, role: 'BATH_TC', quantity: 'TEMPERATURE_C' }, select: { id: true } })
        : [];
      if (loaded) {
        // A finished load is judged at its end so that the record does not depend on when it is printed.
        const nowMs = complete ? eventAt('OUT_OF_BATH')!.at.getTime() : Date.now();
        process = processRecord({ batchId: b.id, window: window.data, events: loaded.events, channels: loaded.channels, bathChannelIds: into ? bathChannels.map((c) => c.id) : null, nowMs });
      }
    }
    const equipmentOf = (k: string) => {
      const e = eventAt(k)?.equipment;
      return e ? { id: e.id, code: e.code, name: e.name } : null;
    };

    const p = b.predictions[0] ?? null;
    const result = p && isRecord(p.result) ? p.result : null;
    const bands = result && isRecord(result.bands) ? result.bands : {};
    const props = result && isRecord(result.properties) ? result.properties : {};
    const prediction = p
      ? {
          id: p.id,
          version: p.version,
          modelVersion: p.modelVersion,
          phase: p.phase,
          inputDigest: p.inputDigest,
          watermark: iso(p.watermark),
          bands: Object.fromEntries(CERTIFICATE_BANDS.map((q) => [q, (bands as Record<string, unknown>)[q] ?? (props as Record<string, unknown>)[q] ?? null])),
          overall: result?.overall ?? null,
          verdicts: Array.isArray(result?.verdicts) ? result!.verdicts : [],
          hold: result?.hold ?? null,
          adiGrade: (props as Record<string, unknown>).adiGrade ?? null,
          // The product's lab calibration that corrected these bands (null: none in force, the model's own bands).
          labCalibration: isRecord(result?.basis) ? ((result!.basis as Record<string, unknown>).labCalibration ?? null) : null,
        }
      : null;

    const labs = [...b.labResults].sort(
      (x, y) => (x.measuredAt ?? x.postedAt).getTime() - (y.measuredAt ?? y.postedAt).getTime() || (x.externalRef < y.externalRef ? -1 : x.externalRef > y.externalRef ? 1 : 0) || (x.id < y.id ? -1 : 1),
    );
    const checks = acceptanceChecks(criteria.success ? criteria.data : null, labs);
    const deviations = [...b.deviations].sort((x, y) => x.openedAt.getTime() - y.openedAt.getTime() || (x.id < y.id ? -1 : 1));
    const release = batchRelease({
      complete,
      checks,
      deviations: deviations.map((d) => ({ rule: d.rule, severity: d.severity, status: d.status, disposition: d.disposition, dispositionRef: d.dispositionRef })),
    });
    return {
      id: b.id,
      code: b.code,
      lotKey: this.lotOf(b).lotKey,
      line: { id: b.line.id, code: b.line.code, name: b.line.name },
      equipment: { furnace: equipmentOf('CHARGED') ?? equipmentOf('OUT_OF_FURNACE'), bath: equipmentOf('INTO_BATH') ?? equipmentOf('OUT_OF_BATH') },
      specVersion: { id: b.specVersion.id, version: b.specVersion.version },
      heatRevisionAtPrediction: isRecord(result?.basis) && isRecord((result!.basis as Record<string, unknown>).inputs) ? (((result!.basis as Record<string, unknown>).inputs as Record<string, unknown>).heatRevision ?? null) : null,
      partCount: b.partCount,
      weightKg: b.weightKg,
      section: { shape: b.sectionShape, sizeMm: b.sectionSizeMm },
      scheduledHoldMin: b.scheduledHoldMin,
      status: b.status,
      complete,
      process,
      prediction,
      labResults: labs.map((l) => ({
        id: l.id,
        kind: l.kind,
        externalRef: l.externalRef,
        testStandard: l.testStandard,
        scale: l.scale,
        values: l.values,
        measuredAt: iso(l.measuredAt),
        postedAt: iso(l.postedAt),
        againstPrediction: b.labComparisons
          .filter((c) => c.labResultId === l.id)
          .sort((x, y) => (x.quantity < y.quantity ? -1 : 1))
          .map((c) => ({ quantity: c.quantity, measured: c.measured, band: c.bandP05 === null ? null : { p05: c.bandP05, p50: c.bandP50, p95: c.bandP95 }, calibrationApplied: c.calibrationApplied, verdict: c.verdict })),
      })),
      acceptance: checks,
      deviations: deviations.map((d) => ({
        id: d.id,
        rule: d.rule,
        severity: d.severity,
        status: d.status,
        message: d.message,
        openedAt: iso(d.openedAt),
        conditionPresent: d.conditionPresent,
        acknowledged: d.acknowledgedAt ? { at: iso(d.acknowledgedAt), by: d.acknowledgedBy } : null,
        disposition: d.disposition
          ? { disposition: d.disposition, reason: d.dispositionReason, permit: d.dispositionRef, signer: d.signer, signedBy: d.dispositionedBy, at: iso(d.dispositionedAt) }
          : null,
        closed: d.closedAt ? { at: iso(d.closedAt), by: d.closedBy } : null,
        clearedAt: iso(d.clearedAt),
        audit: d.audits.map((a) => ({ at: iso(a.at), action: a.action, actor: a.actor, actorKind: a.actorKind, fromStatus: a.fromStatus, toStatus: a.toStatus, reason: a.reason, disposition: a.disposition })),
      })),
      release,
    };
  }
}
