import { describe, expect, it } from 'vitest';
import { parseCsv } from './csv.js';
import { parseHeatCsv } from './heat-csv.js';

describe('parseCsv', () => {
  it('reads quoted fields with delimiters, doubled quotes and line breaks', () => {
    const table = parseCsv('a,b,c\r\n"x, y","say ""hi""","two\nlines"\r\n1,2,3\n');
    expect(table.header.cells).toEqual(['a', 'b', 'c']);
    expect(table.rows).toEqual([
      { row: 2, cells: ['x, y', 'say "hi"', 'two\nlines'] },
      { row: 3, cells: ['1', '2', '3'] },
    ]);
  });
  it('skips blank lines, strips a byte order mark, detects semicolons', () => {
    const table = parseCsv('\uFEFFa;b\n\n1;2\n');
    expect(table.delimiter).toBe(';');
    expect(table.rows).toEqual([{ row: 2, cells: ['1', '2'] }]);
  });
  it('refuses an unclosed quote naming the row', () => {
    expect(() => parseCsv('a,b\n1,"open\n')).toThrow(/row 2: a quoted field is not closed/);
  });
});

describe('parseHeatCsv', () => {
  const header = 'heatNumber,material,grade,source,C,Si,Mn,Cr';
  it('reads heats with optional element cells', () => {
    const result = parseHeatCsv(`${header}\nH-1,STEEL,100CrMnSi6-4,mill-certificate,0.98,1.45,1.05,1.45\nH-2,ductile iron,,,3.6,2.5,,\n`);
    expect(result.ok).toBe(true);
    if (!result.ok) return;
    expect(result.heats).toHaveLength(2);
    expect(result.heats[0]!.heat.chemistryWtPct).toEqual({ C: 0.98, Si: 1.45, Mn: 1.05, Cr: 1.45 });
    expect(result.heats[1]!.heat).toMatchObject({ heatNumber: 'H-2', material: 'DUCTILE_IRON', source: 'mill-certificate', chemistryWtPct: { C: 3.6, Si: 2.5 } });
    expect(result.heats[1]!.heat.grade).toBeUndefined();
  });
  it('names row and column of a bad number and of a negative value', () => {
    const result = parseHeatCsv(`${header}\nH-1,STEEL,,,0.98,abc,1.05,\nH-2,STEEL,,,0.5,1.4,-0.2,\n`);
    expect(result.ok).toBe(false);
    if (result.ok) return;
    expect(result.issues.map((i) => i.path)).toEqual(['rows.2.Si', 'rows.3.Mn']);
    expect(result.issues[0]!.message).toBe("row 2, column Si: expected a number (wt%), got 'abc'");
    expect(result.issues[1]!.message).toMatch(/^row 3, column Mn: wt% must not be negative/);
  });
  it('names an unknown material and a row with the wrong cell count', () => {
    const result = parseHeatCsv(`${header}\nH-1,BRASS,,,0.98,,,\nH-2,STEEL,,,0.5\n`);
    if (result.ok) throw new Error('expected failure');
    expect(result.issues.map((i) => i.path)).toEqual(['rows.2.material', 'rows.3']);
  });
  it('refuses unknown or missing columns in the header', () => {
    const unknown = parseHeatCsv('heatNumber,material,C,Xq\nH-1,STEEL,0.5,1\n');
    if (unknown.ok) throw new Error('expected failure');
    expect(unknown.issues.map((i) => i.path)).toEqual(['header.Xq']);
    const missing = parseHeatCsv('heatNumber,material,Si\nH-1,STEEL,1\n');
    if (missing.ok) throw new Error('expected failure');
    expect(missing.issues.map((i) => i.path)).toEqual(['header.C']);
  });
  it('refuses the same heat twice in one file', () => {
    const result = parseHeatCsv('heatNumber,material,C\nH-1,STEEL,0.5\nH-1,STEEL,0.6\n');
    if (result.ok) throw new Error('expected failure');
    expect(result.issues).toEqual([{ path: 'rows.3.heatNumber', message: 'row 3, column heatNumber: heat H-1 already appears in row 2' }]);
  });
  it('accepts decimal commas in a semicolon file', () => {
    const result = parseHeatCsv('heatNumber;material;C;Si\nH-1;STEEL;0,98;1,45\n');
    if (!result.ok) throw new Error(JSON.stringify(result.issues));
    expect(result.heats[0]!.heat.chemistryWtPct).toEqual({ C: 0.98, Si: 1.45 });
  });
  it('refuses a chemistry over 100 wt% naming the chemistry', () => {
    const result = parseHeatCsv('heatNumber,material,C,Si,Cr\nH-1,STEEL,1,60,50\n');
    if (result.ok) throw new Error('expected failure');
    expect(result.issues[0]!.path).toBe('rows.2.chemistry');
  });
});
