import { Body, Controller, Get, Param, Post, Query, Res } from '@nestjs/common';
import { ApiOperation, ApiTags } from '@nestjs/swagger';
import { BatchCreate, BatchQuery, LabResultInput, LoadEventInput, type Page } from '@ausline/contracts';
import { Access, ANY_ROLE, CurrentPrincipal, type Principal } from '../auth/access.js';
import { ApiErrors, ZodBody, ZodQuery } from '../http/openapi.js';
import { parseBody, parseQuery, UuidParam } from '../http/validation.js';
import { BatchQueriesService, type BatchDetail, type BatchListItem } from '../queries/batch-queries.service.js';
import { BatchesService, type BatchCreateResult, type LabResultResult, type LoadEventResult } from './batches.service.js';
import { Idempotent } from './idempotency.js';
import { countIngest } from './ingest-metrics.js';

interface StatusSettable {
  status(code: number): unknown;
}

@ApiTags('batches')
@Controller()
export class BatchesController {
  constructor(
    private readonly batches: BatchesService,
    private readonly queries: BatchQueriesService,
  ) {}

  @Post('batches')
  @Access({ roles: ['ADMIN', 'METALLURGIST'], keys: 'EQUIPMENT' })
  @Idempotent('batch')
  @ApiOperation({
    summary: 'Create a batch (one furnace load): line, heat, product spec, part count, weight, section',
    description:
      'References by id or by the plant\'s code (lineCode, heatNumber, productSpecCode). The spec version in force is the latest APPROVED ' +
      'version at creation and stays with the batch. Idempotent by code: 201 created, 200 when the same batch is posted again, 409 naming ' +
      'the differing fields otherwise. An EQUIPMENT key may create batches only on the line of a furnace it is scoped to.',
  })
  @ZodBody(BatchCreate)
  @ApiErrors(400, 409, 422)
  async create(
    @Body() body: unknown,
    @CurrentPrincipal() principal: Principal,
    @Res({ passthrough: true }) res: StatusSettable,
  ): Promise<BatchCreateResult> {
    const result = await countIngest('batch', () => this.batches.create(parseBody(BatchCreate, body), principal));
    res.status(result.outcome === 'created' ? 201 : 200);
    return result;
  }

  @Get('batches')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({ summary: 'Batches, newest first, filtered by line, heat, product spec, status, code, stale flag and creation time; paged' })
  @ZodQuery(BatchQuery)
  @ApiErrors(400)
  list(@Query() query: unknown): Promise<Page<BatchListItem>> {
    return this.queries.list(parseQuery(BatchQuery, query));
  }

  @Get('batches/:id')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({
    summary: 'One batch: line, heat, spec version, load events, samples summary per channel (count/min/max/first/last), deviations, lab results, latest prediction (or null)',
  })
  @ApiErrors(400, 404)
  get(@Param('id', UuidParam) id: string): Promise<BatchDetail> {
    return this.queries.detail(id);
  }

  @Post('batches/:id/events')
  @Access({ keys: 'EQUIPMENT' })
  @Idempotent('load-event')
  @ApiOperation({
    summary: 'Record a load event: CHARGED, OUT_OF_FURNACE (furnace), INTO_BATH, OUT_OF_BATH (bath), with device time and equipment',
    description:
      'Retry-safe by (batch, kind): the same event again answers 200 {outcome: "unchanged"}; another time or equipment for a kind already ' +
      'recorded is 409. A time that contradicts the other events of the batch (e.g. OUT_OF_BATH before INTO_BATH) is 422. The key must be ' +
      'scoped to the reporting equipment.',
  })
  @ZodBody(LoadEventInput)
  @ApiErrors(400, 404, 409, 422)
  async addEvent(
    @Param('id', UuidParam) id: string,
    @Body() body: unknown,
    @CurrentPrincipal() principal: Principal,
    @Res({ passthrough: true }) res: StatusSettable,
  ): Promise<LoadEventResult> {
    const result = await countIngest('load-event', () => this.batches.addEvent(id, parseBody(LoadEventInput, body), principal));
    res.status(result.outcome === 'created' ? 201 : 200);
    return result;
  }

  @Post('batches/:id/lab-results')
  @Access({ keys: 'LAB', roles: ['QUALITY', 'METALLURGIST'] })
  @Idempotent('lab-result')
  @ApiOperation({
    summary: 'Record a lab result: HARDNESS (scale HV/HRC/HBW + test standard), RETAINED_AUSTENITE (XRD, vol%), TENSILE (Rm, Rp0.2, A%), IMPACT (J, temperature)',
    description: 'Retry-safe by (batch, kind, externalRef): the same result again answers 200; other values under the same externalRef are 409.',
  })
  @ZodBody(LabResultInput)
  @ApiErrors(400, 404, 409)
  async addLabResult(
    @Param('id', UuidParam) id: string,
    @Body() body: unknown,
    @Res({ passthrough: true }) res: StatusSettable,
  ): Promise<LabResultResult> {
    const result = await countIngest('lab-result', () => this.batches.addLabResult(id, parseBody(LabResultInput, body)));
    res.status(result.outcome === 'created' ? 201 : 200);
    return result;
  }
}
