import { Injectable } from '@nestjs/common';
import type { ProductSpecCreate, ProductSpecVersionInput } from '@ausline/contracts';
import { Prisma, type PrismaClient, type ProductSpec, type ProductSpecVersion } from '@ausline/db';
import { conflict, notFound, type ErrorIssue } from '../http/errors.js';
import { InjectPrisma } from '../prisma.provider.js';

export interface SpecWithVersions extends ProductSpec {
  versions: ProductSpecVersion[];
}

export interface SpecCreateResult {
  outcome: 'created' | 'unchanged';
  spec: ProductSpec;
}

/**
 * Product specs and their versions. A version starts as DRAFT; a QUALITY user approves it, which
 * supersedes the version approved before. New batches take the latest APPROVED version at creation
 * and keep it (the version in force for that load), so approving a new version never changes the
 * rules of loads already made.
 */
@Injectable()
export class SpecsService {
  constructor(@InjectPrisma() private readonly prisma: PrismaClient) {}

  /** Idempotent by code: the same spec again is a no-op; another name/material under the code is 409. */
  async create(input: ProductSpecCreate): Promise<SpecCreateResult> {
    const attempt = async (): Promise<SpecCreateResult> => {
      const existing = await this.prisma.productSpec.findUnique({ where: { code: input.code } });
      if (!existing) {
        const spec = await this.prisma.productSpec.create({
          data: { code: input.code, name: input.name, material: input.material, description: input.description ?? null },
        });
        return { outcome: 'created', spec };
      }
      const issues: ErrorIssue[] = [];
      if (existing.name !== input.name) issues.push({ path: 'name', message: `stored '${existing.name}', sent '${input.name}'` });
      if (existing.material !== input.material) issues.push({ path: 'material', message: `stored ${existing.material}, sent ${input.material}` });
      if ((existing.description ?? null) !== (input.description ?? null)) issues.push({ path: 'description', message: 'differs from the stored description' });
      if (issues.length > 0) throw conflict(`Product spec ${input.code} already exists with other values`, issues);
      return { outcome: 'unchanged', spec: existing };
    };
    try {
      return await attempt();
    } catch (error) {
      if (error instanceof Prisma.PrismaClientKnownRequestError && error.code === 'P2002') return attempt();
      throw error;
    }
  }

  /** Adds the next version as DRAFT. */
  async addVersion(specId: string, input: ProductSpecVersionInput, actor: string): Promise<ProductSpecVersion> {
    for (let attempt = 0; ; attempt++) {
      try {
        return await this.prisma.$transaction(async (tx) => {
          const spec = await tx.productSpec.findUnique({ where: { id: specId }, select: { id: true } });
          if (!spec) throw notFound(`Product spec ${specId} does not exist`);
          const last = await tx.productSpecVersion.findFirst({ where: { specId }, orderBy: { version: 'desc' }, select: { version: true } });
          return tx.productSpecVersion.create({
            data: {
              specId,
              version: (last?.version ?? 0) + 1,
              status: 'DRAFT',
              createdBy: actor,
              chemistryLimits: input.chemistryLimits as Prisma.InputJsonValue,
              processWindow: input.processWindow as Prisma.InputJsonValue,
              acceptanceCriteria: input.acceptanceCriteria as Prisma.InputJsonValue,
            },
          });
        });
      } catch (error) {
        // Two drafts at once take the same number: the loser tries the next one.
        if (attempt < 3 && error instanceof Prisma.PrismaClientKnownRequestError && error.code === 'P2002') continue;
        throw error;
      }
    }
  }

  /**
   * Approves a DRAFT (idempotent: approving the approved version again is a no-op). Only a version
   * newer than the one in force can be approved; the one in force becomes SUPERSEDED.
   */
  async approve(specId: string, version: number, actor: string): Promise<ProductSpecVersion> {
    return this.prisma.$transaction(async (tx) => {
      // Lock the spec row: approvals of one spec are serialized.
      const locked = await tx.$queryRaw<Array<{ id: string }>>`SELECT "id" FROM "ProductSpec" WHERE "id" = ${specId}::uuid FOR UPDATE`;
      if (!locked[0]) throw notFound(`Product spec ${specId} does not exist`);
      const target = await tx.productSpecVersion.findUnique({ where: { specId_version: { specId, version } } });
      if (!target) throw notFound(`Product spec ${specId} has no version ${version}`);
      if (target.status === 'APPROVED') return target;
      if (target.status === 'SUPERSEDED') {
        throw conflict(`Version ${version} is SUPERSEDED; approve a newer draft instead`, [{ path: 'params.version', message: 'status is SUPERSEDED' }]);
      }
      const inForce = await tx.productSpecVersion.findFirst({ where: { specId, status: 'APPROVED' }, orderBy: { version: 'desc' } });
      if (inForce && inForce.version > version) {
        throw conflict(`Version ${version} is older than version ${inForce.version}, which is in force`, [
          { path: 'params.version', message: `older than the approved version ${inForce.version}` },
        ]);
      }
      await tx.productSpecVersion.updateMany({ where: { specId, status: 'APPROVED' }, data: { status: 'SUPERSEDED' } });
      return tx.productSpecVersion.update({
        where: { id: target.id },
        data: { status: 'APPROVED', approvedBy: actor, approvedAt: new Date() },
      });
    });
  }

  async list(): Promise<SpecWithVersions[]> {
    return this.prisma.productSpec.findMany({ orderBy: { code: 'asc' }, include: { versions: { orderBy: { version: 'asc' } } } });
  }

  async get(id: string): Promise<SpecWithVersions> {
    const spec = await this.prisma.productSpec.findUnique({ where: { id }, include: { versions: { orderBy: { version: 'asc' } } } });
    if (!spec) throw notFound(`Product spec ${id} does not exist`);
    return spec;
  }
}
