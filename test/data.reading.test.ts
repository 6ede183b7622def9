import { createHash } from 'node:crypto';
import { mkdir, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { DataEvent } from '../src/data/events.js';
import { prepareData } from '../src/data/prepare.js';
import { encodeFeatures } from '../src/data/recipe.js';
import { TEXT_SHARE_IN_NUMERIC } from '../src/data/typing.js';
import { dataSchema, type DataSettings } from '../src/study/definition.js';

/**
 * How odd but readable CSVs are read (README, "How the CSV is read"): each case checks the values
 * the recipe and the encoded matrices end up with, and the note that states the reading.
 */
let folder: string;
let studyFile: string;

beforeAll(async () => {
  folder = await mkdtemp(path.join(tmpdir(), 'rungwise-reading-'));
  studyFile = path.join(folder, 'study.json');
});
afterAll(async () => {
  await rm(folder, { recursive: true, force: true });
});

async function withCsv(name: string, content: string | Buffer, settings: Partial<DataSettings> = {}): Promise<DataSettings> {
  await writeFile(path.join(folder, name), content);
  return dataSchema.parse({ csv: name, target: 'label', task: 'binary', testFraction: 0, ...settings });
}

/** `rows` rows of `x` (the row number unless `cell` gives another spelling) and a two-class label. */
function csv(rows: number, cell: (row: number) => string | undefined = () => undefined, delimiter = ','): string {
  const lines = [['x', 'label'].join(delimiter)];
  for (let row = 1; row <= rows; row++) lines.push([cell(row) ?? String(row), row % 2 === 0 ? 'even' : 'odd'].join(delimiter));
  return `${lines.join('\n')}\n`;
}

const population = (values: number[]): { mean: number; std: number } => {
  const mean = values.reduce((a, b) => a + b, 0) / values.length;
  return { mean, std: Math.sqrt(values.reduce((sum, v) => sum + (v - mean) ** 2, 0) / values.length) };
};

/** The training rows' x values as read, from the recipe-independent line numbers: row r sits on line r + 1. */
function trainingValues(lines: Int32Array, value: (row: number) => number | undefined): number[] {
  return Array.from(lines, (line) => value(line - 1)).filter((v): v is number => v !== undefined);
}

describe('numeric columns with a few odd cells stay numeric; the odd cells are read as missing and named', () => {
  it.each([
    ['Infinity', 'Infinity'],
    ['-inf', '-inf'],
    ['1e999 (overflows)', '1e999'],
  ])('%s', async (_, spelling) => {
    const settings = await withCsv('infinite.csv', csv(40, (row) => (row === 7 ? spelling : undefined)));
    const { data, notes, summary } = await prepareData(settings, studyFile);
    expect(data.recipe.features[0]).toMatchObject({ kind: 'numeric', name: 'x' });
    expect(data.recipe.inputCount).toBe(1);
    expect(summary.missingValues).toBe(1);
    // The recipe's statistics come from the numbers alone: row 7 does not count.
    const expected = population(trainingValues(data.train.lines!, (row) => (row === 7 ? undefined : row)));
    expect(data.recipe.features[0]).toMatchObject({ mean: expected.mean });
    expect(notes).toEqual([expect.stringContaining(`column 'x' is numeric; 1 cell (not finite) read as missing: '${spelling}' on line 8`)]);
  });

  it(`text in at most ${TEXT_SHARE_IN_NUMERIC * 100}% of the values: numeric, the text cells read as missing with their lines`, async () => {
    const settings = await withCsv('typo.csv', csv(40, (row) => (row === 3 ? 'twelve' : row === 30 ? 'n.a.' : undefined)));
    const { data, notes } = await prepareData(settings, studyFile);
    expect(data.recipe.features[0]!.kind).toBe('numeric');
    expect(notes).toEqual([expect.stringContaining("2 cells (text) read as missing: 'twelve' on line 4; 'n.a.' on line 31")]);
  });

  it('text in more of the values: categorical, every value a category as written, and said so', async () => {
    // Every one of the 20 values differs: maxDistinctShare 1 lets the column through the distinct-value limit (data.feature-checks.test.ts).
    const settings = await withCsv('codes.csv', csv(20, (row) => (row % 4 === 0 ? `A${row}` : row === 1 ? '01' : undefined)), { maxDistinctShare: 1 });
    const { data, notes } = await prepareData(settings, studyFile);
    const feature = data.recipe.features[0]!;
    expect(feature.kind).toBe('categorical');
    // Number-like values keep their spelling ('01', not 1).
    if (feature.kind === 'categorical') expect(feature.categories.filter((c) => c === '01' || c === '1')).toEqual(data.train.lines!.includes(2) ? ['01'] : []);
    expect(notes).toEqual([expect.stringContaining("column 'x': read as categorical: 5 values of 20 are not numbers ('A4' on line 5; 'A8' on line 9)")]);
  });

  it("'NaN', '?' and other spellings of missing are read as missing and named; empty cells silently", async () => {
    const settings = await withCsv('gaps.csv', csv(30, (row) => (row === 2 ? 'NaN' : row === 5 || row === 9 ? '?' : row === 11 ? '' : undefined)));
    const { data, notes, summary } = await prepareData(settings, studyFile);
    expect(data.recipe.features[0]!.kind).toBe('numeric');
    expect(summary.missingValues).toBe(4);
    expect(notes).toEqual([expect.stringContaining("column 'x': 3 cells read as missing: 'NaN' on line 3; '?' on lines 6, 10")]);
  });

  it('a column with no value in any row is an error naming it', async () => {
    const settings = await withCsv('empty-column.csv', csv(10, () => 'NA'));
    await expect(prepareData(settings, studyFile)).rejects.toThrow(`${studyFile}: data.features: column 'x' of `);
    await expect(prepareData(settings, studyFile)).rejects.toThrow(/has no value in any of its 10 rows/);
  });
});

describe('decimal commas', () => {
  it('a column written only with decimal commas is read as numbers, and the note gives an example', async () => {
    const settings = await withCsv('comma.csv', csv(12, (row) => `"${row},5"`));
    const { data, notes } = await prepareData(settings, studyFile);
    const expected = population(trainingValues(data.train.lines!, (row) => row + 0.5));
    expect(data.recipe.features[0]).toMatchObject({ kind: 'numeric', ...expected });
    expect(notes).toEqual([expect.stringContaining("column 'x': 12 values written with a decimal comma read as numbers ('1,5' on line 2 as 1.5)")]);
  });

  it('a decimal comma among decimal points is read as missing and named', async () => {
    const settings = await withCsv('mixed-marks.csv', csv(20, (row) => (row === 4 ? '"3,5"' : `${row}.25`)));
    const { data, notes } = await prepareData(settings, studyFile);
    expect(data.recipe.features[0]!.kind).toBe('numeric');
    expect(notes).toEqual([expect.stringContaining("1 cell (a decimal comma among decimal points) read as missing: '3,5' on line 5")]);
  });
});

describe('delimiters other than a comma are found from the header line', () => {
  it.each([
    ['semicolon', ';', "';'"],
    ['tab', '\t', 'tab'],
  ])('%s', async (_, delimiter, name) => {
    const settings = await withCsv(`delimited-${name}.csv`, csv(12, (row) => `${row},25`, delimiter));
    const { data, notes } = await prepareData(settings, studyFile);
    expect(data.recipe.features.map((f) => f.name)).toEqual(['x']);
    expect(data.recipe.features[0]).toMatchObject({ kind: 'numeric', ...population(trainingValues(data.train.lines!, (row) => row + 0.25)) });
    expect(notes[0]).toContain(`read with ${name} as the delimiter`);
    expect(notes[1]).toContain('decimal comma');
  });
});

describe('files that are not what they seem', () => {
  it('a UTF-16 CSV is named as such, with a request for UTF-8', async () => {
    const settings = await withCsv('utf16.csv', Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(csv(10), 'utf16le')]));
    await expect(prepareData(settings, studyFile)).rejects.toThrow(/utf16\.csv: is UTF-16 \(little-endian byte order mark\) text; save the CSV as UTF-8$/);
  });

  it('a CSV path that is a directory names the study file, data.csv and the path', async () => {
    await mkdir(path.join(folder, 'a-folder.csv'), { recursive: true });
    const settings = dataSchema.parse({ csv: 'a-folder.csv', target: 'label', task: 'binary' });
    await expect(prepareData(settings, studyFile)).rejects.toThrow(new RegExp(`^${studyFile.replaceAll('.', '\\.')}: data\\.csv: .*a-folder\\.csv is a directory; expected a CSV file`));
  });

  it('an unterminated quote is reported at the line where it opens', async () => {
    const settings = await withCsv('open-quote.csv', `${csv(10).trimEnd()}\n"11,odd\n12,even\n13,odd\n`);
    await expect(prepareData(settings, studyFile)).rejects.toThrow(/open-quote\.csv: line 12: a quoted field opens on this line and is never closed/);
  });

  it('a header of 2,000 columns is read, and messages list only the first names', async () => {
    const names = Array.from({ length: 2000 }, (_, c) => `feature_${c}`);
    const rows = Array.from({ length: 12 }, (_, r) => [...names.map((_, c) => String((r * c) % 17)), r % 2 ? 'a' : 'b'].join(','));
    const settings = await withCsv('wide.csv', `${[...names, 'label'].join(',')}\n${rows.join('\n')}\n`);
    const { data } = await prepareData(settings, studyFile);
    expect(data.recipe.inputCount).toBe(2000);
    const wrong = { ...settings, target: 'nope' };
    await expect(prepareData(wrong, studyFile)).rejects.toThrow(/\(columns: feature_0, .*feature_11 and 1989 more\)$/);
  });
});

