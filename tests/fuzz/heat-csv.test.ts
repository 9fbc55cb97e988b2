/**
 * Fuzzing POST /v1/heats/import (text/csv, all or nothing), FUZZ_RUNS cases (default 1,000): a valid
 * file with one cell changed (text in a wt% column, NaN/Infinity, 1e400, negative, over 100, empty
 * required cells, 65+ character codes, NUL, lone surrogates, unknown material) or its structure
 * broken (header cells missing, doubled or unknown, '__proto__' as a column, rows too short or too
 * long, an unclosed quote, more than 5,000 rows, no rows). Known-bad files must be refused with a 4xx
 * naming rows.<row>.<column> (or the header / the row), nothing stored; files that stay valid (spreadsheet
 * formulas in grade, a byte order mark, CRLF, ';' with decimal commas) may be stored; never a 5xx.
 */
import fc from 'fast-check';
import { afterAll, describe, expect, it } from 'vitest';
import { HEAT_CSV_MAX_ROWS } from '@ausline/contracts';
import { startIngestWorld } from '../ingest-fixtures.js';
import { FUZZ_RUNS, FuzzClient, printable, runFuzz, WriteLog, type FuzzCase } from './support.js';

const world = await startIngestWorld('fuzz-heat-csv', { RATE_LIMIT_IP_PER_S: 0, RATE_LIMIT_KEY_PER_S: 0 } as object);
const client = new FuzzClient(world.api.url);
afterAll(() => client.close());
const writes = await WriteLog.install(world.db.pool);

const HEADER = ['heatNumber', 'material', 'grade', 'source', 'C', 'Si', 'Mn'];
const NUMERIC = new Set(['C', 'Si', 'Mn']);

