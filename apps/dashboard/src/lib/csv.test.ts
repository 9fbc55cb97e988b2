import { describe, expect, it } from 'vitest';
import { csvField, parseCsv, toCsv } from './csv.js';

// Quoting rules: RFC 4180 §2 (fields with comma, quote or line break are quoted; quotes doubled).
describe('CSV', () => {
  it('quotes what RFC 4180 says must be quoted', () => {
    expect(csvField('plain')).toBe('plain');
    expect(csvField('a,b')).toBe('"a,b"');
    expect(csvField('say "hot"')).toBe('"say ""hot"""');
    expect(csvField('two\nlines')).toBe('"two\nlines"');
    expect(csvField(370.5)).toBe('370.5');
    expect(csvField(null)).toBe('');
    expect(csvField(Number.NaN)).toBe('');
  });

  it('defuses text a spreadsheet would run as a formula', () => {
    expect(csvField('=HYPERLINK("x")')).toBe(`"'=HYPERLINK(""x"")"`);
    expect(csvField('+1')).toBe("'+1");
    expect(csvField('-5 °C')).toBe("'-5 °C");
    expect(csvField('@SUM(A1)')).toBe("'@SUM(A1)");
    expect(csvField(-5)).toBe('-5');
  });

  it('round-trips through parseCsv', () => {
    const rows = [
      ['a', 'b, c', 'd "e"'],
      ['x\r\ny', '', 'z'],
    ];
    const text = toCsv(['one', 'two', 'three'], rows);
    expect(text.endsWith('\r\n')).toBe(true);
    expect(parseCsv(text)).toEqual([['one', 'two', 'three'], ...rows]);
  });
});
