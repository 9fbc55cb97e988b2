import { CHEMISTRY_ELEMENTS, HEAT_CSV_MAX_ROWS, HeatInput } from '@ausline/contracts';
import { CsvSyntaxError, parseCsv } from './csv.js';

/**
 * Turns a heat CSV file into validated HeatInput rows, or into a list of problems each naming the row
 * (as a spreadsheet numbers it, header = row 1) and the column. Pure: no I/O.
 *
 * Columns: heatNumber, material, grade, source, revisionReason (case-insensitive names), and one
 * column per element symbol (exact symbol, e.g. 'Si', 'Co'). Empty cells mean "not stated".
 */

export interface CsvIssue {
  /** 'rows.<row>.<column>', or 'header.<column>' for header problems. */
  path: string;
  message: string;
}

export interface HeatCsvRow {
  row: number;
  heat: HeatInput;
}

export type HeatCsvResult = { ok: true; heats: HeatCsvRow[] } | { ok: false; issues: CsvIssue[] };

const FIXED = ['heatNumber', 'material', 'grade', 'source', 'revisionReason'] as const;
type FixedColumn = (typeof FIXED)[number];
const ELEMENT_SET: ReadonlySet<string> = new Set(CHEMISTRY_ELEMENTS);
const NUMBER = /^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$/;
/** Stop collecting after this many problems: the first few are what a person fixes first. */
const MAX_ISSUES = 50;

type Column = { kind: 'fixed'; name: FixedColumn } | { kind: 'element'; symbol: string };

function rowIssue(row: number, column: string, message: string): CsvIssue {
  return { path: `rows.${row}.${column}`, message: `row ${row}, column ${column}: ${message}` };
}

function parseHeader(cells: string[]): { columns: Column[]; issues: CsvIssue[] } {
  const columns: Column[] = [];
  const issues: CsvIssue[] = [];
  const seen = new Set<string>();
  cells.forEach((raw, index) => {
    const name = raw.trim();
    const fixed = FIXED.find((f) => f.toLowerCase() === name.toLowerCase());
    const label = fixed ?? name;
    if (name === '') {
      issues.push({ path: `header.${index + 1}`, message: `header, column ${index + 1}: empty column name` });
      columns.push({ kind: 'fixed', name: 'grade' }); // placeholder; the file is refused anyway
      return;
    }
    if (seen.has(label)) {
      issues.push({ path: `header.${label}`, message: `header: column ${label} appears twice` });
    }
    seen.add(label);
    if (fixed) columns.push({ kind: 'fixed', name: fixed });
    else if (ELEMENT_SET.has(name)) columns.push({ kind: 'element', symbol: name });
    else {
      issues.push({
        path: `header.${name}`,
        message: `header: unknown column '${name}' (expected ${FIXED.join(', ')} or an element symbol: ${CHEMISTRY_ELEMENTS.join(', ')})`,
      });
      columns.push({ kind: 'element', symbol: name });
    }
  });
  for (const required of ['heatNumber', 'material'] as const) {
    if (!columns.some((c) => c.kind === 'fixed' && c.name === required)) {
      issues.push({ path: `header.${required}`, message: `header: column ${required} is missing` });
    }
  }
  if (!columns.some((c) => c.kind === 'element' && c.symbol === 'C')) {
    issues.push({ path: 'header.C', message: 'header: column C (carbon, wt%) is missing' });
  }
  return { columns, issues };
}

/** Maps a zod issue path of HeatInput back to the CSV column it came from. */
function columnOfPath(path: PropertyKey[]): string {
  const [first, second] = path;
  if (first === 'chemistryWtPct') return second === undefined ? 'chemistry' : String(second);
  return first === undefined ? 'row' : String(first);
}

export function parseHeatCsv(text: string): HeatCsvResult {
  let table;
  try {
    table = parseCsv(text);
  } catch (error) {
    if (error instanceof CsvSyntaxError) {
      return { ok: false, issues: [{ path: `rows.${error.row}`, message: error.message }] };
    }
    throw error;
  }
  const { columns, issues } = parseHeader(table.header.cells);
  if (issues.length > 0) return { ok: false, issues };
  if (table.rows.length === 0) {
    return { ok: false, issues: [{ path: 'rows', message: 'the file has a header but no heat rows' }] };
  }
  if (table.rows.length > HEAT_CSV_MAX_ROWS) {
    return { ok: false, issues: [{ path: 'rows', message: `at most ${HEAT_CSV_MAX_ROWS} heats per file, got ${table.rows.length}` }] };
  }

  const heats: HeatCsvRow[] = [];
  const firstRowOfHeat = new Map<string, number>();
  for (const { row, cells } of table.rows) {
    if (issues.length >= MAX_ISSUES) break;
    if (cells.length !== columns.length) {
      issues.push({ path: `rows.${row}`, message: `row ${row}: expected ${columns.length} cells like the header, found ${cells.length}` });
      continue;
    }
    const candidate: Record<string, unknown> = {};
    const chemistry: Record<string, number> = {};
    let rowOk = true;
    columns.forEach((column, index) => {
      const cell = cells[index]!.trim();
      if (cell === '') return;
      if (column.kind === 'fixed') {
        candidate[column.name] = column.name === 'material' ? cell.toUpperCase().replace(/[\s-]+/g, '_') : cell;
        return;
      }
      const normalized = table.delimiter === ';' ? cell.replace(',', '.') : cell;
      if (!NUMBER.test(normalized)) {
        issues.push(rowIssue(row, column.symbol, `expected a number (wt%), got '${cell}'`));
        rowOk = false;
        return;
      }
      chemistry[column.symbol] = Number(normalized);
    });
    if (!rowOk) continue;
    candidate['chemistryWtPct'] = chemistry;

    const parsed = HeatInput.safeParse(candidate);
    if (!parsed.success) {
      for (const issue of parsed.error.issues) {
        issues.push(rowIssue(row, columnOfPath(issue.path), issue.message));
      }
      continue;
    }
    const earlier = firstRowOfHeat.get(parsed.data.heatNumber);
    if (earlier !== undefined) {
      issues.push(rowIssue(row, 'heatNumber', `heat ${parsed.data.heatNumber} already appears in row ${earlier}`));
      continue;
    }
    firstRowOfHeat.set(parsed.data.heatNumber, row);
    heats.push({ row, heat: parsed.data });
  }
  return issues.length > 0 ? { ok: false, issues: issues.slice(0, MAX_ISSUES) } : { ok: true, heats };
}
