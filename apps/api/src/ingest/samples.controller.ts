import { Body, Controller, HttpCode, Param, Post } from '@nestjs/common';
import { ApiOkResponse, ApiOperation, ApiTags } from '@nestjs/swagger';
import { SAMPLES_MAX_PER_REQUEST, SamplesPost, type SamplesReply } from '@ausline/contracts';
import { Access } from '../auth/access.js';
import { ApiErrors, ZodBody } from '../http/openapi.js';
import { UuidParam } from '../http/validation.js';
import { Idempotent, IdempotencyClaimParam, type IdempotencyClaim } from './idempotency.js';
import { countIngest } from './ingest-metrics.js';
import { parseSamplesPost } from './samples-parse.js';
import { SamplesService } from './samples.service.js';

@ApiTags('ingest')
@Controller()
export class SamplesController {
  constructor(private readonly samples: SamplesService) {}

  @Post('equipment/:id/samples')
  @HttpCode(200)
  @Access({ keys: 'EQUIPMENT', equipmentParam: 'id' })
  @Idempotent('samples', { inTransaction: true })
  @ApiOperation({
    summary: `Post up to ${SAMPLES_MAX_PER_REQUEST} samples {channel, t, value} of one piece of equipment`,
    description: [
      'Channel is the channel code on this equipment; t is ISO 8601 with an offset or epoch milliseconds (device time); value a number.',
      'Samples are keyed by (channel, t): a retry or an overlapping re-send stores nothing twice (counted as duplicates; `conflicts` counts duplicates whose value differed from the one kept).',
      'Any order is accepted (backfill after an outage). The request is all-or-nothing: an unknown channel or a time more than SAMPLE_MAX_FUTURE_S (default 300 s) ahead of the server clock refuses the whole request with 422 naming each sample index; a malformed sample gives 400 with its path (samples.N.value).',
      'After the commit a recompute is queued for each batch of the line whose time window covers the new samples (`batchesQueued` counts them). A request with duplicates, and a replay, queue the batches covering all their samples again (an earlier attempt may have stored the rows and failed before queueing); `batchesQueued` does not count those.',
    ].join('\n\n'),
  })
  @ZodBody(SamplesPost)
  @ApiOkResponse({
    description: 'What was stored',
    schema: {
      type: 'object',
      properties: {
        stored: { type: 'integer' },
        duplicates: { type: 'integer' },
        conflicts: { type: 'integer' },
        rejected: { type: 'integer', enum: [0] },
        batchesQueued: { type: 'integer' },
      },
    },
  })
  @ApiErrors(400, 404, 409, 413, 422)
  post(@Param('id', UuidParam) equipmentId: string, @Body() body: unknown, @IdempotencyClaimParam() claim: IdempotencyClaim | undefined): Promise<SamplesReply> {
    return countIngest('samples', () => this.samples.ingest(equipmentId, parseSamplesPost(body), claim));
  }
}