/** RFC 4180 field: quoted when it holds the delimiter, a quote, a line break or edge spaces. */
function field(value: string, delimiter: ',' | ';'): string {
  return value.includes(delimiter) || /["\r\n]/.test(value) || value !== value.trim() ? `"${value.replace(/"/g, '""')}"` : value;
}

function toCsv(rows: string[][], delimiter: ',' | ';' = ',', lineEnd = '\n'): string {
  return rows.map((r) => r.map((c) => field(c, delimiter)).join(delimiter)).join(lineEnd) + lineEnd;
}

const validRows = fc.uniqueArray(fc.stringMatching(/^[A-Z0-9]{5,10}$/), { minLength: 1, maxLength: 5 }).chain((numbers) =>
  fc.tuple(
    ...numbers.map((n) =>
      fc.tuple(
        fc.constant(`H-${n}`),
        fc.constantFrom('STEEL', 'DUCTILE_IRON', 'ductile iron'),
        fc.constantFrom('100CrMnSi6-4', 'EN-GJS-1050-6', ''),
        fc.constantFrom('mill-certificate', 'lab', ''),
        fc.double({ min: 0.1, max: 3.9, noNaN: true }).map((v) => v.toFixed(3)),
        fc.double({ min: 0, max: 3, noNaN: true }).map((v) => v.toFixed(2)),
        fc.constantFrom('0.30', '1.05', ''),
      ),
    ),
  ),
);

/** A bad value for the column, and whether the file must then be refused. */
function cellValues(column: string): fc.Arbitrary<{ value: string; refuse: boolean }> {
  const bad = (...values: string[]) => fc.constantFrom(...values).map((value) => ({ value, refuse: true }));
  const ok = (...values: string[]) => fc.constantFrom(...values).map((value) => ({ value, refuse: false }));
  // (A lone surrogate cannot travel in UTF-8 text: the client would send U+FFFD. JSON bodies test those.)
  const everywhere = bad('\u0000', 'a\u0000b');
  if (NUMERIC.has(column)) {
    return fc.oneof(bad('abc', 'NaN', 'Infinity', '-Infinity', '1e400', '-1', '101', '0x10', '２', '1.2.3', '--1', '=1+1', '1e308'), everywhere, column === 'C' ? bad('') : ok('', ' 2 '));
  }
  if (column === 'heatNumber') return fc.oneof(bad('', 'x'.repeat(65), 'x'.repeat(10_000)), everywhere, ok('=cmd|\' /C calc\'!A0', '＝H-1', 'Ω-12', '@SUM(1+1)*cmd|\' /C calc\'!A0'));
  if (column === 'material') return fc.oneof(bad('', 'IRON', 'STEEL;DROP TABLE', 'x'.repeat(1000)), everywhere, ok('steel', ' Ductile-Iron '));
  return fc.oneof(bad('x'.repeat(65), 'x'.repeat(5_000)), everywhere, ok('', '=HYPERLINK("http://evil.test","x")', '+1-1', '-2+3', '@A1', '<script>alert(1)</script>', "'; DROP TABLE \"Heat\"; --", 'a"b', 'line\nbreak'));
}

interface Table {
  rows: string[][];
}

const cellCases = validRows.chain((rows) =>
  fc
    .tuple(fc.nat(rows.length - 1), fc.nat(HEADER.length - 1))
    .chain(([r, c]) =>
      cellValues(HEADER[c]!).map(({ value, refuse }): FuzzCase => {
        const table: Table = { rows: [HEADER, ...rows.map((row) => [...row])] };
        table.rows[r + 1]![c] = value;
        const shown = value.length > 40 ? `${JSON.stringify(value.slice(0, 40))}…(${value.length} chars)` : JSON.stringify(value);
        return printable({
          label: `cell rows.${r + 2}.${HEADER[c]} = ${shown}`,
          body: toCsv(table.rows),
          contentType: 'text/csv',
          faultPath: `rows.${r + 2}.${HEADER[c]}`,
          mustReject: refuse,
        });
      }),
    ),
);

type Structure = { label: string; build: (rows: string[][]) => string; refuse: boolean };
const STRUCTURES: Structure[] = [
  { label: 'header without material', build: (rows) => toCsv([HEADER.filter((h) => h !== 'material'), ...rows.map((r) => r.filter((_c, i) => i !== 1))]), refuse: true },
  { label: 'header without C', build: (rows) => toCsv([HEADER.filter((h) => h !== 'C'), ...rows.map((r) => r.filter((_c, i) => i !== 4))]), refuse: true },
  { label: 'header cell doubled', build: (rows) => toCsv([[...HEADER, 'Si'], ...rows.map((r) => [...r, '1'])]), refuse: true },
  { label: "unknown column 'Xx'", build: (rows) => toCsv([[...HEADER, 'Xx'], ...rows.map((r) => [...r, '1'])]), refuse: true },
  { label: "column '__proto__'", build: (rows) => toCsv([[...HEADER, '__proto__'], ...rows.map((r) => [...r, '1'])]), refuse: true },
  { label: "column 'constructor'", build: (rows) => toCsv([[...HEADER, 'constructor'], ...rows.map((r) => [...r, '1'])]), refuse: true },
  { label: 'empty header cell', build: (rows) => toCsv([[...HEADER, ''], ...rows.map((r) => [...r, '1'])]), refuse: true },
  { label: 'row with an extra cell', build: (rows) => toCsv([HEADER, ...rows.map((r, i) => (i === 0 ? [...r, 'extra'] : r))]), refuse: true },
  { label: 'row with a missing cell', build: (rows) => toCsv([HEADER, ...rows.map((r, i) => (i === rows.length - 1 ? r.slice(0, -1) : r))]), refuse: true },
  { label: 'unclosed quote', build: (rows) => `${toCsv([HEADER, ...rows])}"H-unclosed,STEEL,,,0.5,,\n`, refuse: true },
  { label: 'text after a closing quote', build: (rows) => `${toCsv([HEADER, ...rows])}"H-q"x,STEEL,,,0.5,,\n`, refuse: true },
  { label: 'header only', build: () => toCsv([HEADER]), refuse: true },
  { label: 'empty body', build: () => '', refuse: true },
  { label: 'blank lines only', build: () => '\n\n\r\n', refuse: true },
  { label: `${HEAT_CSV_MAX_ROWS + 1} rows`, build: () => toCsv([HEADER, ...Array.from({ length: HEAT_CSV_MAX_ROWS + 1 }, (_v, i) => [`H-MANY-${i}`, 'STEEL', '', '', '0.5', '', ''])]), refuse: true },
  { label: 'NUL byte in the header', build: (rows) => toCsv([[...HEADER.slice(0, -1), 'M\u0000n'], ...rows]), refuse: true },
  { label: 'byte order mark', build: (rows) => `\ufeff${toCsv([HEADER, ...rows])}`, refuse: false },
  { label: 'CRLF line ends', build: (rows) => toCsv([HEADER, ...rows], ',', '\r\n'), refuse: false },
  { label: "';' with decimal commas", build: (rows) => toCsv([HEADER, ...rows.map((r) => r.map((c, i) => (NUMERIC.has(HEADER[i]!) ? c.replace('.', ',') : c)))], ';'), refuse: false },
  { label: 'trailing blank lines', build: (rows) => `${toCsv([HEADER, ...rows])}\n\n`, refuse: false },
];

const structureCases = fc.tuple(validRows, fc.constantFrom(...STRUCTURES)).map(([rows, structure]): FuzzCase =>
  printable({ label: `structure: ${structure.label}`, body: structure.build(rows), contentType: 'text/csv', faultPath: '', mustReject: structure.refuse }),
);

const mediaTypeCases = validRows.chain((rows) =>
  fc.constantFrom('application/json', 'application/xml', 'application/octet-stream', 'text/csv; charset=latin1', 'text/plain').map((contentType): FuzzCase =>
    // latin1 and text/plain are legitimate ways to send the file (the same bytes here, ASCII only).
    printable({ label: `sent as ${contentType}`, body: toCsv([HEADER, ...rows]), contentType, faultPath: '', mustReject: !/latin1|text\/plain/.test(contentType) }),
  ),
);

describe('fuzzing the heat CSV import', () => {
  it('POST /v1/heats/import', { timeout: 600_000 }, async () => {
    const stats = await runFuzz({
      name: 'POST /v1/heats/import',
      client,
      writes,
      method: 'POST',
      path: '/v1/heats/import',
      headers: world.labKey.headers,
      cases: fc.oneof({ weight: 6, arbitrary: cellCases }, { weight: 3, arbitrary: structureCases }, { weight: 1, arbitrary: mediaTypeCases }),
      afterEach: (fuzzCase, reply) => {
        // Cell problems name the row and column (a NUL is reported by line in the body: 'body').
        if (reply.status === 400 && fuzzCase.mustReject && fuzzCase.faultPath) {
          const paths: string[] = reply.json.issues.map((i: { path: string }) => i.path);
          const row = fuzzCase.faultPath.split('.').slice(0, 2).join('.');
          expect(paths.some((p) => p === 'body' || p === fuzzCase.faultPath || p === row || p.startsWith(`${row}.`)), `issue names ${fuzzCase.faultPath}: ${paths.join(', ')}`).toBe(true);
        }
      },
    });
    console.log(`heat CSV: ${stats.cases} cases in ${Math.round(stats.ms)} ms, replies ${JSON.stringify(stats.byStatus)}`);
    if (!process.env.FUZZ_ONLY) expect(stats.cases).toBeGreaterThanOrEqual(FUZZ_RUNS);
  });
});
