import { describe, expect, it } from 'vitest';
import { splitCsvRecord } from '../../src/window/csv-record.js';

// Expected splits follow RFC 4180 (quoted fields, "" for a quote), worked by hand.
describe('splitCsvRecord', () => {
  it('splits plain fields and trims unquoted padding', () => {
    expect(splitCsvRecord('a,b,c')).toEqual(['a', 'b', 'c']);
    expect(splitCsvRecord(' a ,\tb')).toEqual(['a', 'b']);
    expect(splitCsvRecord('a,,')).toEqual(['a', '', '']);
    expect(splitCsvRecord('')).toEqual(['']);
  });

  it('keeps commas and doubled quotes inside quotes, and quoted padding', () => {
    expect(splitCsvRecord('"a,b",c')).toEqual(['a,b', 'c']);
    expect(splitCsvRecord('"say ""hi""",x')).toEqual(['say "hi"', 'x']);
    expect(splitCsvRecord('" padded ",1')).toEqual([' padded ', '1']);
    expect(splitCsvRecord('x,""')).toEqual(['x', '']);
  });

  it('returns null for broken quoting', () => {
    expect(splitCsvRecord('"open,1')).toBeNull();
    expect(splitCsvRecord('"a"b,1')).toBeNull();
    expect(splitCsvRecord('a"b,1')).toBeNull();
  });
});
