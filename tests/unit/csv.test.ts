import { describe, expect, it } from 'vitest';
import { csvCell, csvLine } from '../../shared/csv';

// Quoting: RFC 4180 section 2 (fields with commas, quotes or line breaks are enclosed in double
// quotes; a quote inside is doubled). Formula guard: OWASP "CSV Injection" (cells starting with
// =, +, -, @, tab or carriage return are prefixed with a single quote).
describe('one CSV cell writer for every export', () => {
  it('writes numbers as numbers: a negative number is not guarded', () => {
    expect(csvCell(-1.5)).toBe('-1.5');
    expect(csvCell(-0.25)).toBe('-0.25');
    expect(csvCell(0.1 + 0.2)).toBe('0.3');
    expect(csvCell(12500)).toBe('12500');
    expect(csvCell(Number.NaN)).toBe('');
    expect(csvCell(true)).toBe('true');
    expect(csvCell(null)).toBe('');
  });

  it('guards text that a spreadsheet would run as a formula', () => {
    expect(csvCell('=SUM(A1)')).toBe("'=SUM(A1)");
    expect(csvCell('-1.5')).toBe("'-1.5"); // text, not a number
    expect(csvCell('+1')).toBe("'+1");
    expect(csvCell('@cmd')).toBe("'@cmd");
    expect(csvCell('\tx')).toBe("'\tx");
    expect(csvCell('\rx')).toBe(`"'\rx"`);
    expect(csvCell('=HYPERLINK("x")')).toBe(`"'=HYPERLINK(""x"")"`);
  });

  it('quotes per RFC 4180 and writes objects as JSON text', () => {
    expect(csvCell('B, 2')).toBe('"B, 2"');
    expect(csvCell('said "slight"')).toBe('"said ""slight"""');
    expect(csvCell('two\nlines')).toBe('"two\nlines"');
    expect(csvCell({ value: -1.5 })).toBe('"{""value"":-1.5}"');
    expect(csvLine(['A-1', -1.5, null, '=1+1'])).toBe("A-1,-1.5,,'=1+1\r\n");
  });
});
