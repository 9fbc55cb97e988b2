import { Injectable } from '@nestjs/common';
import type { CreateApiKeyRequest } from '@ausline/contracts';
import type { PrismaClient } from '@ausline/db';
import { newApiKey } from '../auth/secrets.js';
import { badRequest, conflict, notFound } from '../http/errors.js';
import { InjectPrisma } from '../prisma.provider.js';
import { forgetCachedApiKeys } from '../auth/api-key-cache.js';

export interface ApiKeyView {
  id: string;
  prefix: string;
  label: string;
  scope: 'EQUIPMENT' | 'LAB';
  equipmentIds: string[];
  createdAt: Date;
  revokedAt: Date | null;
}

export interface CreatedApiKey extends ApiKeyView {
  /** '<prefix>.<secret>': shown in this reply only; the service keeps just the secret's hash. */
  key: string;
}

const keyInclude = { equipment: { select: { equipmentId: true }, orderBy: { equipmentId: 'asc' } } } as const;

function view(row: {
  id: string;
  prefix: string;
  label: string;
  scope: 'EQUIPMENT' | 'LAB';
  createdAt: Date;
  revokedAt: Date | null;
  equipment: Array<{ equipmentId: string }>;
}): ApiKeyView {
  return {
    id: row.id,
    prefix: row.prefix,
    label: row.label,
    scope: row.scope,
    equipmentIds: row.equipment.map((e) => e.equipmentId),
    createdAt: row.createdAt,
    revokedAt: row.revokedAt,
  };
}

@Injectable()
export class ApiKeysService {
  constructor(@InjectPrisma() private readonly prisma: PrismaClient) {}

  /**
   * Creates a key and returns it once. Labels are unique among keys not revoked: a retried create
   * answers 409 naming the existing key (whose secret was in the lost reply: revoke it and create
   * again) rather than leaving a second live key nobody knows about.
   */
  async create(input: CreateApiKeyRequest): Promise<CreatedApiKey> {
    const equipmentIds = [...new Set(input.equipmentIds ?? [])];
    const { key, prefix, secretHash } = newApiKey();
    const row = await this.prisma.$transaction(async (tx) => {
      // Serialise creates per label so two concurrent retries cannot both pass the check below.
      await tx.$executeRaw`SELECT pg_advisory_xact_lock(hashtext(${'api-key-label:' + input.label}))`;
      const live = await tx.apiKey.findFirst({ where: { label: input.label, revokedAt: null }, select: { id: true, prefix: true } });
      if (live) {
        throw conflict(`An active API key labelled '${input.label}' exists (prefix ${live.prefix}); revoke it first or choose another label`, [
          { path: 'label', message: 'already used by an active key' },
        ]);
      }
      if (equipmentIds.length > 0) {
        const found = await tx.equipment.findMany({ where: { id: { in: equipmentIds } }, select: { id: true } });
        const known = new Set(found.map((e) => e.id));
        const issues = (input.equipmentIds ?? [])
          .map((id, index) => ({ id, index }))
          .filter(({ id }) => !known.has(id))
          .map(({ id, index }) => ({ path: `equipmentIds.${index}`, message: `no equipment with id ${id}` }));
        if (issues.length > 0) throw badRequest(`Invalid request body: ${issues[0]!.path}: ${issues[0]!.message}`, issues);
      }
      return tx.apiKey.create({
        data: {
          prefix,
          secretHash,
          label: input.label,
          scope: input.scope,
          equipment: { create: equipmentIds.map((equipmentId) => ({ equipmentId })) },
        },
        include: keyInclude,
      });
    });
    return { ...view(row), key };
  }

  async list(): Promise<ApiKeyView[]> {
    const rows = await this.prisma.apiKey.findMany({ orderBy: { createdAt: 'asc' }, include: keyInclude });
    return rows.map(view);
  }

  /** Revokes a key (from the next request on it is unknown). Repeating it keeps the first revocation time. */
  async revoke(id: string): Promise<ApiKeyView> {
    await this.prisma.apiKey.updateMany({ where: { id, revokedAt: null }, data: { revokedAt: new Date() } });
    forgetCachedApiKeys(); // other api instances forget on the database's notification
    const row = await this.prisma.apiKey.findUnique({ where: { id }, include: keyInclude });
    if (!row) throw notFound(`No API key with id ${id}`);
    return view(row);
  }
}
