import { Injectable } from '@nestjs/common';
import type { DeviationQuery, Page } from '@ausline/contracts';
import type { DeviationAction, DeviationActor } from '@ausline/compliance';
import { DeviationRepository, type Deviation, type DeviationListItem, type DeviationWithAudit, type PrismaClient } from '@ausline/db';
import type { Principal } from '../auth/access.js';
import { ApiError, badRequest, conflict, forbidden, notFound } from '../http/errors.js';
import { InjectPrisma } from '../prisma.provider.js';
import { LiveEventsPublisher } from '../stream/live-events.publisher.js';
import { decodeCursor, encodeCursor } from './cursor.js';

/**
 * Deviation queries and the people's side of the lifecycle. The lifecycle itself (who may do what
 * from which status) is libs/compliance's applyDeviationAction; DeviationRepository (libs/db) applies
 * it under a row lock and writes the audit entry in the same transaction. Here only the mapping to
 * HTTP: refused for the role -> 403, not allowed from the current status -> 409, invalid -> 400.
 */
@Injectable()
export class DeviationsService {
  private readonly repository: DeviationRepository;

  constructor(
    @InjectPrisma() private readonly prisma: PrismaClient,
    private readonly events: LiveEventsPublisher,
  ) {
    this.repository = new DeviationRepository(prisma);
  }

  async list(query: DeviationQuery): Promise<Page<DeviationListItem>> {
    const page = await this.repository.list({
      ...(query.from ? { from: new Date(query.from) } : {}),
      ...(query.to ? { to: new Date(query.to) } : {}),
      ...(query.lineId ? { lineId: query.lineId } : {}),
      ...(query.batchId ? { batchId: query.batchId } : {}),
      ...(query.productSpecId ? { productSpecId: query.productSpecId } : {}),
      ...(query.severity ? { severity: query.severity } : {}),
      ...(query.status ? { status: query.status } : {}),
      ...(query.rule ? { rule: query.rule } : {}),
      limit: query.limit,
      ...(query.cursor ? { after: decodeCursor(query.cursor) } : {}),
    });
    return { items: page.items, total: page.total, nextCursor: page.next ? encodeCursor(page.next.at, page.next.id) : null };
  }

  async get(id: string): Promise<DeviationWithAudit> {
    const deviation = await this.repository.get(id);
    if (!deviation) throw notFound(`Deviation ${id} does not exist`);
    return deviation;
  }

  async act(id: string, action: DeviationAction, principal: Principal): Promise<Deviation> {
    if (principal.kind !== 'user') throw forbidden('Deviation actions are signed by a person, not an API key');
    // The signer printed on certificates is the person's name as registered, not their login.
    const user = await this.prisma.user.findUnique({ where: { id: principal.userId }, select: { displayName: true } });
    const actor: DeviationActor = {
      kind: 'user',
      userId: principal.userId,
      label: principal.email,
      ...(user?.displayName ? { displayName: user.displayName } : {}),
      roles: principal.roles,
    };
    const result = await this.repository.transition(id, action, actor);
    if (!result.ok) {
      switch (result.code) {
        case 'not-found':
          throw notFound(`Deviation ${id} does not exist`);
        case 'forbidden':
          throw forbidden(capitalize(result.reason));
        case 'conflict': {
          const current = await this.repository.get(id);
          throw conflict(`${capitalize(result.reason)} (current status ${current?.status ?? 'unknown'})`, [
            { path: 'status', message: `current status is ${current?.status ?? 'unknown'}` },
          ]);
        }
        case 'invalid':
          throw badRequest(capitalize(result.reason), [{ path: 'body', message: result.reason }]);
        default:
          throw new ApiError(400, result.reason);
      }
    }
    const { change } = result;
    await this.events.publish({
      type: 'deviation.changed',
      deviationId: change.deviationId,
      batchId: change.batchId,
      lineId: change.lineId,
      rule: change.rule,
      status: change.status,
      at: new Date().toISOString(),
    });
    return result.deviation;
  }
}

function capitalize(text: string): string {
  return text.charAt(0).toUpperCase() + text.slice(1);
}
