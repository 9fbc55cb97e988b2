import { HttpException } from '@nestjs/common';
import { ingestRequestsTotal } from '../ops/metrics.js';

export type IngestKind = 'samples' | 'load-event' | 'heat' | 'heat-csv' | 'lab-result' | 'batch' | 'spec';

/**
 * Runs one ingest request and counts it: 'accepted' when it returns, 'rejected' on a 4xx. (Replays of
 * a stored Idempotency-Key reply never reach the handler and are counted as 'duplicate' by the
 * interceptor.) Errors are rethrown untouched.
 */
export async function countIngest<T>(kind: IngestKind, work: () => Promise<T>): Promise<T> {
  try {
    const result = await work();
    ingestRequestsTotal.inc({ kind, outcome: 'accepted' });
    return result;
  } catch (error) {
    if (error instanceof HttpException && error.getStatus() >= 400 && error.getStatus() < 500) {
      ingestRequestsTotal.inc({ kind, outcome: 'rejected' });
    }
    throw error;
  }
}
