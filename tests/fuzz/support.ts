/**
 * Property-based fuzzing of the API's write endpoints (issue 7, item 4). Shared pieces:
 *
 *   - FuzzClient: raw HTTP/1.1 over one keep-alive agent (bodies are sent byte for byte, so a test can
 *     send what JSON.stringify never produces: 1e400, deep nesting, truncated text);
 *   - WriteLog: row-level triggers on every table of the file's private database record each committed
 *     INSERT/UPDATE/DELETE, so "a rejected request wrote nothing" is one cheap query per case, and the
 *     table that was written is named when it fails;
 *   - mutation arbitraries: a valid payload with ONE field changed (wrong type, NaN/Infinity as text,
 *     huge or negative numbers, empty, very long or odd Unicode strings, prototype keys, deep nesting,
 *     times far in the past or future, oversized arrays), arbitrary JSON values and malformed bodies;
 *   - runFuzz: runs an fc.asyncProperty for numRuns cases (FUZZ_RUNS, default 1,000) with a seed that
 *     is fixed per endpoint (FUZZ_SEED overrides it) and prints the seed and how to rerun on failure.
 *
 * The oracle for a JSON body is the endpoint's own zod schema from @ausline/contracts plus the rules
 * every endpoint shares (no U+0000, no lone surrogates, no "__proto__" keys): when it says invalid,
 * the API must answer 400 with issues naming the field; when it says valid, the API may still answer
 * a 4xx for the plant's state (404/409/422) but never a 5xx.
 */
import http from 'node:http';
import querystring from 'node:querystring';
import fc from 'fast-check';
import type pg from 'pg';
import { expect } from 'vitest';
import type { z } from 'zod';
import { issuesFromZod, type ErrorIssue } from '../../apps/api/src/http/errors.js';

// ---------------------------------------------------------------------------------------------
// HTTP
// ---------------------------------------------------------------------------------------------

export interface RawReply {
  status: number;
  headers: http.IncomingHttpHeaders;
  text: string;
  /** Parsed JSON body, or undefined when the body is not JSON. */
  json: any;
}

export class FuzzClient {
  private readonly agent = new http.Agent({ keepAlive: true, maxSockets: 8 });
  private readonly url: URL;

  constructor(baseUrl: string) {
    this.url = new URL(baseUrl);
  }

  /**
   * One request. A keep-alive socket the server closed just as it was reused fails with ECONNRESET
   * before the request was read (the race Node's docs describe for req.reusedSocket): sent once more.
   */
  async request(method: string, path: string, options: { headers?: Record<string, string>; body?: string | Buffer } = {}): Promise<RawReply> {
    try {
      return await this.send(method, path, options);
    } catch (error) {
      if ((error as { reusedSocketReset?: boolean }).reusedSocketReset) return this.send(method, path, options);
      throw error;
    }
  }

  private send(method: string, path: string, options: { headers?: Record<string, string>; body?: string | Buffer }): Promise<RawReply> {
    const body = options.body === undefined ? undefined : Buffer.isBuffer(options.body) ? options.body : Buffer.from(options.body, 'utf8');
    const headers: Record<string, string | number> = { ...options.headers };
    if (body !== undefined) headers['content-length'] = body.length;
    return new Promise((resolve, reject) => {
      const req = http.request(
        { agent: this.agent, host: this.url.hostname, port: this.url.port, method, path, headers },
        (res) => {
          const chunks: Buffer[] = [];
          res.on('data', (chunk: Buffer) => chunks.push(chunk));
          res.on('end', () => {
            const text = Buffer.concat(chunks).toString('utf8');
            let json: unknown;
            try {
              json = text === '' ? undefined : JSON.parse(text);
            } catch {
              json = undefined;
            }
            resolve({ status: res.statusCode ?? 0, headers: res.headers, text, json });
          });
          res.on('error', reject);
        },
      );
      req.on('error', (error: NodeJS.ErrnoException) => {
        if (req.reusedSocket && error.code === 'ECONNRESET') Object.assign(error, { reusedSocketReset: true });
        reject(error);
      });
      req.setTimeout(30_000, () => req.destroy(new Error(`${method} ${path}: no reply within 30 s`)));
      req.end(body);
    });
  }

  close(): void {
    this.agent.destroy();
  }
}

// ---------------------------------------------------------------------------------------------
// Writes to the database
// ---------------------------------------------------------------------------------------------

/** Tables whose writes are not plant data: the Idempotency-Key reply cache stores 400 replies by design. */
const NOT_PLANT_DATA = new Set(['IdempotencyRecord', '_prisma_migrations', 'fuzz_write_log']);

export interface WriteEntry {
  id: number;
  tbl: string;
  op: string;
}

/**
 * Every committed row change in the database, recorded by AFTER ROW triggers (a rolled-back
 * transaction rolls its log rows back too, so only writes that stuck are seen).
 */
export class WriteLog {
  private constructor(
    private readonly pool: pg.Pool,
    readonly tables: string[],
  ) {}

  static async install(pool: pg.Pool): Promise<WriteLog> {
    await pool.query(`
      CREATE TABLE IF NOT EXISTS fuzz_write_log (id bigserial PRIMARY KEY, tbl text NOT NULL, op text NOT NULL);
      CREATE OR REPLACE FUNCTION fuzz_log_write() RETURNS trigger LANGUAGE plpgsql AS $$
      BEGIN
        INSERT INTO fuzz_write_log (tbl, op) VALUES (TG_TABLE_NAME, TG_OP);
        RETURN NULL;
      END $$;`);
    const { rows } = await pool.query<{ tablename: string }>(`SELECT tablename FROM pg_tables WHERE schemaname = 'public' ORDER BY tablename`);
    const tables = rows.map((r) => r.tablename).filter((t) => !NOT_PLANT_DATA.has(t));
    for (const table of tables) {
      await pool.query(`DROP TRIGGER IF EXISTS fuzz_log ON "${table}"`);
      await pool.query(`CREATE TRIGGER fuzz_log AFTER INSERT OR UPDATE OR DELETE ON "${table}" FOR EACH ROW EXECUTE FUNCTION fuzz_log_write()`);
    }
    return new WriteLog(pool, tables);
  }

