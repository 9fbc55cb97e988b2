import { z } from 'zod';

/** Largest number of points per channel a client may ask for (a day at 2 Hz). */
export const SERIES_MAX_POINTS = 200_000;

const QueryTime = z.iso.datetime({ offset: true, error: 'expected an ISO 8601 date-time with offset' });

/** GET /v1/batches/{id}/series, the sample series the dashboard charts: which channels, which window, how many points per channel at most. */
export const BatchSeriesQuery = z
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
export type BatchSeriesQuery = z.infer<typeof BatchSeriesQuery>;
