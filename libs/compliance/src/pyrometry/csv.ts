// CSV upload of accuracy tests and uniformity surveys, in a simple column layout of our own.
//
// Common rules for both files:
// - UTF-8, comma-separated, one record per line (LF or CRLF); a leading byte-order mark is ignored.
// - Lines that are empty or start with '#' are ignored (room for notes); they still count in the
//   row numbers, so "row 7" is line 7 of the file as an editor shows it.
// - The first other line is the header: column names from the lists below, in any order, case
//   and surrounding spaces ignored. Unknown, repeated or missing required columns are errors.
// - A field may be wrapped in double quotes ("" inside quotes is one quote); quoted fields may not
//   span lines.
// - Numbers use a point as decimal separator, no thousands separators: 871.4, -0.3, 1e3.
// - Instants are ISO 8601 with seconds optional and an explicit offset: 2025-03-04T08:15:00Z or
//   2025-03-04T09:15:00+01:00. A local time without offset is refused, because it is ambiguous
//   across time zones and daylight-saving changes.
// - Every error names the row (line number) and the column (name and 1-based position).
//
// Accuracy test file, one row per accuracy test reading:
//   equipment_id, sensor_id, tested_at, setpoint_c, instrument_reading_c, test_sensor_id,
//   test_reading_c                                                    (required)
//   test_instrument_id, tip_distance_mm                               (optional)
// Uniformity survey file, one row per reading of one location:
//   location_id, test_sensor_id, at, reading_c                        (all required)
// Calibration corrections are not in the files: they come from the sensors' certificates on record.

export interface CsvError {
  /** 1-based line number in the file. */
  readonly row: number;
  /** Column name as in our layout, or null for a whole-row problem. */
  readonly column: string | null;
  /** 1-based position of the column in the file's header, or null. */
  readonly columnIndex: number | null;
  readonly message: string;
}

export type CsvResult<T> = { readonly ok: true; readonly value: T } | { readonly ok: false; readonly errors: readonly CsvError[] };

const MAX_ERRORS = 100;

interface ColumnSpec {
  readonly name: string;
  readonly required: boolean;
  readonly type: 'text' | 'number' | 'instant';
}

type Cell = string | number | Date | null;

interface ParsedTable {
  readonly rows: readonly { readonly row: number; readonly values: Readonly<Record<string, Cell>> }[];
  readonly columnIndex: Readonly<Record<string, number>>;
}

function splitLine(line: string): { fields: string[] } | { error: string } {
  const fields: string[] = [];
  let i = 0;
  for (;;) {
    let field = '';
    // Spaces before an opening quote are allowed and dropped.
    while (line[i] === ' ' || line[i] === '\t') i += 1;
    if (line[i] === '"') {
      i += 1;
      for (;;) {
        if (i >= line.length) return { error: 'a quoted field is not closed on this line' };
        if (line[i] === '"') {
          if (line[i + 1] === '"') {
            field += '"';
            i += 2;
            continue;
          }
          i += 1;
          break;
        }
        field += line[i];
        i += 1;
      }
      while (line[i] === ' ' || line[i] === '\t') i += 1;
      if (i < line.length && line[i] !== ',') return { error: 'text after a closing quote' };
    } else {
      const end = line.indexOf(',', i);
      field = (end === -1 ? line.slice(i) : line.slice(i, end)).trim();
      if (field.includes('"')) return { error: 'a quote inside an unquoted field' };
      i = end === -1 ? line.length : end;
    }
    fields.push(field);
    if (i >= line.length) return { fields };
    i += 1; // the comma
  }
}

const NUMBER = /^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$/;
const INSTANT = /^(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2})(?::(\d{2})(\.\d{1,9})?)?(Z|[+-](\d{2}):(\d{2}))$/;

export function parseInstant(text: string): Date | string {
  const m = INSTANT.exec(text);
  if (!m) return 'not an ISO 8601 instant with offset (e.g. 2025-03-04T08:15:00Z)';
  const [year, month, day, hour, minute, second] = [m[1], m[2], m[3], m[4], m[5], m[6] ?? '0'].map(Number);
  const daysInMonth = new Date(Date.UTC(year, month, 0)).getUTCDate();
  // Date would roll 2025-02-30 over into March silently; refuse it instead.
  if (month < 1 || month > 12 || day < 1 || day > daysInMonth) return `no such date ${m[1]}-${m[2]}-${m[3]}`;
  if (hour > 23 || minute > 59 || second > 59) return `no such time ${m[4]}:${m[5]}:${m[6] ?? '00'}`;
  if (m[8] !== 'Z' && (Number(m[9]) > 23 || Number(m[10]) > 59)) return `no such offset ${m[8]}`;
  const date = new Date(text);
  return Number.isNaN(date.getTime()) ? 'not a valid instant' : date;
}