  /** The id of the newest log row (0 when none). */
  async mark(): Promise<number> {
    const { rows } = await this.pool.query<{ m: string }>('SELECT coalesce(max(id), 0) AS m FROM fuzz_write_log');
    return Number(rows[0]!.m);
  }

  async since(mark: number): Promise<WriteEntry[]> {
    const { rows } = await this.pool.query<WriteEntry>('SELECT id::int, tbl, op FROM fuzz_write_log WHERE id > $1 ORDER BY id LIMIT 50', [mark]);
    return rows;
  }

  /** md5 of each plant-data table's rows, to cross-check the triggers (row counts and content). */
  async checksums(): Promise<Record<string, string>> {
    const parts = this.tables.map((t) => `SELECT '${t}' AS tbl, count(*)::text || ':' || coalesce(md5(string_agg(x::text, '|' ORDER BY x::text)), '') AS sum FROM "${t}" x`);
    const { rows } = await this.pool.query<{ tbl: string; sum: string }>(parts.join(' UNION ALL '));
    return Object.fromEntries(rows.map((r) => [r.tbl, r.sum]));
  }
}

// ---------------------------------------------------------------------------------------------
// Payload text: raw JSON tokens and own "__proto__" keys
// ---------------------------------------------------------------------------------------------

/** A piece of JSON text put into the body as is: numbers JSON.stringify cannot write, deep nesting. */
export class RawJson {
  constructor(readonly text: string) {}
  toString(): string {
    return `RawJson(${this.text.length > 60 ? `${this.text.slice(0, 60)}… (${this.text.length} chars)` : this.text})`;
  }
}

/** JSON text of a payload that may hold RawJson pieces and own '__proto__' properties. */
export function toJsonText(value: unknown): string {
  if (value instanceof RawJson) return value.text;
  if (value === undefined) return 'null';
  if (Array.isArray(value)) return `[${value.map(toJsonText).join(',')}]`;
  if (value !== null && typeof value === 'object') {
    const entries = Object.keys(value)
      .filter((k) => (value as Record<string, unknown>)[k] !== undefined)
      .map((k) => `${JSON.stringify(k)}:${toJsonText((value as Record<string, unknown>)[k])}`);
    return `{${entries.join(',')}}`;
  }
  return JSON.stringify(value);
}

/** Sets an own, enumerable property even for the key '__proto__' (plain assignment would set the prototype). */
function setOwn(target: Record<string, unknown>, key: string, value: unknown): void {
  Object.defineProperty(target, key, { value, enumerable: true, configurable: true, writable: true });
}

function clone<T>(value: T): T {
  if (Array.isArray(value)) return value.map(clone) as T;
  if (value !== null && typeof value === 'object' && !(value instanceof RawJson)) {
    const out: Record<string, unknown> = {};
    for (const key of Object.keys(value)) setOwn(out, key, clone((value as Record<string, unknown>)[key]));
    return out as T;
  }
  return value;
}

export type PathPart = string | number;

/** Every path inside a JSON value (objects' keys and arrays' indices), parents before children. */
export function pathsOf(value: unknown, prefix: PathPart[] = []): PathPart[][] {
  const out: PathPart[][] = [];
  if (Array.isArray(value)) {
    value.forEach((item, i) => {
      out.push([...prefix, i]);
      out.push(...pathsOf(item, [...prefix, i]));
    });
  } else if (value !== null && typeof value === 'object' && !(value instanceof RawJson)) {
    for (const key of Object.keys(value)) {
      out.push([...prefix, key]);
      out.push(...pathsOf((value as Record<string, unknown>)[key], [...prefix, key]));
    }
  }
  return out;
}

function getAt(root: unknown, path: PathPart[]): unknown {
  let node = root;
  for (const part of path) node = (node as Record<PathPart, unknown>)[part];
  return node;
}

/** A copy of `root` with the value at `path` replaced (REMOVE deletes the key / array item). */
export const REMOVE = Symbol('remove');
export function withValueAt(root: unknown, path: PathPart[], value: unknown): unknown {
  const copy = clone(root);
  if (path.length === 0) return value;
  const parent = getAt(copy, path.slice(0, -1)) as Record<PathPart, unknown> | unknown[];
  const last = path[path.length - 1]!;
  if (value === REMOVE) {
    if (Array.isArray(parent)) parent.splice(Number(last), 1);
    else delete (parent as Record<PathPart, unknown>)[last];
  } else if (Array.isArray(parent)) {
    parent[Number(last)] = value;
  } else {
    setOwn(parent as Record<string, unknown>, String(last), value);
  }
  return copy;
}

export function dotted(path: readonly PathPart[]): string {
  return path.map(String).join('.');
}

// ---------------------------------------------------------------------------------------------
// Mutations
// ---------------------------------------------------------------------------------------------

