import { Controller, Get, Param, Query } from '@nestjs/common';
import { ApiOperation, ApiTags } from '@nestjs/swagger';
import { z } from 'zod';
import { Access, ANY_ROLE } from '../auth/access.js';
import { ApiErrors, ZodQuery } from '../http/openapi.js';
import { parseQuery, UuidParam } from '../http/validation.js';
import { SeriesService, type BatchSeries } from './series.service.js';

/** Largest number of points per channel a client may ask for (a day at 2 Hz). */
export const SERIES_MAX_POINTS = 200_000;

const QueryTime = z.iso.datetime({ offset: true, error: 'expected an ISO 8601 date-time with offset' });

export const SeriesQuery = z
  .strictObject({
    /** Comma-separated channel ids of the batch's line; default every channel of the line. */
    channelIds: z
      .string()
      .transform((s) => s.split(',').map((x) => x.trim()).filter((x) => x !== ''))
      .pipe(z.array(z.uuid('not a UUID')).min(1).max(50))
      .optional(),
    from: QueryTime.optional(),
    to: QueryTime.optional(),
    /** Points per channel before min/max thinning sets in. */
    maxPoints: z.coerce
      .number()
      .int('must be a whole number')
      .min(2, 'at least 2')
      .max(SERIES_MAX_POINTS, `at most ${SERIES_MAX_POINTS}`)
      .default(2000),
  })
  .superRefine((q, ctx) => {
    if (q.from && q.to && Date.parse(q.from) >= Date.parse(q.to)) ctx.addIssue({ code: 'custom', path: ['to'], message: "'to' must be after 'from'" });
  });

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
  @ZodQuery(SeriesQuery)
  @ApiErrors(400, 404)
  get(@Param('id', UuidParam) id: string, @Query() query: unknown): Promise<BatchSeries> {
    const q = parseQuery(SeriesQuery, query);
    return this.series.batchSeries(id, {
      maxPoints: q.maxPoints,
      ...(q.channelIds ? { channelIds: q.channelIds } : {}),
      ...(q.from ? { from: q.from } : {}),
      ...(q.to ? { to: q.to } : {}),
    });
  }
}
