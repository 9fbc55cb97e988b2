import { Body, Controller, Get, HttpCode, Param, Post, Query } from '@nestjs/common';
import { ApiOperation, ApiTags } from '@nestjs/swagger';
import { DeviationAcknowledge, DeviationClose, DeviationDisposition, DeviationQuery, type Page } from '@ausline/contracts';
import type { Deviation, DeviationListItem, DeviationWithAudit } from '@ausline/db';
import { Access, ANY_ROLE, CurrentPrincipal, type Principal } from '../auth/access.js';
import { ApiErrors, ZodBody, ZodQuery } from '../http/openapi.js';
import { parseBody, parseQuery, UuidParam } from '../http/validation.js';
import { DeviationsService } from './deviations.service.js';

@ApiTags('deviations')
@Controller()
export class DeviationsController {
  constructor(private readonly deviations: DeviationsService) {}

  @Get('deviations')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({
    summary: 'Deviations, newest first (openedAt), filtered by time range, line, batch, product spec, severity, status and rule; paged by cursor',
    description:
      'severity, status and rule take comma-separated lists (status=OPEN,ACKNOWLEDGED). `from` is inclusive, `to` exclusive. ' +
      'The reply has the page `items`, the `total` matching the filters, and `nextCursor` (null on the last page).',
  })
  @ZodQuery(DeviationQuery)
  @ApiErrors(400)
  list(@Query() query: unknown): Promise<Page<DeviationListItem>> {
    return this.deviations.list(parseQuery(DeviationQuery, query));
  }

  @Get('deviations/:id')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'One deviation with its whole audit trail (who, when, from, to, why), oldest entry first' })
  @ApiErrors(400, 404)
  get(@Param('id', UuidParam) id: string): Promise<DeviationWithAudit> {
    return this.deviations.get(id);
  }

  @Post('deviations/:id/acknowledge')
  @HttpCode(200)
  @Access({ roles: ['METALLURGIST', 'QUALITY'] })
  @ApiOperation({ summary: 'Acknowledge an OPEN deviation (METALLURGIST or QUALITY); 409 from any other status' })
  @ZodBody(DeviationAcknowledge)
  @ApiErrors(400, 404, 409)
  acknowledge(@Param('id', UuidParam) id: string, @Body() body: unknown, @CurrentPrincipal() principal: Principal): Promise<Deviation> {
    const input = parseBody(DeviationAcknowledge, body ?? {});
    return this.deviations.act(id, { type: 'ACKNOWLEDGE', ...(input.reason ? { reason: input.reason } : {}) }, principal);
  }

  @Post('deviations/:id/disposition')
  @HttpCode(200)
  @Access({ roles: ['QUALITY'] })
  @ApiOperation({
    summary: 'Disposition an OPEN or ACKNOWLEDGED deviation (QUALITY): USE_AS_IS, RETREAT, SCRAP or CONCESSION, with a reason; the signer is recorded',
    description: 'A CONCESSION needs dispositionRef, the customer permit number (IATF 16949 8.7.1.1).',
  })
  @ZodBody(DeviationDisposition)
  @ApiErrors(400, 404, 409)
  disposition(@Param('id', UuidParam) id: string, @Body() body: unknown, @CurrentPrincipal() principal: Principal): Promise<Deviation> {
    const input = parseBody(DeviationDisposition, body);
    return this.deviations.act(
      id,
      { type: 'DISPOSITION', disposition: input.disposition, reason: input.reason, ...(input.dispositionRef ? { dispositionRef: input.dispositionRef } : {}) },
      principal,
    );
  }

  @Post('deviations/:id/close')
  @HttpCode(200)
  @Access({ roles: ['QUALITY'] })
  @ApiOperation({ summary: 'Close a DISPOSITIONED deviation (QUALITY) with a reason' })
  @ZodBody(DeviationClose)
  @ApiErrors(400, 404, 409)
  close(@Param('id', UuidParam) id: string, @Body() body: unknown, @CurrentPrincipal() principal: Principal): Promise<Deviation> {
    const input = parseBody(DeviationClose, body);
    return this.deviations.act(id, { type: 'CLOSE', reason: input.reason }, principal);
  }
}