/** Times no device can have measured: before 2000, after 2100, not a date, no offset, seconds for ms. */
export const FAR_TIMES: readonly unknown[] = [
  '0001-01-01T00:00:00Z',
  '0000-01-01T00:00:00Z',
  '1899-12-31T23:59:59Z',
  '1969-12-31T23:59:59.999Z',
  '1970-01-01T00:00:00Z',
  '1999-12-31T23:59:59.999Z',
  '2100-01-01T00:00:00.001Z',
  '2200-01-01T00:00:00Z',
  '9999-12-31T23:59:59.999Z',
  '+275760-09-13T00:00:00.000Z',
  '-000001-01-01T00:00:00Z',
  '2026-02-29T00:00:00Z',
  '2026-13-01T00:00:00Z',
  '2026-01-01T24:00:01Z',
  '2026-01-01T00:00:00+25:00',
  '2026-01-01T00:00:00',
  '2026-01-01',
  'yesterday',
  0,
  -1,
  1_767_225_600, // epoch SECONDS of 2026-01-01 (milliseconds expected)
  8.64e15,
  8.64e15 + 1,
  1e20,
  -8.64e15,
  1.5e12 + 0.5,
  new RawJson('1e400'),
];

/** Far in the future, but inside the calendar the schemas accept: refused for device times by the clock check. */
export const FUTURE_TIMES: readonly unknown[] = ['2099-12-31T23:59:59Z', 4_102_444_799_999, '2090-06-01T12:00:00+14:00'];

export const UNICODE_STRINGS: readonly string[] = [
  '\u0000',
  'tc\u00001',
  '\ud800',
  'a\udfffb',
  '\u202egnp.exe',
  '\ufeffH-1',
  'Ω≈ç√∫',
  '💥🔥',
  'e\u0301',
  '１２３',
  '\u2028\u2029',
  'ＡＢＣ',
  '𝕳𝖊𝖆𝖙',
  '\t\n\r',
  ' ',
];

const NUMBERS_AS_TEXT = ['NaN', 'Infinity', '-Infinity', '1e309', '-0', '0x1F', '1_000', ' 42 ', '42abc', '4,2', '', '١٢'];
const HUGE_NUMBERS: readonly unknown[] = [
  1e308,
  -1e308,
  Number.MAX_VALUE,
  2 ** 53 + 2,
  -(2 ** 63),
  1e21,
  5e-324,
  -5e-324,
  new RawJson('1e400'),
  new RawJson('-1e400'),
  new RawJson('123456789012345678901234567890'),
  new RawJson('0.0000000000000000000000000000000000000000000000000000001'),
];

function deepNesting(depth: number, kind: 'array' | 'object'): RawJson {
  return kind === 'array' ? new RawJson(`${'['.repeat(depth)}${']'.repeat(depth)}`) : new RawJson(`${'{"a":'.repeat(depth)}1${'}'.repeat(depth)}`);
}

export type MutationKind =
  | 'wrong-type'
  | 'number-as-text'
  | 'huge-number'
  | 'negative'
  | 'zero'
  | 'empty'
  | 'remove'
  | 'long-string'
  | 'unicode'
  | 'proto-key'
  | 'deep-nesting'
  | 'far-time'
  | 'future-time'
  | 'oversized-array';

export interface Mutation {
  kind: MutationKind;
  /** Where the change is; for 'proto-key', the object that gets the key. */
  path: PathPart[];
  /** The new value (for 'proto-key', the key's value). */
  value: unknown;
  /** For 'proto-key': the key added. */
  key?: string;
}

function negativeOf(current: unknown): unknown {
  if (typeof current === 'number') return current === 0 ? -1 : -Math.abs(current) - 1;
  if (typeof current === 'string' && /^\d/.test(current)) return `-${current}`;
  return -1;
}

function valueArbitrary(kind: MutationKind, current: unknown): fc.Arbitrary<unknown> {
  switch (kind) {
    case 'wrong-type':
      return fc.oneof(
        fc.constant(null),
        fc.boolean(),
        fc.integer(),
        fc.double({ noNaN: true, noDefaultInfinity: true }),
        fc.string({ maxLength: 12 }),
        fc.constant([]),
        fc.constant({}),
        fc.array(fc.integer(), { maxLength: 3 }),
        fc.dictionary(fc.string({ maxLength: 5 }), fc.integer(), { maxKeys: 2 }),
        fc.constant(typeof current === 'number' ? String(current) : typeof current === 'string' ? Number(current.length) : 'text'),
      );
    case 'number-as-text':
      return fc.constantFrom(...NUMBERS_AS_TEXT);
    case 'huge-number':
      return fc.constantFrom(...HUGE_NUMBERS);
    case 'negative':
      return fc.constant(negativeOf(current));
    case 'zero':
      return fc.constantFrom(0, -0, '0');
    case 'empty':
      return fc.constantFrom('', '   ', [], {}, null);
    case 'remove':
      return fc.constant(REMOVE);
    case 'long-string':
      return fc.oneof(
        { weight: 6, arbitrary: fc.constantFrom(65, 101, 201, 321, 1_001, 1_025, 2_001).map((n) => 'x'.repeat(n)) },
        { weight: 1, arbitrary: fc.constantFrom(10_000, 100_000).map((n) => 'x'.repeat(n)) },
        { weight: 3, arbitrary: fc.string({ minLength: 300, maxLength: 1_200, unit: 'binary' }) },
      );
    case 'unicode':
      return fc.oneof(
        fc.constantFrom(...UNICODE_STRINGS),
        fc.string({ minLength: 1, maxLength: 20, unit: 'binary' }),
        fc.string({ minLength: 1, maxLength: 8, unit: 'grapheme' }).map((s) => `${s}\u0000`),
      );
    case 'proto-key':
      return fc.constantFrom({ polluted: 'yes' }, 'yes', 1, null, [], { toString: 'x' });
    case 'deep-nesting':
      return fc.tuple(fc.constantFrom(50, 1_000, 5_000, 20_000), fc.constantFrom('array' as const, 'object' as const)).map(([d, k]) => deepNesting(d, k));
    case 'far-time':
      return fc.constantFrom(...FAR_TIMES);
    case 'future-time':
      return fc.constantFrom(...FUTURE_TIMES);
    case 'oversized-array': {
      // Built as text: 10,001 copies of an item would otherwise be cloned object by object.
      const itemText = toJsonText(Array.isArray(current) && current.length > 0 ? current[0] : 1);
      return fc
        .oneof({ weight: 3, arbitrary: fc.constant(0) }, { weight: 3, arbitrary: fc.constant(201) }, { weight: 1, arbitrary: fc.constant(10_001) })
        .map((n) => new RawJson(`[${new Array<string>(n).fill(itemText).join(',')}]`));
    }
  }
}

