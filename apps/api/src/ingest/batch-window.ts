/**
 * Which batches a sample can affect. The worker evaluates a batch over its furnace phase
 * (CHARGED..OUT_OF_FURNACE) and bath phase (INTO_BATH..OUT_OF_BATH, open until now while the load is
 * in the bath); a sample on a line's equipment affects every batch of that line whose span
 * CHARGED..OUT_OF_BATH, widened by a margin for device clock skew, covers the sample's time.
 *
 * A batch without OUT_OF_BATH is open-ended, but only for OPEN_BATCH_HORIZON_MS after CHARGED: a load
 * whose last event never arrived must not be recomputed on every sample for ever.
 */
export const BATCH_WINDOW_MARGIN_MS = 5 * 60_000;
export const OPEN_BATCH_HORIZON_MS = 48 * 3_600_000;

/** The part of a pg client the query needs (the samples path runs it inside its write transaction). */
interface PgQueryable {
  query<R extends object>(text: string, values?: unknown[]): Promise<{ rows: R[] }>;
}

/**
 * Every batch of a line with its window's ends, as a FROM item ("windows"): `lineParam` is the SQL of the
 * line id (a parameter such as $1).
 */
export function batchWindowsSql(lineParam: string): string {
  return `SELECT b."id", charged."at" AS "chargedAt", done."at" AS "doneAt"
    FROM "Batch" b
    JOIN "LoadEvent" charged ON charged."batchId" = b."id" AND charged."kind" = 'CHARGED'
    LEFT JOIN "LoadEvent" done ON done."batchId" = b."id" AND done."kind" = 'OUT_OF_BATH'
    WHERE b."lineId" = ${lineParam}::uuid`;
}

/**
 * The condition "the window of batch `w` (a row of batchWindowsSql) covers [fromSql, toSql]" (timestamptz
 * expressions), with BATCH_WINDOW_MARGIN_MS either side and OPEN_BATCH_HORIZON_MS for open batches.
 */
export function windowCoversSql(w: string, fromSql: string, toSql: string): string {
  return `(${w}."chargedAt" <= (${toSql}) + interval '${BATCH_WINDOW_MARGIN_MS} milliseconds'
    AND ((${w}."doneAt" IS NOT NULL AND ${w}."doneAt" >= (${fromSql}) - interval '${BATCH_WINDOW_MARGIN_MS} milliseconds')
      OR (${w}."doneAt" IS NULL AND ${w}."chargedAt" >= (${fromSql}) - interval '${OPEN_BATCH_HORIZON_MS} milliseconds')))`;
}

/** Batches on `lineId` whose window overlaps [fromMs, toMs] (the span of newly stored samples). */
export async function batchesCoveringSpan(db: PgQueryable, lineId: string, fromMs: number, toMs: number): Promise<string[]> {
  const { rows } = await db.query<{ id: string }>(
    `SELECT w."id" FROM (${batchWindowsSql('$1')}) w WHERE ${windowCoversSql('w', '$2::timestamptz', '$3::timestamptz')}`,
    [lineId, new Date(fromMs), new Date(toMs)],
  );
  return rows.map((r) => r.id);
}