function parseTable(text: string, specs: readonly ColumnSpec[]): CsvResult<ParsedTable> {
  const errors: CsvError[] = [];
  const push = (e: CsvError): boolean => {
    errors.push(e);
    return errors.length >= MAX_ERRORS;
  };
  const lines = text.replace(/^\uFEFF/, '').split(/\r?\n/);
  let header: string[] | null = null;
  let headerRow = 0;
  const columnIndex: Record<string, number> = {};
  const rows: { row: number; values: Record<string, Cell> }[] = [];

  for (let n = 0; n < lines.length; n += 1) {
    const row = n + 1;
    const line = lines[n];
    if (line.trim() === '' || line.trimStart().startsWith('#')) continue;
    const split = splitLine(line);
    if ('error' in split) {
      if (push({ row, column: null, columnIndex: null, message: split.error })) break;
      continue;
    }
    if (header === null) {
      header = split.fields.map((f) => f.trim().toLowerCase());
      headerRow = row;
      header.forEach((name, i) => {
        const spec = specs.find((s) => s.name === name);
        if (!spec) {
          push({ row, column: name || null, columnIndex: i + 1, message: `unknown column ${JSON.stringify(name)}; expected ${specs.map((s) => s.name).join(', ')}` });
        } else if (name in columnIndex) {
          push({ row, column: name, columnIndex: i + 1, message: `column ${name} appears twice (first at position ${columnIndex[name]})` });
        } else {
          columnIndex[name] = i + 1;
        }
      });
      for (const spec of specs) {
        if (spec.required && !(spec.name in columnIndex)) push({ row, column: spec.name, columnIndex: null, message: `required column ${spec.name} is missing` });
      }
      // Without a sound header the rows cannot be read column by column.
      if (errors.length > 0) return { ok: false, errors };
      continue;
    }
    if (split.fields.length !== header.length) {
      if (push({ row, column: null, columnIndex: null, message: `expected ${header.length} fields as in the header (row ${headerRow}), got ${split.fields.length}` })) break;
      continue;
    }
    const values: Record<string, Cell> = {};
    let stop = false;
    for (const spec of specs) {
      const index = columnIndex[spec.name];
      if (index === undefined) {
        values[spec.name] = null;
        continue;
      }
      const raw = split.fields[index - 1].trim();
      const at = { row, column: spec.name, columnIndex: index };
      if (raw === '') {
        if (spec.required) stop = push({ ...at, message: 'required value is empty' }) || stop;
        values[spec.name] = null;
        continue;
      }
      if (spec.type === 'number') {
        const value = NUMBER.test(raw) ? Number(raw) : Number.NaN;
        if (!Number.isFinite(value)) stop = push({ ...at, message: `not a number: ${JSON.stringify(raw)} (use a point as decimal separator)` }) || stop;
        values[spec.name] = value;
      } else if (spec.type === 'instant') {
        const value = parseInstant(raw);
        if (typeof value === 'string') stop = push({ ...at, message: `${value}: ${JSON.stringify(raw)}` }) || stop;
        values[spec.name] = typeof value === 'string' ? null : value;
      } else {
        values[spec.name] = raw;
      }
    }
    if (stop) break;
    rows.push({ row, values });
  }
  if (header === null) return { ok: false, errors: [{ row: 1, column: null, columnIndex: null, message: 'the file has no header line' }] };
  if (errors.length >= MAX_ERRORS) errors.push({ row: 0, column: null, columnIndex: null, message: `stopped after ${MAX_ERRORS} errors` });
  if (errors.length > 0) return { ok: false, errors };
  if (rows.length === 0) return { ok: false, errors: [{ row: headerRow, column: null, columnIndex: null, message: 'the file has a header but no data rows' }] };
  return { ok: true, value: { rows, columnIndex } };
}