const VALUE_KINDS: MutationKind[] = [
  'wrong-type',
  'number-as-text',
  'huge-number',
  'negative',
  'zero',
  'empty',
  'remove',
  'long-string',
  'unicode',
  'deep-nesting',
];

export interface MutationOptions {
  /** Paths (dotted, array indices as numbers) whose value is an instant: they also get far/future times. */
  isTimePath?: (path: readonly PathPart[]) => boolean;
  /** Instants far ahead of the server clock must be refused too (device times: SAMPLE_MAX_FUTURE_S). */
  rejectFutureTimes?: boolean;
}

const PROTO_KEYS = ['__proto__', 'constructor', 'prototype', 'toString', 'hasOwnProperty'];

/** One mutation of a valid payload: a kind, a place, a value. */
export function mutationOf(base: unknown, options: MutationOptions = {}): fc.Arbitrary<Mutation> {
  const paths = pathsOf(base);
  const objectPaths: PathPart[][] = [[], ...paths.filter((p) => isPlainObject(getAt(base, p)))];
  const arrayPaths = paths.filter((p) => Array.isArray(getAt(base, p)));
  const timePaths = options.isTimePath ? paths.filter((p) => options.isTimePath!(p)) : [];

  const choices: Array<{ weight: number; arbitrary: fc.Arbitrary<Mutation> }> = [];
  if (paths.length > 0) {
    choices.push({
      weight: 12,
      arbitrary: fc
        .tuple(fc.constantFrom(...VALUE_KINDS), fc.constantFrom(...paths))
        .chain(([kind, path]) => valueArbitrary(kind, getAt(base, path)).map((value): Mutation => ({ kind, path, value }))),
    });
  }
  choices.push({
    weight: 2,
    arbitrary: fc
      .tuple(fc.constantFrom(...objectPaths), fc.constantFrom(...PROTO_KEYS))
      .chain(([path, key]) => valueArbitrary('proto-key', undefined).map((value): Mutation => ({ kind: 'proto-key', path, key, value }))),
  });
  if (timePaths.length > 0) {
    choices.push({
      weight: 4,
      arbitrary: fc
        .tuple(fc.constantFrom<MutationKind>('far-time', 'far-time', 'future-time'), fc.constantFrom(...timePaths))
        .chain(([kind, path]) => valueArbitrary(kind, undefined).map((value): Mutation => ({ kind, path, value }))),
    });
  }
  if (arrayPaths.length > 0) {
    choices.push({
      weight: 1,
      arbitrary: fc.constantFrom(...arrayPaths).chain((path) => valueArbitrary('oversized-array', getAt(base, path)).map((value): Mutation => ({ kind: 'oversized-array', path, value }))),
    });
  }
  return fc.oneof(...choices);
}

export function applyMutation(base: unknown, mutation: Mutation): unknown {
  if (mutation.kind === 'proto-key') {
    const copy = clone(base);
    const target = getAt(copy, mutation.path) as Record<string, unknown>;
    setOwn(target, mutation.key!, mutation.value);
    return copy;
  }
  return withValueAt(base, mutation.path, mutation.value);
}

function isPlainObject(value: unknown): value is Record<string, unknown> {
  return value !== null && typeof value === 'object' && !Array.isArray(value) && !(value instanceof RawJson);
}

// ---------------------------------------------------------------------------------------------
// Cases
// ---------------------------------------------------------------------------------------------

export interface FuzzCase {
  /** How fast-check prints the case in a failure report (the label and the start of the body). */
  [fc.toStringMethod]?: () => string;
  /** What was done, for the failure report. */
  label: string;
  /** Exact request body text ('' and not sent for GET). */
  body: string;
  /** Request path with query string, when the case is in the URL (GET list endpoints). */
  path?: string;
  contentType: string;
  /** Dotted path of the field at fault when one field was changed ('' = the body as a whole). */
  faultPath?: string;
  /** The request must be refused whatever the schema says (malformed text, times far out). */
  mustReject: boolean;
}

function describeValue(value: unknown): string {
  if (value === REMOVE) return '(removed)';
  if (value instanceof RawJson) return value.toString();
  const text = typeof value === 'string' ? JSON.stringify(value.length > 60 ? `${value.slice(0, 60)}…(${value.length} chars)` : value) : JSON.stringify(value);
  return text ?? String(value);
}

/** Gives a case a short printed form: counterexamples may carry megabytes of body. */
export function printable(fuzzCase: FuzzCase): FuzzCase {
  const body = fuzzCase.body.length > 300 ? `${fuzzCase.body.slice(0, 300)}… (${fuzzCase.body.length} chars)` : fuzzCase.body;
  return { ...fuzzCase, [fc.toStringMethod]: () => `${fuzzCase.label} [${fuzzCase.contentType}] ${body}` };
}

