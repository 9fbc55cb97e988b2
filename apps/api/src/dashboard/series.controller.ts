import { Controller, Get, Param, Query } from '@nestjs/common';
import { ApiOperation, ApiTags } from '@nestjs/swagger';
import { BatchSeriesQuery } from '@ausline/contracts';
import { Access, ANY_ROLE } from '../auth/access.js';
import { ApiErrors, ZodQuery } from '../http/openapi.js';
import { parseQuery, UuidParam } from '../http/validation.js';
import { SeriesService, type BatchSeries } from './series.service.js';

@ApiTags('dashboard')
@Controller()
export class SeriesController {
  constructor(private readonly series: SeriesService) {}

  @Get('batches/:id/series')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({
    summary: "Sample series of a batch's line channels over the batch's window, for charts; thinned to min/max per time bucket above maxPoints",
    description:
      'Window: CHARGED to OUT_OF_BATH (or now while the load is in progress) unless from/to are given. Each channel answers count, ' +
      'decimated, bucketMs and points [[epoch ms, value], ...] in time order. Above maxPoints samples (default 2000) a channel is ' +
      'reduced to the lowest and the highest sample of each of maxPoints/2 equal time buckets, each at its own time.',
  })
  @ZodQuery(BatchSeriesQuery)
  @ApiErrors(400, 404)
  get(@Param('id', UuidParam) id: string, @Query() query: unknown): Promise<BatchSeries> {
    const q = parseQuery(BatchSeriesQuery, query);
    return this.series.batchSeries(id, {
      maxPoints: q.maxPoints,
      ...(q.channelIds ? { channelIds: q.channelIds } : {}),
      ...(q.from ? { from: q.from } : {}),
      ...(q.to ? { to: q.to } : {}),
    });
  }
}
