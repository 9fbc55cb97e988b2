/**
 * `COPY ... FROM STDIN` through the pg driver without pg-copy-streams (not a dependency here): pg's
 * client.query() accepts any "submittable" object and hands it the protocol messages of its query. On
 * CopyInResponse we send the prepared CopyData chunks and CopyDone; CommandComplete carries "COPY <n>".
 * This is the PostgreSQL frontend/backend protocol's copy-in sub-protocol (PostgreSQL docs, "Message Flow:
 * COPY Operations"). The api's sample ingest uses it with the binary format below; bench/ uses it for
 * its raw-COPY baseline.
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

// ---- binary COPY rows (uuid, timestamptz, float8) ---------------------------------------------------
//
// PostgreSQL docs, "COPY — Binary Format": an 11-byte signature, a 32-bit flags field and a 32-bit header
// extension length; then per tuple a 16-bit field count and per field a 32-bit length and the value in
// the type's binary send format (uuid: its 16 bytes; timestamptz: signed 64-bit microseconds since
// 2000-01-01 00:00 UTC; float8: IEEE 754 big-endian); a 16-bit -1 ends the data.

const SIGNATURE = Buffer.from('PGCOPY\n\xff\r\n\0', 'latin1');
const HEADER_BYTES = SIGNATURE.length + 8;
/** 2 (field count) + 4 + 16 (uuid) + 4 + 8 (timestamptz) + 4 + 8 (float8). */
const ROW_BYTES = 46;
/** 2000-01-01T00:00:00Z in Unix milliseconds: PostgreSQL's epoch for timestamps. */
const PG_EPOCH_MS = 946_684_800_000;
const TWO_32 = 4_294_967_296;

/** The 16 bytes of a UUID in canonical text form. */
export function uuidBytes(uuid: string): Buffer {
  return Buffer.from(uuid.replace(/-/g, ''), 'hex');
}

/**
 * One COPY ... (FORMAT binary) payload of `n` rows (uuid, timestamptz, float8): `channel[i]` the channel
 * id's 16 bytes, `tMs[i]` whole Unix milliseconds, `value[i]` the reading.
 */
export function binaryCopyRows(n: number, channel: (i: number) => Buffer, tMs: (i: number) => number, value: (i: number) => number): Buffer {
  const out = Buffer.allocUnsafe(HEADER_BYTES + n * ROW_BYTES + 2);
  SIGNATURE.copy(out, 0);
  let o = SIGNATURE.length;
  out.writeInt32BE(0, o); // flags: no OIDs
  out.writeInt32BE(0, o + 4); // no header extension
  o += 8;
  for (let i = 0; i < n; i++) {
    out.writeInt16BE(3, o);
    out.writeInt32BE(16, o + 2);
    channel(i).copy(out, o + 6);
    out.writeInt32BE(8, o + 22);
    // Microseconds since 2000: |value| < 2^53 for any date this api accepts, so a double holds it exactly.
    const us = (tMs(i) - PG_EPOCH_MS) * 1000;
    const high = Math.floor(us / TWO_32);
    out.writeInt32BE(high, o + 26);
    out.writeUInt32BE(us - high * TWO_32, o + 30);
    out.writeInt32BE(8, o + 34);
    out.writeDoubleBE(value(i), o + 38);
    o += ROW_BYTES;
  }
  out.writeInt16BE(-1, o);
  return out;
}