describe('progress and interruption', () => {
  it('reports reading progress up to the file size, each preparation step, then ready', async () => {
    const settings = await withCsv('progress.csv', csv(200));
    const events: DataEvent[] = [];
    await prepareData(settings, studyFile, { onDataEvent: (event) => events.push(event) });
    const reading = events.filter((e) => e.type === 'reading');
    expect(reading.length).toBeGreaterThan(0);
    expect(reading.at(-1)).toMatchObject({ bytesRead: Buffer.byteLength(csv(200)), totalBytes: Buffer.byteLength(csv(200)) });
    expect(new Set(events.filter((e) => e.type === 'preparing').map((e) => e.type === 'preparing' && e.step))).toEqual(new Set(['typing', 'splitting', 'encoding']));
    expect(events.at(-1)).toMatchObject({ type: 'ready', rows: 200, columns: 2 });
  });

  it("gives the SHA-256 of the file's bytes as read, byte order mark included", async () => {
    const settings = await withCsv('hashed.csv', `\ufeff${csv(30)}`);
    const { csvSha256 } = await prepareData(settings, studyFile);
    expect(csvSha256).toBe(createHash('sha256').update(await readFile(path.join(folder, 'hashed.csv'))).digest('hex'));
  });

  it('stops with the signal while reading, and while preparing', async () => {
    const settings = await withCsv('abort.csv', csv(200));
    const whileReading = new AbortController();
    await expect(prepareData(settings, studyFile, { signal: whileReading.signal, onDataEvent: (e) => e.type === 'reading' && whileReading.abort() })).rejects.toMatchObject({ name: 'AbortError' });
    const whilePreparing = new AbortController();
    await expect(prepareData(settings, studyFile, { signal: whilePreparing.signal, onDataEvent: (e) => e.type === 'preparing' && whilePreparing.abort() })).rejects.toMatchObject({ name: 'AbortError' });
  });
});

describe('rows given to a model (predict) are read as a study reads them', () => {
  it('decimal commas in a column without points, non-finite values as missing, other text an error', async () => {
    const settings = await withCsv('predict-base.csv', csv(20));
    const { recipe } = (await prepareData(settings, studyFile)).data;
    const feature = recipe.features[0]!;
    if (feature.kind !== 'numeric') throw new Error('x should be numeric');
    const x = encodeFeatures(recipe, [{ x: '3,5' }, { x: 'Infinity' }, { x: '7' }], 'new.csv');
    expect(Array.from(x)).toEqual([Math.fround((3.5 - feature.mean) / feature.std), 0, Math.fround((7 - feature.mean) / feature.std)]);
    // With a point elsewhere in the column, a comma is not a decimal mark.
    expect(() => encodeFeatures(recipe, [{ x: '3,5' }, { x: '7.5' }], 'new.csv', [2, 3])).toThrow("new.csv: line 2: column 'x' holds '3,5', expected a number or a missing value");
  });
});