/** Cases built from valid payloads with one mutation each. */
export function mutatedCases(valid: fc.Arbitrary<unknown>, options: MutationOptions = {}): fc.Arbitrary<FuzzCase> {
  return valid.chain((base) =>
    mutationOf(base, options).map((mutation): FuzzCase => {
      const payload = applyMutation(base, mutation);
      const where = mutation.kind === 'proto-key' ? dotted([...mutation.path, mutation.key!]) : dotted(mutation.path);
      return printable({
        label: `${mutation.kind} at '${where}' = ${describeValue(mutation.value)}`,
        body: toJsonText(payload),
        contentType: 'application/json',
        faultPath: where,
        mustReject:
          mutation.kind === 'far-time' ||
          (mutation.kind === 'future-time' && options.rejectFutureTimes === true) ||
          (mutation.kind === 'proto-key' && mutation.key === '__proto__'),
      });
    }),
  );
}

/** Whole bodies that are anything but the payload: arbitrary JSON values, broken text, wrong media types. */
export function wholeBodyCases(): fc.Arbitrary<FuzzCase> {
  const jsonValues = fc.jsonValue({ maxDepth: 4 }).map(
    (value): FuzzCase => printable({ label: `arbitrary JSON ${describeValue(value)}`, body: JSON.stringify(value), contentType: 'application/json', faultPath: '', mustReject: false }),
  );
  const brokenText = fc
    .constantFrom(
      '{',
      '{"a":',
      '{"a":1,}',
      "{'a':1}",
      '{"a":1}{"b":2}',
      'NaN',
      '{"a":NaN}',
      '{"a":Infinity}',
      '{"a":undefined}',
      '{"a":"\\x41"}',
      '{"a":"\\ud800"}',
      '{"a":1e400}',
      '['.repeat(100_000),
      '\u0000',
      'null',
      'true',
      '"text"',
      '12',
      '[]',
    )
    .map((body): FuzzCase => printable({ label: `malformed body ${describeValue(body.length > 60 ? `${body.slice(0, 20)}…` : body)}`, body, contentType: 'application/json', faultPath: '', mustReject: true }));
  const mediaTypes = fc
    .tuple(
      fc.constantFrom('{"a":1}', 'a,b\n1,2', '<x/>'),
      fc.constantFrom('text/plain', 'application/xml', 'application/x-www-form-urlencoded', 'multipart/form-data; boundary=x', 'application/json; charset=latin1', 'application/octet-stream'),
    )
    .map(([body, contentType]): FuzzCase => printable({ label: `${contentType} body ${describeValue(body)}`, body, contentType, faultPath: '', mustReject: true }));
  // No body at all: endpoints whose body is optional (acknowledge) may accept it; others answer 400.
  const empty = fc.constantFrom('', '\ufeff{}').map((body) => printable({ label: `empty body ${describeValue(body)}`, body, contentType: 'application/json', faultPath: '', mustReject: false }));
  return fc.oneof(jsonValues, brokenText, mediaTypes, empty);
}

/** The usual mix: mostly one-field mutations, some whole-body garbage. */
export function fuzzCases(valid: fc.Arbitrary<unknown>, options: MutationOptions = {}): fc.Arbitrary<FuzzCase> {
  return fc.oneof({ weight: 8, arbitrary: mutatedCases(valid, options) }, { weight: 2, arbitrary: wholeBodyCases() });
}

/**
 * Query-string cases: a valid query with one parameter changed (NUL, long, Unicode, wrong format,
 * repeated, '__proto__' / unknown names, far times), sent as GET `${path}?...`. A filter time far in
 * the past or future is a valid filter (it matches nothing); the schema is the only oracle here.
 */
export function queryCases(path: string, valid: fc.Arbitrary<Record<string, string>>): fc.Arbitrary<FuzzCase> {
  const encode = (pairs: Array<[string, string]>) => pairs.map(([k, v]) => `${encodeURIComponent(k)}=${encodeURIComponent(v)}`).join('&');
  const values = fc.oneof(
    fc.constantFrom('', ' ', '\u0000', 'a\u0000', '-1', '0', '1e400', 'NaN', '9'.repeat(400), 'x'.repeat(600), '%', '%00', '../../etc/passwd', "' OR 1=1 --", '<script>', 'OPEN,,CLOSED', ',', 'true', 'null', '[]', '{}'),
    fc.string({ maxLength: 12, unit: 'binary' }),
    fc.constantFrom(...FAR_TIMES.filter((t): t is string => typeof t === 'string')),
  );
  return valid.chain((query) => {
    const keys = Object.keys(query);
    const change = fc.oneof(
      keys.length > 0 ? fc.tuple(fc.constantFrom(...keys), values).map(([k, v]) => ({ label: `${k} = ${describeValue(v)}`, pairs: Object.entries({ ...query, [k]: v }) as Array<[string, string]>, fault: `query.${k}` })) : fc.constant(null),
      fc.tuple(fc.constantFrom('__proto__', 'constructor', 'toString', 'unknownParam', 'limit[]', ''), values).map(([k, v]) => ({ label: `extra ${k} = ${describeValue(v)}`, pairs: [...(Object.entries(query) as Array<[string, string]>), [k, v] as [string, string]], fault: `query.${k}` })),
      keys.length > 0 ? fc.constantFrom(...keys).map((k) => ({ label: `${k} repeated`, pairs: [...(Object.entries(query) as Array<[string, string]>), [k, query[k]!] as [string, string]], fault: `query.${k}` })) : fc.constant(null),
    );
    return change.filter((c) => c !== null).map((c) =>
      printable({ label: `query ${c!.label}`, body: '', path: `${path}?${encode(c!.pairs)}`, contentType: 'application/json', faultPath: c!.fault, mustReject: false }),
    );
  });
}