export const ACCURACY_TEST_CSV_COLUMNS: readonly ColumnSpec[] = [
  { name: 'equipment_id', required: true, type: 'text' },
  { name: 'sensor_id', required: true, type: 'text' },
  { name: 'tested_at', required: true, type: 'instant' },
  { name: 'setpoint_c', required: true, type: 'number' },
  { name: 'instrument_reading_c', required: true, type: 'number' },
  { name: 'test_sensor_id', required: true, type: 'text' },
  { name: 'test_reading_c', required: true, type: 'number' },
  { name: 'test_instrument_id', required: false, type: 'text' },
  { name: 'tip_distance_mm', required: false, type: 'number' },
];

export interface AccuracyTestCsvRow {
  readonly row: number;
  readonly equipmentId: string;
  readonly sensorId: string;
  readonly testedAt: Date;
  readonly setpointC: number;
  readonly instrumentReadingC: number;
  readonly testSensorId: string;
  readonly testSensorReadingC: number;
  readonly testInstrumentId: string | null;
  readonly tipDistanceMm: number | null;
}

export function parseAccuracyTestCsv(text: string): CsvResult<AccuracyTestCsvRow[]> {
  const table = parseTable(text, ACCURACY_TEST_CSV_COLUMNS);
  if (!table.ok) return table;
  const errors: CsvError[] = [];
  const rows = table.value.rows.map(({ row, values: v }) => {
    const tip = v.tip_distance_mm as number | null;
    if (tip !== null && tip < 0) {
      errors.push({ row, column: 'tip_distance_mm', columnIndex: table.value.columnIndex.tip_distance_mm, message: 'must not be negative' });
    }
    return {
      row,
      equipmentId: v.equipment_id as string,
      sensorId: v.sensor_id as string,
      testedAt: v.tested_at as Date,
      setpointC: v.setpoint_c as number,
      instrumentReadingC: v.instrument_reading_c as number,
      testSensorId: v.test_sensor_id as string,
      testSensorReadingC: v.test_reading_c as number,
      testInstrumentId: (v.test_instrument_id as string | null) ?? null,
      tipDistanceMm: tip,
    };
  });
  return errors.length ? { ok: false, errors } : { ok: true, value: rows };
}

export const UNIFORMITY_SURVEY_CSV_COLUMNS: readonly ColumnSpec[] = [
  { name: 'location_id', required: true, type: 'text' },
  { name: 'test_sensor_id', required: true, type: 'text' },
  { name: 'at', required: true, type: 'instant' },
  { name: 'reading_c', required: true, type: 'number' },
];

export interface UniformitySurveyCsv {
  /** Locations in order of first appearance, each with the one test sensor it used. */
  readonly locations: readonly { readonly locationId: string; readonly testSensorId: string; readonly firstRow: number }[];
  readonly readings: readonly { readonly row: number; readonly locationId: string; readonly at: Date; readonly readingC: number }[];
}

export function parseUniformitySurveyCsv(text: string): CsvResult<UniformitySurveyCsv> {
  const table = parseTable(text, UNIFORMITY_SURVEY_CSV_COLUMNS);
  if (!table.ok) return table;
  const col = table.value.columnIndex;
  const errors: CsvError[] = [];
  const locations = new Map<string, { locationId: string; testSensorId: string; firstRow: number }>();
  const seen = new Map<string, number>();
  const readings = table.value.rows.map(({ row, values: v }) => {
    const locationId = v.location_id as string;
    const testSensorId = v.test_sensor_id as string;
    const at = v.at as Date;
    const known = locations.get(locationId);
    if (!known) {
      locations.set(locationId, { locationId, testSensorId, firstRow: row });
    } else if (known.testSensorId !== testSensorId) {
      // One location is one sensor for the whole survey; a change mid-survey needs its own record.
      errors.push({
        row,
        column: 'test_sensor_id',
        columnIndex: col.test_sensor_id,
        message: `location ${locationId} used test sensor ${known.testSensorId} in row ${known.firstRow}, here ${testSensorId}`,
      });
    }
    const key = `${locationId}@${at.getTime()}`;
    const first = seen.get(key);
    if (first !== undefined) {
      errors.push({ row, column: 'at', columnIndex: col.at, message: `second reading for location ${locationId} at ${at.toISOString()} (first in row ${first})` });
    } else {
      seen.set(key, row);
    }
    return { row, locationId, at, readingC: v.reading_c as number };
  });
  return errors.length ? { ok: false, errors } : { ok: true, value: { locations: [...locations.values()], readings } };
}
