import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { isUserError, UserError } from '../src/core/errors.js';
import { isMissing, parseCsv, parseNumber, readCsv } from '../src/data/csv.js';
import { columnKind } from '../src/data/recipe.js';

const FILE = 'cases.csv';
const csv = (text: string): Buffer => Buffer.from(text, 'utf8');

/** The UserError thrown by `action`; fails the test when nothing (or something else) is thrown. */
async function userErrorOf(action: () => Promise<unknown>): Promise<UserError> {
  try {
    await action();
  } catch (error) {
    if (isUserError(error)) return error;
    throw error;
  }
  throw new Error('expected a UserError, nothing was thrown');
}

describe('parseCsv', () => {
  it('reads the header and keeps each row with its 1-based line (header is line 1)', async () => {
    const table = await parseCsv(csv('a,b\n1,x\n2,y\n'), FILE);
    expect(table.columns).toEqual(['a', 'b']);
    expect(table.rows).toEqual([
      { a: '1', b: 'x' },
      { a: '2', b: 'y' },
    ]);
    expect(table.lines).toEqual([2, 3]);
  });

  it('keeps the starting line of each row when quoted fields hold line breaks, and skips blank lines', async () => {
    const table = await parseCsv(csv('a,b\n"two\nlines",1\n\n"three\r\nline\nnote",2\r\nlast,3'), FILE);
    expect(table.rows.map((row) => row.a)).toEqual(['two\nlines', 'three\r\nline\nnote', 'last']);
    expect(table.lines).toEqual([2, 5, 8]);
  });

  it('keeps spaces inside quotes and drops spaces around delimiters', async () => {
    const table = await parseCsv(csv('name , code\n" padded ", 7 \n'), FILE);
    expect(table.columns).toEqual(['name', 'code']);
    expect(table.rows[0]).toEqual({ name: ' padded ', code: '7' });
  });

  it('drops a UTF-8 byte order mark from the first header name', async () => {
    expect((await parseCsv(csv('\ufeffa,b\n1,2\n'), FILE)).columns).toEqual(['a', 'b']);
  });
});

describe('CSV errors are UserErrors (E_DATA) naming the file and the line', () => {
  const cases: [string, Buffer, string][] = [
    ['an empty file', csv(''), 'cases.csv: the file is empty'],
    ['blank lines only', csv('\n\n'), 'cases.csv: the file has no rows'],
    ['a header without data rows', csv('a,b\n'), 'cases.csv: line 1: the file has a header but no data rows'],
    ['a NUL byte (binary file)', csv('a,b\n1,2\n3,\u0000\n'), 'cases.csv: line 3: contains a NUL byte'],
    ['invalid UTF-8', Buffer.concat([csv('a,b\n1,2\n'), Buffer.from([0x33, 0x2c, 0xff, 0xfe, 0x0a])]), 'cases.csv: line 3: is not valid UTF-8'],
    ['a row with too few fields', csv('a,b,c\n1,2,3\n4,5\n'), 'cases.csv: line 3: has 2 fields, the header has 3'],
    ['a row with too many fields after a quoted line break', csv('a,b\n"x\ny",1\n1,2,3\n'), 'cases.csv: line 4: has 3 fields, the header has 2'],
    ['a duplicate header name', csv('a,b,a\n1,2,3\n'), "cases.csv: line 1: header name 'a' appears twice (columns 1 and 3)"],
    ['an empty header name', csv('a,,c\n1,2,3\n'), 'cases.csv: line 1: column 2 of the header has no name'],
    ['an unclosed quote', csv('a,b\n1,2\n3,"open\n'), 'cases.csv: line 3: a quoted field opens on this line and is never closed'],
    ['an unclosed quote followed by more rows', csv('a,b\n1,2\n3,"open\n4,5\n6,7\n'), 'cases.csv: line 3: a quoted field opens on this line and is never closed'],
    ['a quote inside an unquoted field', csv('a,b\n1,2\n3,ab"c\n'), 'cases.csv: line 3: a quote appears inside an unquoted field (field 2)'],
    ['text after a closing quote', csv('a,b\n1,2\n"x"y,3\n'), 'cases.csv: line 3: text follows the closing quote of a field'],
    ['UTF-16 with a byte order mark', Buffer.from('\ufeffa,b\n1,2\n', 'utf16le'), 'cases.csv: is UTF-16 (little-endian byte order mark) text; save the CSV as UTF-8'],
    ['UTF-16 without a byte order mark', Buffer.from('a,b\n1,2\n', 'utf16le'), 'cases.csv: is UTF-16 (little-endian, no byte order mark) text; save the CSV as UTF-8'],
  ];
  it.each(cases)('rejects %s', async (_, bytes, message) => {
    const error = await userErrorOf(() => parseCsv(bytes, FILE));
    expect(error.code).toBe('E_DATA');
    expect(error.message).toContain(message);
    expect(error.message).not.toContain('\n');
  });

  describe('on disk', () => {
    let folder: string;
    beforeAll(async () => {
      folder = await mkdtemp(path.join(tmpdir(), 'rungwise-csv-'));
    });
    afterAll(async () => {
      await rm(folder, { recursive: true, force: true });
    });

    it('rejects a missing file, naming it', async () => {
      const file = path.join(folder, 'absent.csv');
      await expect(readCsv(file)).rejects.toMatchObject({ code: 'E_DATA', message: `${file}: file not found` });
    });

    it('rejects a directory, naming it', async () => {
      await expect(readCsv(folder)).rejects.toMatchObject({ code: 'E_DATA', message: `${folder}: is a directory, not a CSV file` });
    });

    it('reads a file written to disk', async () => {
      const file = path.join(folder, 'ok.csv');
      await writeFile(file, 'x,y\n1,2\n');
      expect((await readCsv(file)).rows).toEqual([{ x: '1', y: '2' }]);
    });
  });
});

describe('missing values and column typing', () => {
  it.each(['', 'NA', 'na', 'N/A', 'NaN', 'null', 'NULL', '?', '  NA '])('treats %j as missing', (value) => {
    expect(isMissing(value)).toBe(true);
  });

  it.each(['0', 'none', '-', 'NAN1'])('treats %j as a value', (value) => {
    expect(isMissing(value)).toBe(false);
  });

  it('parses plain decimals only', () => {
    expect(['1', '-2.5', '.5', '1e3', ' 7 ', '+3.'].map(parseNumber)).toEqual([1, -2.5, 0.5, 1000, 7, 3]);
    expect(['0x10', 'Infinity', '1,5', 'abc', '1e999'].map(parseNumber)).toEqual([undefined, undefined, undefined, undefined, undefined]);
  });

  it('types a column numeric when every non-missing value is a number, else categorical', () => {
    expect(columnKind(['1', 'NA', '2.5', '', '?'])).toBe('numeric');
    expect(columnKind(['1', 'two', '3'])).toBe('categorical');
    expect(columnKind(['red', 'NA'])).toBe('categorical');
  });
});