/** Judges a GET case: the query string parsed as Express does (node:querystring), then the schema. */
export function judgeQuery(schema: z.ZodType, pathWithQuery: string): OracleVerdict {
  const parsed = querystring.parse(pathWithQuery.slice(pathWithQuery.indexOf('?') + 1));
  const query: Record<string, unknown> = {};
  for (const key of Object.keys(parsed)) setOwn(query, key, parsed[key]);
  const textPaths = unstorableTextPaths(query).map((p) => `query.${p}`);
  const result = schema.safeParse(query);
  const schemaPaths = result.success ? [] : issuesFromZod(result.error, 'query').map((i: ErrorIssue) => i.path);
  return { valid: result.success && textPaths.length === 0, parsed: true, paths: [...textPaths, ...schemaPaths] };
}

// ---------------------------------------------------------------------------------------------
// Oracle
// ---------------------------------------------------------------------------------------------

/**
 * What every endpoint refuses before its schema (apps/api/src/http/validation.ts): text PostgreSQL
 * cannot store as sent (U+0000, lone UTF-16 surrogates) and keys named "__proto__".
 */
export function unstorableTextPaths(root: unknown): string[] {
  const bad = (text: string) => text.includes('\u0000') || /[\ud800-\udbff](?![\udc00-\udfff])|(?<![\ud800-\udbff])[\udc00-\udfff]/.test(text);
  const found: string[] = [];
  // Iterative: bodies may nest thousands of levels deep.
  const stack: Array<{ value: unknown; path: string }> = [{ value: root, path: '' }];
  while (stack.length > 0) {
    const { value, path } = stack.pop()!;
    const join = (key: string | number) => (path === '' ? String(key) : `${path}.${key}`);
    if (typeof value === 'string') {
      if (bad(value)) found.push(path || 'body');
    } else if (Array.isArray(value)) {
      value.forEach((item, i) => stack.push({ value: item, path: join(i) }));
    } else if (value !== null && typeof value === 'object') {
      for (const key of Object.keys(value)) {
        if (key === '__proto__' || bad(key)) found.push(join(key));
        else stack.push({ value: (value as Record<string, unknown>)[key], path: join(key) });
      }
    }
  }
  return found;
}

export interface OracleVerdict {
  valid: boolean;
  /** False when the body is not JSON at all: then no field is at fault and the message says so. */
  parsed: boolean;
  /** Paths the schema (and the shared text rules) report. */
  paths: string[];
}

/** Judges a JSON body text as the server will see it (JSON.parse, then the schema). */
export function judgeJson(schema: z.ZodType, body: string): OracleVerdict {
  let parsed: unknown;
  try {
    // An empty body is no body: the endpoint validates {} (optional bodies pass, others name the fields).
    // The JSON parser skips a leading byte order mark (RFC 8259 §8.1 allows ignoring it).
    const text = body.replace(/^\ufeff/, '');
    parsed = text.trim() === '' ? {} : JSON.parse(text);
  } catch {
    return { valid: false, parsed: false, paths: ['body'] };
  }
  // The API's JSON parser is strict (RFC 7159 top level object or array only): anything else is malformed.
  if (parsed === null || typeof parsed !== 'object') return { valid: false, parsed: false, paths: ['body'] };
  const textPaths = unstorableTextPaths(parsed);
  let result: ReturnType<z.ZodType['safeParse']>;
  try {
    result = schema.safeParse(parsed);
  } catch {
    return { valid: false, parsed: true, paths: [...textPaths, 'body'] };
  }
  const schemaPaths = result.success ? [] : issuesFromZod(result.error).map((i: ErrorIssue) => i.path);
  return { valid: result.success && textPaths.length === 0, parsed: true, paths: [...textPaths, ...schemaPaths] };
}

/** a and b name the same field, or one lies inside the other. */
export function relatedPaths(a: string, b: string): boolean {
  if (a === '' || b === '' || a === 'body' || b === 'body') return true;
  return a === b || a.startsWith(`${b}.`) || b.startsWith(`${a}.`);
}

