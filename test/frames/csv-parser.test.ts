import { describe, expect, it } from 'vitest';
import { CsvParser, csvField } from '../../src/frames/index.js';

/**
 * CSV records after RFC 4180, "Common Format and MIME Type for Comma-Separated Values (CSV) Files"
 * (Shafranovich, 2005), §2: each numbered rule below is checked with the RFC's own example where it gives
 * one. The rule numbers and the example records are from memory of the RFC's text.
 */
function parse(...lines: string[]): (string[] | string | null)[] {
  const parser = new CsvParser();
  return lines.map((line) => parser.line(line));
}

describe('RFC 4180 §2', () => {
  it('rule 4: fields are separated by commas; spaces are part of a field', () => {
    expect(parse('aaa,bbb,ccc')).toEqual([['aaa', 'bbb', 'ccc']]);
    expect(parse(' a , b ')).toEqual([[' a ', ' b ']]);
  });

  it('empty fields, at the start, the middle and the end', () => {
    expect(parse(',x,,')).toEqual([['', 'x', '', '']]);
  });

  it('rule 5: fields may be enclosed in double quotes', () => {
    expect(parse('"aaa","bbb","ccc"')).toEqual([['aaa', 'bbb', 'ccc']]);
    expect(parse('"",x,""')).toEqual([['', 'x', '']]);
  });

  it('rule 6: a quoted field may hold commas and line breaks (the record then spans lines)', () => {
    expect(parse('"aaa","b', 'bb","ccc"')).toEqual([null, ['aaa', 'b\nbb', 'ccc']]);
    expect(parse('"a,b",c')).toEqual([['a,b', 'c']]);
    expect(parse('"one', '', 'three"')).toEqual([null, null, ['one\n\nthree']]);
  });

  it('rule 7: a double quote inside a quoted field is written twice', () => {
    expect(parse('"aaa","b""bb","ccc"')).toEqual([['aaa', 'b"bb', 'ccc']]);
    expect(parse('""""')).toEqual([['"']]);
  });

  it('rule 5, strictly: a quote in an unquoted field, or text after a closing quote, is malformed', () => {
    expect(parse('a,b"c')).toEqual(['a double quote inside unquoted field 2']);
    expect(parse('"a" ,b')).toEqual(['" " after the closing quote of field 1']);
  });

  it('a parser recovers after a malformed record', () => {
    expect(parse('a,b"c', 'd,e')).toEqual(['a double quote inside unquoted field 2', ['d', 'e']]);
  });

  it('the writer quotes exactly the fields rule 6 requires, and they parse back', () => {
    const fields = ['plain', 'with,comma', 'with "quote"', 'two\nlines', 'cr\rhere', ''];
    expect(fields.map(csvField)).toEqual([
      'plain',
      '"with,comma"',
      '"with ""quote"""',
      '"two\nlines"',
      '"cr\rhere"',
      '',
    ]);
    const line = fields.map(csvField).join(',');
    const [first, second] = line.split('\n');
    expect(parse(first!, second!)).toEqual([null, fields]);
  });
});
