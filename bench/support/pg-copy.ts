/**
 * `COPY ... FROM STDIN` through the pg driver without pg-copy-streams (not a dependency here): pg's
 * client.query() accepts any "submittable" object and hands it the protocol messages of its query. On
 * CopyInResponse we send the prepared CopyData chunks and CopyDone; CommandComplete carries "COPY <n>".
 * This is the PostgreSQL frontend/backend protocol's copy-in sub-protocol (PostgreSQL docs, "Message Flow:
 * COPY Operations"), so the figure is Postgres's own bulk-load rate, not a client's.
 */
import type pg from 'pg';

interface CopyConnection {
  query(text: string): void;
  sendCopyFromChunk(chunk: Buffer): void;
  endCopyFrom(): void;
}

class CopyFromStdin {
  callback?: (error: Error | null, rows?: number) => void;
  private rows = 0;
  private failed: Error | null = null;

  constructor(
    readonly text: string,
    private readonly chunks: readonly Buffer[],
  ) {}

  submit(connection: CopyConnection): void {
    connection.query(this.text);
  }

  handleCopyInResponse(connection: CopyConnection): void {
    for (const chunk of this.chunks) connection.sendCopyFromChunk(chunk);
    connection.endCopyFrom();
  }

  handleCommandComplete(msg: { text?: string }): void {
    const match = /^COPY (\d+)/.exec(msg.text ?? '');
    if (match) this.rows = Number(match[1]);
  }

  handleError(error: Error): void {
    this.failed = error;
    this.callback?.(error);
    this.callback = undefined;
  }

  handleReadyForQuery(): void {
    this.callback?.(this.failed, this.rows);
    this.callback = undefined;
  }

  // Not expected during COPY FROM; present because the client may call them on an active query.
  handleRowDescription(): void {}
  handleDataRow(): void {}
  handleEmptyQuery(): void {}
  handlePortalSuspended(): void {}
  handleCopyData(): void {}
}

/** Runs `copySql` (a COPY ... FROM STDIN) with `chunks` as the data; resolves with the rows copied. */
export function copyFromStdin(client: pg.Client | pg.PoolClient, copySql: string, chunks: readonly Buffer[]): Promise<number> {
  return new Promise((resolve, reject) => {
    const submittable = new CopyFromStdin(copySql, chunks);
    submittable.callback = (error, rows) => (error ? reject(error) : resolve(rows ?? 0));
    (client as unknown as { query(q: unknown): void }).query(submittable);
  });
}
