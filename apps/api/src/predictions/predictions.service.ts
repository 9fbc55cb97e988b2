import { Injectable } from '@nestjs/common';
import {
  AcceptanceCriteria,
  ChemistryLimits,
  ProcessWindow,
  type HeatAdvice,
  type HeatAdviceRequest,
  type HeatDiagram,
  type HeatDiagramQuery,
  type PredictionRow,
} from '@ausline/contracts';
import { adviseHeatSteps, digestOf, heatDiagram, PredictionInputError, type HeatAdviceInput } from '@ausline/compliance';
import { setImmediate as nextTurn } from 'node:timers/promises';
import { loadProductCalibrations, type PrismaClient } from '@ausline/db';
import { notFound, unprocessable } from '../http/errors.js';
import { InjectPrisma } from '../prisma.provider.js';

/** Ensemble of the heat advice unless the request says otherwise: the batches' production size, same seed. */
export const DEFAULT_ADVICE_UNCERTAINTY = { samples: 1000, seed: 1 } as const;
/** Advice results kept per process (the same heat revision, spec version and inputs give the same advice). */
const ADVICE_CACHE_SIZE = 64;

type Section = HeatAdviceInput['section'];

/**
 * Predictions read side and the heat advice / diagram. The stored predictions come from the worker; the advice and
 * the diagram are computed here from the heat and the spec with the same pure code the worker uses
 * (libs/compliance predictive), deterministic for a given input (seeded ensemble), so results are cached.
 */
@Injectable()
export class PredictionsService {
  private readonly adviceCache = new Map<string, HeatAdvice>();

  constructor(@InjectPrisma() private readonly prisma: PrismaClient) {}

  /** Every stored prediction of a batch, newest version first, without the engine state. */
  async forBatch(batchId: string): Promise<{ batchId: string; items: PredictionRow[] }> {
    const batch = await this.prisma.batch.findUnique({ where: { id: batchId }, select: { id: true } });
    if (!batch) throw notFound(`batch ${batchId} not found`);
    const rows = await this.prisma.prediction.findMany({ where: { batchId }, orderBy: { version: 'desc' }, omit: { state: true } });
    return {
      batchId,
      items: rows.map((r) => ({
        id: r.id,
        batchId: r.batchId,
        version: r.version,
        modelVersion: r.modelVersion,
        inputDigest: r.inputDigest,
        watermark: r.watermark ? r.watermark.toISOString() : null,
        phase: r.phase,
        milestone: (r.milestone ?? null) as PredictionRow['milestone'],
        result: r.result as PredictionRow['result'],
        createdAt: r.createdAt.toISOString(),
        updatedAt: r.updatedAt.toISOString(),
      })),
    };
  }

  async advice(heatId: string, request: HeatAdviceRequest): Promise<HeatAdvice> {
    const heat = await this.heat(heatId);
    const spec = await this.specVersion(request.specId, request.specVersionId, heat.material);
    const section = request.section ? { ...request.section, source: 'request' } : await this.sectionFor(heat.id, spec);
    const lineHeatTransfer = await this.lineHeatTransfer(request.lineId, heat.id, spec.id);
    const input: HeatAdviceInput = {
      heat: { id: heat.id, heatNumber: heat.heatNumber, revision: heat.revision, material: heat.material, chemistryWtPct: numbersOf(heat.chemistryWtPct) },
      spec,
      section,
      agitation: request.agitation ?? 'moderate',
      lineHeatTransfer,
      uncertainty: request.uncertainty ?? { ...DEFAULT_ADVICE_UNCERTAINTY },
      // The product's lab calibrations in force correct the advice's bands as they do the batches' (cache key too).
      labCalibration: await loadProductCalibrations(this.prisma, spec.id),
    };
    return this.cachedAdvice(input);
  }

  async diagram(heatId: string, query: HeatDiagramQuery): Promise<HeatDiagram> {
    const heat = await this.heat(heatId);
    const spec = query.specId || query.specVersionId ? await this.specVersion(query.specId, query.specVersionId, heat.material) : null;
    const chemistryWtPct = numbersOf(heat.chemistryWtPct);
    let out: HeatDiagram;
    try {
      out = heatDiagram({
        heat: { id: heat.id, material: heat.material, chemistryWtPct },
        fromC: query.fromC,
        toC: query.toC,
        stepC: query.stepC,
        ...(spec ? { austenitizeTempC: (spec.processWindow.austenitize.minTempC + spec.processWindow.austenitize.maxTempC) / 2 } : {}),
      });
    } catch (error) {
      throw this.unpredictable(error);
    }
    if (spec) {
      const section = await this.sectionFor(heat.id, spec).catch(() => null);
      if (section) {
        const advice = await this.cachedAdvice({
          heat: { id: heat.id, heatNumber: heat.heatNumber, revision: heat.revision, material: heat.material, chemistryWtPct },
          spec,
          section,
          agitation: 'moderate',
          lineHeatTransfer: await this.lineHeatTransfer(undefined, heat.id, spec.id),
          uncertainty: { ...DEFAULT_ADVICE_UNCERTAINTY },
          labCalibration: await loadProductCalibrations(this.prisma, spec.id),
        });
        if (advice.window) {
          out.advisedBath = {
            minTempC: advice.window.minTempC,
            maxTempC: advice.window.maxTempC,
            minHoldMin: advice.window.minHoldMin,
            reasons: [...(advice.edges.lower?.reasons ?? []), ...(advice.edges.upper?.reasons ?? [])],
          };
        } else out.warnings.push(...advice.warnings);
      } else out.warnings.push("advisedBath: the spec names no section and the heat has no batch on it; POST /v1/heats/:id/advice with a section");
    }
    return out;
  }

