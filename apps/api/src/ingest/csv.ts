/**
 * A small RFC 4180 CSV reader: quoted fields, doubled quotes inside them, CRLF or LF line ends, line
 * breaks inside quoted fields. Rows are numbered as a spreadsheet shows them (the header is row 1), so
 * an error message points at the row a person sees when they open the file.
 *
 * The delimiter is ',' unless the header holds ';' and no ',' (spreadsheets set to a decimal-comma
 * locale export that way).
 */

export interface CsvRow {
  /** 1-based record number; the header is row 1. */
  row: number;
  cells: string[];
}

export interface CsvTable {
  delimiter: ',' | ';';
  header: CsvRow;
  rows: CsvRow[];
}

export class CsvSyntaxError extends Error {
  constructor(
    readonly row: number,
    message: string,
  ) {
    super(message);
  }
}

export function detectDelimiter(text: string): ',' | ';' {
  const firstLine = text.slice(0, text.search(/\r?\n|$/));
  return firstLine.includes(';') && !firstLine.includes(',') ? ';' : ',';
}

/** Parses the whole text. Blank lines are skipped (a trailing newline is not a row). */
export function parseCsv(input: string): CsvTable {
  const text = input.charCodeAt(0) === 0xfeff ? input.slice(1) : input; // byte order mark from spreadsheets
  const delimiter = detectDelimiter(text);
  const records: CsvRow[] = [];
  let cells: string[] = [];
  let cell = '';
  let quoted = false;
  let cellWasQuoted = false;
  let recordNo = 1;
  let i = 0;

  const endCell = (): void => {
    cells.push(cellWasQuoted ? cell : cell.trim());
    cell = '';
    cellWasQuoted = false;
  };
  const endRecord = (): void => {
    endCell();
    const blank = cells.length === 1 && cells[0] === '';
    if (!blank) records.push({ row: recordNo++, cells });
    cells = [];
  };

  while (i < text.length) {
    const ch = text[i]!;
    if (quoted) {
      if (ch === '"') {
        if (text[i + 1] === '"') {
          cell += '"';
          i += 2;
          continue;
        }
        quoted = false;
        i += 1;
        // After a closing quote only spaces, the delimiter or a line end may follow.
        while (text[i] === ' ' || text[i] === '\t') i += 1;
        if (i < text.length && text[i] !== delimiter && text[i] !== '\n' && text[i] !== '\r') {
          throw new CsvSyntaxError(recordNo, `row ${recordNo}: unexpected character after a closing quote`);
        }
        continue;
      }
      cell += ch;
      i += 1;
      continue;
    }
    if (ch === '"' && cell.trim() === '') {
      quoted = true;
      cellWasQuoted = true;
      cell = '';
      i += 1;
      continue;
    }
    if (ch === delimiter) {
      endCell();
      i += 1;
      continue;
    }
    if (ch === '\r' || ch === '\n') {
      endRecord();
      i += ch === '\r' && text[i + 1] === '\n' ? 2 : 1;
      continue;
    }
    cell += ch;
    i += 1;
  }
  if (quoted) throw new CsvSyntaxError(recordNo, `row ${recordNo}: a quoted field is not closed`);
  if (cell !== '' || cells.length > 0 || cellWasQuoted) endRecord();

  const [header, ...rows] = records;
  if (!header) throw new CsvSyntaxError(1, 'the file is empty (expected a header row)');
  return { delimiter, header, rows };
}