/** The one error shape (API-CONTRACTS.md "Errors") with a useful one-line message and issue paths. */
export function expectUsefulError(reply: RawReply): void {
  expect(reply.headers['content-type'] ?? '', 'error replies are JSON').toMatch(/^application\/json/);
  const body = reply.json;
  expect(body, `error body is JSON: ${reply.text.slice(0, 200)}`).toBeTypeOf('object');
  expect(body.statusCode).toBe(reply.status);
  expect(typeof body.error).toBe('string');
  expect(typeof body.message).toBe('string');
  expect(body.message.length).toBeGreaterThan(10);
  expect(body.message).not.toMatch(/[\r\n]/);
  expect(body.message.length).toBeLessThan(2_000);
  expect(Array.isArray(body.issues)).toBe(true);
  for (const issue of body.issues) {
    expect(typeof issue.path).toBe('string');
    expect(issue.path.length).toBeGreaterThan(0);
    expect(typeof issue.message).toBe('string');
    expect(issue.message.length).toBeGreaterThan(0);
  }
  // No internals: stack frames, SQL, ORM names.
  expect(reply.text).not.toMatch(/\bat \S+ \(|prisma|SELECT |INSERT |node_modules/i);
}

// ---------------------------------------------------------------------------------------------
// Running
// ---------------------------------------------------------------------------------------------

export const FUZZ_RUNS = Number(process.env.FUZZ_RUNS ?? 1_000);
/** Requests in flight at once for cases that must be refused (they change nothing, so order is free). */
export const FUZZ_CONCURRENCY = Math.max(1, Number(process.env.FUZZ_CONCURRENCY ?? 8));
/** FUZZ_ONLY=12,40: run only these case numbers (from a failure report) with the same seed. */
const FUZZ_ONLY = (process.env.FUZZ_ONLY ?? '')
  .split(',')
  .map((x) => x.trim())
  .filter((x) => x !== '')
  .map(Number);

/** Seed per endpoint name (stable across runs) unless FUZZ_SEED is set. */
export function seedFor(name: string): number {
  if (process.env.FUZZ_SEED !== undefined && process.env.FUZZ_SEED !== '') return Number(process.env.FUZZ_SEED);
  let hash = 2166136261;
  for (const ch of name) hash = Math.imul(hash ^ ch.charCodeAt(0), 16777619);
  return hash | 0;
}

export interface FuzzStats {
  cases: number;
  rejected: number;
  accepted: number;
  byStatus: Record<number, number>;
  /** Wall time of the whole run, and of generating and judging the cases, ms. */
  ms: number;
  generateMs: number;
}

export interface EndpointFuzz {
  /** Name in reports and the seed's source, e.g. 'POST /v1/heats'. */
  name: string;
  client: FuzzClient;
  writes: WriteLog;
  method: string;
  /** Request path; a function to vary it per case. */
  path: string | (() => string);
  headers: Record<string, string> | (() => Record<string, string>);
  cases: fc.Arbitrary<FuzzCase>;
  /** Judges a case; undefined for non-JSON endpoints (then only mustReject cases are known bad). */
  judge?: (fuzzCase: FuzzCase) => OracleVerdict;
  numRuns?: number;
  /** The endpoint honours Idempotency-Key: every third case carries a fresh key (its 400 reply is cached by design). */
  idempotencyKeys?: boolean;
  /** Extra check per reply (e.g. stored values read back verbatim); throw to fail the case. */
  afterEach?: (fuzzCase: FuzzCase, reply: RawReply) => Promise<void> | void;
}

interface NumberedCase {
  index: number;
  fuzzCase: FuzzCase;
  verdict?: OracleVerdict;
  expectRefusal: boolean;
}

interface CaseFailure {
  index: number;
  fuzzCase: FuzzCase;
  reason: string;
  reply?: RawReply;
}

/** Checks one reply; returns what is wrong (assertion messages), or undefined. */
function checkReply(numbered: NumberedCase, reply: RawReply): string | undefined {
  const { fuzzCase, verdict, expectRefusal } = numbered;
  try {
    expect(reply.status, 'no 5xx').toBeLessThan(500);
    expect(reply.status, 'a real status').toBeGreaterThanOrEqual(200);
    if (reply.status < 400) {
      expect(expectRefusal, 'invalid input must be refused with a 4xx').toBe(false);
      return undefined;
    }
    expectUsefulError(reply);
    if (verdict && !verdict.parsed) {
      expect(reply.json.message, 'the message says the body is not usable JSON').toMatch(/JSON|content type|charset|body/i);
    } else if (verdict && !verdict.valid && reply.status === 400) {
      const paths: string[] = reply.json.issues.map((i: ErrorIssue) => i.path);
      expect(paths.length, 'issues listed').toBeGreaterThan(0);
      expect(
        paths.some((p) => verdict.paths.some((q) => relatedPaths(p, q))),
        `an issue names a field the schema finds at fault (${verdict.paths.slice(0, 5).join(', ')})`,
      ).toBe(true);
      const fault = fuzzCase.faultPath;
      if (fault !== undefined && fault !== '' && verdict.paths.some((q) => relatedPaths(q, fault))) {
        expect(paths.some((p) => relatedPaths(p, fault)), `an issue names the changed field '${fault}'`).toBe(true);
      }
    }
    return undefined;
  } catch (error) {
    return error instanceof Error ? error.message : String(error);
  }
}

function describeFailure(failure: CaseFailure): string {
  if (failure.fuzzCase.path) return `  case #${failure.index}: ${failure.fuzzCase.label}\n    GET ${failure.fuzzCase.path.slice(0, 300)}${failure.reply ? `\n    reply ${failure.reply.status}: ${failure.reply.text.slice(0, 400)}` : ''}\n    -> ${failure.reason}`;
  const body = failure.fuzzCase.body.length > 300 ? `${failure.fuzzCase.body.slice(0, 300)}… (${failure.fuzzCase.body.length} chars)` : failure.fuzzCase.body;
  const reply = failure.reply ? `\n    reply ${failure.reply.status}: ${failure.reply.text.slice(0, 400)}` : '';
  return `  case #${failure.index}: ${failure.fuzzCase.label}\n    body [${failure.fuzzCase.contentType}]: ${body}${reply}\n    -> ${failure.reason}`;
}

/**
 * Sends numRuns generated cases (seeded, so the same cases every run) and checks each: no 5xx; input
 * the oracle finds invalid gets a 4xx in the error shape whose issues name the field; a refused
 * request committed no row anywhere; Object.prototype stays clean.
 *
 * Cases that must be refused run FUZZ_CONCURRENCY at a time (they change nothing, so they need no
 * order) and the write log is checked after each group; cases the schema accepts run one at a time
 * so their writes are told apart. Failures list the case number, the seed and how to rerun.
 */
export async function runFuzz(spec: EndpointFuzz): Promise<FuzzStats> {
  const started = performance.now();
  const seed = seedFor(spec.name);
  const numRuns = spec.numRuns ?? FUZZ_RUNS;
  const stats: FuzzStats = { cases: 0, rejected: 0, accepted: 0, byStatus: {}, ms: 0, generateMs: 0 };
  const protoNames = Object.getOwnPropertyNames(Object.prototype).join(',');
  const checksumsBefore = await spec.writes.checksums();
  const acceptedTables = new Set<string>();
  const failures: CaseFailure[] = [];
  let mark = await spec.writes.mark();

  const generating = performance.now();
  const all: NumberedCase[] = fc.sample(spec.cases, { seed, numRuns }).map((fuzzCase, index) => {
    const verdict = spec.judge?.(fuzzCase);
    return { index, fuzzCase, verdict, expectRefusal: fuzzCase.mustReject || (verdict !== undefined && !verdict.valid) };
  });
  stats.generateMs = performance.now() - generating;
  const selected = FUZZ_ONLY.length > 0 ? all.filter((c) => FUZZ_ONLY.includes(c.index)) : all;

  const send = async (numbered: NumberedCase): Promise<RawReply> => {
    const path = numbered.fuzzCase.path ?? (typeof spec.path === 'function' ? spec.path() : spec.path);
    const headers = { ...(typeof spec.headers === 'function' ? spec.headers() : spec.headers) };
    if (spec.idempotencyKeys && numbered.index % 3 === 0) headers['idempotency-key'] = `"fuzz-${seed}-${numbered.index}-${Date.now()}"`;
    const withBody = spec.method !== 'GET';
    if (withBody) headers['content-type'] = numbered.fuzzCase.contentType;
    const reply = await spec.client.request(spec.method, path, { headers, ...(withBody ? { body: numbered.fuzzCase.body } : {}) });
    stats.cases += 1;
    stats.byStatus[reply.status] = (stats.byStatus[reply.status] ?? 0) + 1;
    if (reply.status >= 400) stats.rejected += 1;
    else stats.accepted += 1;
    const reason = checkReply(numbered, reply) ?? (await runAfterEach(numbered, reply));
    if (reason) failures.push({ index: numbered.index, fuzzCase: numbered.fuzzCase, reason, reply });
    return reply;
  };
  const runAfterEach = async (numbered: NumberedCase, reply: RawReply): Promise<string | undefined> => {
    try {
      await spec.afterEach?.(numbered.fuzzCase, reply);
      return undefined;
    } catch (error) {
      return error instanceof Error ? error.message : String(error);
    }
  };
  const checkPrototype = (group: NumberedCase[]) => {
    if (Object.getOwnPropertyNames(Object.prototype).join(',') !== protoNames || ({} as Record<string, unknown>)['polluted'] !== undefined) {
      failures.push({ index: group[0]!.index, fuzzCase: group[0]!.fuzzCase, reason: `Object.prototype changed during cases ${group.map((c) => `#${c.index}`).join(', ')}` });
    }
  };

  // 1. Cases that must be refused: in groups, then one look at the write log per group.
  const refusals = selected.filter((c) => c.expectRefusal);
  for (let i = 0; i < refusals.length && failures.length < 5; i += FUZZ_CONCURRENCY) {
    const group = refusals.slice(i, i + FUZZ_CONCURRENCY);
    const replies = await Promise.all(group.map(send));
    checkPrototype(group);
    const written = await spec.writes.since(mark);
    if (written.length > 0) {
      mark = Math.max(written[written.length - 1]!.id, await spec.writes.mark());
      // A case of the group that was wrongly accepted is already reported (and explains the writes).
      if (replies.some((r) => r.status < 400)) continue;
      failures.push({
        index: group[0]!.index,
        fuzzCase: group[0]!.fuzzCase,
        reason: `refused request(s) wrote ${written.map((w) => `${w.op} ${w.tbl}`).join(', ')}; one of cases ${group.map((c) => `#${c.index}`).join(', ')} (FUZZ_CONCURRENCY=1 names it)`,
      });
    }
  }

  // 2. Cases the schema accepts: one at a time, their writes recorded as allowed.
  for (const numbered of selected.filter((c) => !c.expectRefusal)) {
    if (failures.length >= 5) break;
    const reply = await send(numbered);
    checkPrototype([numbered]);
    const written = await spec.writes.since(mark);
    if (written.length > 0) mark = Math.max(written[written.length - 1]!.id, written.length === 50 ? await spec.writes.mark() : 0);
    if (reply.status >= 400 && written.length > 0) {
      failures.push({ index: numbered.index, fuzzCase: numbered.fuzzCase, reason: `a refused request wrote ${written.map((w) => `${w.op} ${w.tbl}`).join(', ')}`, reply });
    } else {
      for (const w of written) acceptedTables.add(w.tbl);
    }
  }

  if (failures.length > 0) {
    throw new Error(
      `${spec.name}: ${failures.length}${failures.length >= 5 ? '+' : ''} failing fuzz case(s); seed ${seed}. ` +
        `Rerun: FUZZ_SEED=${seed} FUZZ_RUNS=${numRuns} FUZZ_ONLY=${failures.map((f) => f.index).join(',')} npx vitest run <this file> -t '${spec.name}'\n` +
        failures.slice(0, 5).map(describeFailure).join('\n'),
    );
  }

  // Cross-check the triggers: every table whose content changed was written by an accepted request.
  const checksumsAfter = await spec.writes.checksums();
  const changed = Object.keys(checksumsAfter).filter((t) => checksumsAfter[t] !== checksumsBefore[t]);
  for (const table of changed) expect(acceptedTables.has(table), `${spec.name}: table ${table} changed without an accepted request`).toBe(true);
  stats.ms = performance.now() - started;
  return stats;
}