  private async cachedAdvice(input: HeatAdviceInput): Promise<HeatAdvice> {
    const key = digestOf(input);
    const hit = this.adviceCache.get(key);
    if (hit) {
      this.adviceCache.delete(key);
      this.adviceCache.set(key, hit);
      return hit;
    }
    let advice: HeatAdvice;
    try {
      // One candidate temperature per turn of the event loop: other requests are served meanwhile.
      const steps = adviseHeatSteps(input);
      for (;;) {
        const next = steps.next();
        if (next.done) {
          advice = next.value;
          break;
        }
        await nextTurn();
      }
    } catch (error) {
      throw this.unpredictable(error);
    }
    this.adviceCache.set(key, advice);
    if (this.adviceCache.size > ADVICE_CACHE_SIZE) this.adviceCache.delete(this.adviceCache.keys().next().value as string);
    return advice;
  }

  private unpredictable(error: unknown): Error {
    if (error instanceof PredictionInputError) {
      return unprocessable(
        `The heat cannot be predicted: ${error.issues[0]}`,
        error.issues.map((m) => ({ path: m.split(':')[0]!.replace(/^heat /, 'heat.'), message: m.slice(m.indexOf(':') + 1).trim() })),
      );
    }
    return error instanceof Error ? error : new Error(String(error));
  }

  private async heat(heatId: string) {
    const heat = await this.prisma.heat.findUnique({ where: { id: heatId } });
    if (!heat) throw notFound(`heat ${heatId} not found`);
    return heat;
  }

  /** The spec version asked for (or the approved version in force of a spec), its JSON validated. */
  private async specVersion(specId: string | undefined, specVersionId: string | undefined, heatMaterial: 'STEEL' | 'DUCTILE_IRON'): Promise<HeatAdviceInput['spec']> {
    const row = specVersionId
      ? await this.prisma.productSpecVersion.findUnique({ where: { id: specVersionId }, include: { spec: true } })
      : await this.prisma.productSpecVersion.findFirst({ where: { specId, status: 'APPROVED' }, orderBy: { version: 'desc' }, include: { spec: true } });
    const field = specVersionId ? 'specVersionId' : 'specId';
    if (!row) {
      if (specId && (await this.prisma.productSpec.count({ where: { id: specId } }))) {
        throw unprocessable(`product spec ${specId} has no approved version`, [{ path: 'specId', message: 'no approved version: approve one or give specVersionId' }]);
      }
      throw notFound(`${specVersionId ? 'product spec version' : 'product spec'} ${specVersionId ?? specId} not found`);
    }
    if (row.spec.material !== heatMaterial) {
      throw unprocessable(`the spec is for ${row.spec.material}, the heat is ${heatMaterial}`, [{ path: field, message: `spec material ${row.spec.material} does not match the heat's ${heatMaterial}` }]);
    }
    const processWindow = ProcessWindow.safeParse(row.processWindow);
    const criteria = AcceptanceCriteria.safeParse(row.acceptanceCriteria);
    const limits = ChemistryLimits.safeParse(row.chemistryLimits);
    if (!processWindow.success || !criteria.success || !limits.success) {
      throw unprocessable(`product spec version ${row.id} holds a payload that no longer validates`, [{ path: field, message: 'stored spec payload invalid' }]);
    }
    return {
      id: row.specId,
      versionId: row.id,
      version: row.version,
      processWindow: processWindow.data,
      acceptanceCriteria: criteria.data,
      chemistryLimits: limits.data,
    };
  }

  /** The spec's own section, else the section of the heat's latest batch on this spec. */
  private async sectionFor(heatId: string, spec: HeatAdviceInput['spec']): Promise<Section> {
    const own = spec.acceptanceCriteria.prediction?.section;
    if (own) return { ...own, source: 'spec' };
    const batch = await this.prisma.batch.findFirst({
      where: { heatId, specVersion: { specId: spec.id } },
      orderBy: { createdAt: 'desc' },
      select: { code: true, sectionShape: true, sectionSizeMm: true },
    });
    if (!batch) {
      throw unprocessable('no section to advise for: the spec names none and the heat has no batch on this spec', [
        { path: 'section', message: 'required ({"shape": "CYLINDER", "sizeMm": 24}) when the spec has no prediction.section' },
      ]);
    }
    return { shape: batch.sectionShape, sizeMm: batch.sectionSizeMm, source: `batch ${batch.code}` };
  }

  /** The line's calibrated bath heat transfer: the line asked for, else that of the heat's latest batch on the spec. */
  private async lineHeatTransfer(lineId: string | undefined, heatId: string, specId: string): Promise<Record<string, number> | null> {
    if (lineId) {
      const line = await this.prisma.line.findUnique({ where: { id: lineId }, select: { hCoefficientByAgitation: true } });
      if (!line) throw unprocessable(`line ${lineId} not found`, [{ path: 'lineId', message: 'no such line' }]);
      return line.hCoefficientByAgitation ? numbersOf(line.hCoefficientByAgitation) : null;
    }
    const batch = await this.prisma.batch.findFirst({
      where: { heatId, specVersion: { specId } },
      orderBy: { createdAt: 'desc' },
      select: { line: { select: { hCoefficientByAgitation: true } } },
    });
    return batch?.line.hCoefficientByAgitation ? numbersOf(batch.line.hCoefficientByAgitation) : null;
  }
}

function numbersOf(json: unknown): Record<string, number> {
  const out: Record<string, number> = {};
  if (json && typeof json === 'object' && !Array.isArray(json)) {
    for (const [k, v] of Object.entries(json as Record<string, unknown>)) if (typeof v === 'number' && Number.isFinite(v)) out[k] = v;
  }
  return out;
}
