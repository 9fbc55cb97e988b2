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

/** Batches on `lineId` whose window overlaps [fromMs, toMs] (the span of newly stored samples). */
export async function batchesCoveringSpan(db: PgQueryable, lineId: string, fromMs: number, toMs: number): Promise<string[]> {
  const from = new Date(fromMs - BATCH_WINDOW_MARGIN_MS);
  const to = new Date(toMs + BATCH_WINDOW_MARGIN_MS);
  const horizonStart = new Date(fromMs - OPEN_BATCH_HORIZON_MS);
  const { rows } = await db.query<{ id: string }>(
    `SELECT b."id"
     FROM "Batch" b
     JOIN "LoadEvent" charged ON charged."batchId" = b."id" AND charged."kind" = 'CHARGED'
     LEFT JOIN "LoadEvent" done ON done."batchId" = b."id" AND done."kind" = 'OUT_OF_BATH'
     WHERE b."lineId" = $1::uuid
       AND charged."at" <= $2
       AND (
         (done."at" IS NOT NULL AND done."at" >= $3)
         OR (done."at" IS NULL AND charged."at" >= $4)
       )`,
    [lineId, to, from, horizonStart],
  );
  return rows.map((r) => r.id);
}
