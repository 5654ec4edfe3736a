import { describe, expect, it } from 'vitest';
import { parseCsv } from '../../src/core/csv';

describe('CSV after RFC 4180 (section 2, its examples)', () => {
  it('records end at CRLF or LF; the last may lack a line break (2.1, 2.2)', () => {
    expect(parseCsv('aaa,bbb,ccc\r\nzzz,yyy,xxx\r\n')).toEqual([
      ['aaa', 'bbb', 'ccc'],
      ['zzz', 'yyy', 'xxx'],
    ]);
    expect(parseCsv('aaa,bbb,ccc\nzzz,yyy,xxx')).toEqual([
      ['aaa', 'bbb', 'ccc'],
      ['zzz', 'yyy', 'xxx'],
    ]);
  });
  it('quoted fields may hold commas, line breaks and doubled quotes (2.5, 2.6, 2.7)', () => {
    expect(parseCsv('"aaa","b\r\nbb","ccc"\r\nzzz,yyy,xxx')).toEqual([
      ['aaa', 'b\r\nbb', 'ccc'],
      ['zzz', 'yyy', 'xxx'],
    ]);
    expect(parseCsv('"aaa","b""bb","ccc"')).toEqual([['aaa', 'b"bb', 'ccc']]);
    expect(parseCsv('file,family\n"brackets, steel/BR-1.step",bracket\n')).toEqual([
      ['file', 'family'],
      ['brackets, steel/BR-1.step', 'bracket'],
    ]);
  });
  it('empty fields stay; blank lines and a byte order mark do not make records', () => {
    expect(parseCsv('\ufeffa,,c\n\n')).toEqual([['a', '', 'c']]);
  });
});
