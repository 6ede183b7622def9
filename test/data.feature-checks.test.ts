/**
 * Columns that should not be features (README, "Columns that should not be features"): a text column
 * with too many categories is refused unless data.features lists it, data.exclude leaves columns out,
 * and columns that look like dates or identifiers are named in a warning before training.
 */
import { existsSync } from 'node:fs';
import { mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { DataEvent } from '../src/data/events.js';
import { hasIdentifierName, isDateSpelling } from '../src/data/feature-checks.js';
import { prepareData } from '../src/data/prepare.js';
import { dataSchema, type DataSettings } from '../src/study/definition.js';
import { runCli } from './helpers/cli.js';
import { PENGUINS_TARGET, writePenguinsCsv } from './helpers/datasets.js';

let folder: string;
let studyFile: string;

beforeAll(async () => {
  folder = await mkdtemp(path.join(tmpdir(), 'rungwise-feature-checks-'));
  await mkdir(path.join(folder, 'data'));
  studyFile = path.join(folder, 'study.json');
});
afterAll(async () => {
  await rm(folder, { recursive: true, force: true });
});

async function withCsv(name: string, lines: readonly string[], settings: Record<string, unknown>): Promise<DataSettings> {
  await writeFile(path.join(folder, 'data', name), lines.join('\n') + '\n');
  return dataSchema.parse({ csv: `data/${name}`, target: 'kind', task: 'binary', ...settings });
}

/**
 * 60 rows: a number, a site of 3 categories, a free-text `remark` of 40 distinct values (rows 41 to 60
 * repeat the first 20), a `visit_date` of 10 distinct ISO days, and the class a/b.
 */
function mixedCsv(): string[] {
  const lines = ['size,site,remark,visit_date,kind'];
  for (let i = 0; i < 60; i++) {
    const day = String(1 + (i % 10)).padStart(2, '0');
    lines.push(`${(i * 7) % 23},${['north', 'south', 'east'][i % 3]},remark number ${i < 40 ? i : i - 40},2024-03-${day},${i % 2 === 0 ? 'a' : 'b'}`);
  }
  return lines;
}

const warningsOf = (events: DataEvent[]): string[] => events.flatMap((event) => (event.type === 'warning' ? [event.message] : []));

describe('a text column with more distinct values than data.maxDistinctShare x rows', () => {
  it('is refused with one line naming the study file, the CSV, the column, its distinct count, the limit and the two ways out', async () => {
    const settings = await withCsv('mixed.csv', mixedCsv(), {});
    const failure = prepareData(settings, studyFile);
    await expect(failure).rejects.toMatchObject({ name: 'UserError', code: 'E_DATA', exitCode: 2 });
    const message = ((await failure.catch((error: unknown) => error)) as Error).message;
    expect(message.split('\n')).toHaveLength(1);
    // 40 distinct remarks in 60 rows: more than 0.5 x 60 = 30.
    // The CSV is outside the working directory, so it is named by its absolute path.
    expect(message).toBe(
      `${studyFile}: data: ${path.join(folder, 'data', 'mixed.csv')}: column 'remark' has 40 distinct values, more than the limit of 30 (data.maxDistinctShare 0.5 x 60 rows); ` +
        'so many categories are rarely a feature: add it to data.exclude, or list it in data.features to use it anyway',
    );
  });

  it('follows data.maxDistinctShare: 0.7 of 60 rows allows 42 distinct values', async () => {
    const settings = await withCsv('mixed.csv', mixedCsv(), { maxDistinctShare: 0.7 });
    const { data } = await prepareData(settings, studyFile);
    expect(data.recipe.features.map((feature) => feature.name)).toContain('remark');
  });

  it('is used, with a warning, when data.features lists it', async () => {
    const settings = await withCsv('mixed.csv', mixedCsv(), { features: ['size', 'remark'] });
    const events: DataEvent[] = [];
    const { data, warnings } = await prepareData(settings, studyFile, { onDataEvent: (event) => events.push(event) });
    const remark = data.recipe.features.find((feature) => feature.name === 'remark');
    // Every category seen in the training rows is one input.
    expect(remark?.kind === 'categorical' && remark.categories.length).toBeGreaterThan(20);
    expect(warnings).toHaveLength(1);
    expect(warnings[0]).toContain("column 'remark' has 40 distinct values, more than the limit of 30 (data.maxDistinctShare 0.5 x 60 rows); used because data.features lists it");
    expect(warnings[0]).toContain("add 'remark' to data.exclude to leave it out");
    expect(warningsOf(events)).toEqual(warnings);
  });

  it('is warned about, not refused, for a study that already started (resume, export)', async () => {
    const settings = await withCsv('mixed.csv', mixedCsv(), {});
    const { warnings } = await prepareData(settings, studyFile, { started: true });
    expect(warnings.some((line) => line.includes("column 'remark'") && line.includes('used because the study started with it'))).toBe(true);
  });

  it('is never refused below 10 distinct values: 6 sites in 8 rows are kept', async () => {
    const lines = ['size,site,kind', ...Array.from({ length: 8 }, (_, i) => `${i % 3},site ${i % 6},${i % 2 === 0 ? 'a' : 'b'}`)];
    const settings = await withCsv('small.csv', lines, { validationFraction: 0.25, testFraction: 0 });
    const { data, warnings } = await prepareData(settings, studyFile);
    expect(data.recipe.features.map((feature) => feature.name)).toEqual(['size', 'site']);
    expect(warnings).toEqual([]);
  });
});

describe('data.exclude', () => {
  it('leaves the excluded columns out of the features', async () => {
    const settings = await withCsv('mixed.csv', mixedCsv(), { exclude: ['remark', 'visit_date'] });
    const { data, warnings } = await prepareData(settings, studyFile);
    expect(data.recipe.features.map((feature) => feature.name)).toEqual(['size', 'site']);
    expect(data.recipe.inputCount).toBe(1 + 3);
    expect(warnings).toEqual([]);
  });

  it('must name columns of the CSV, not the target, each once, and not stand beside data.features', async () => {
    const cases: [Record<string, unknown>, string][] = [
      [{ exclude: ['remarks'] }, "data.exclude[0]: column 'remarks' is not in"],
      [{ exclude: ['kind'] }, "data.exclude[0]: 'kind' is the target column"],
      [{ exclude: ['remark', 'remark'] }, "data.exclude[1]: 'remark' is listed twice"],
      [{ exclude: ['size', 'site', 'remark', 'visit_date'] }, "data.exclude: "],
      [{ exclude: ['remark'], features: ['size'] }, 'data.exclude: give either data.features (the columns to use) or data.exclude (the columns to leave out), not both'],
    ];
    for (const [extra, expected] of cases) {
      const settings = await withCsv('mixed.csv', mixedCsv(), extra);
      await expect(prepareData(settings, studyFile), JSON.stringify(extra)).rejects.toThrow(expected);
    }
    const settings = await withCsv('mixed.csv', mixedCsv(), { exclude: ['remarks'] });
    await expect(prepareData(settings, studyFile)).rejects.toThrow("(did you mean 'remark'?)");
    const all = await withCsv('mixed.csv', mixedCsv(), { exclude: ['size', 'site', 'remark', 'visit_date'] });
    await expect(prepareData(all, studyFile)).rejects.toThrow("has no column besides the target 'kind' that data.exclude leaves in");
  });
});

describe('columns that look like dates', () => {
  it('recognises ISO dates, slashed and dotted dates and month names, and nothing else', () => {
    // Common practice (no source): the spellings spreadsheets and loggers write.
    for (const text of ['2024-03-01', '2024-03-01T08:15:00Z', '2024-03-01 08:15', '2024/3/1', '01/03/2024', '12-31-2024', '31.12.2024', '1 Mar 2024', '1-Mar-2024', 'March 1, 2024', 'Sep 30 2024']) {
      expect(isDateSpelling(text), text).toBe(true);
    }
    for (const text of ['2024-13-01', '2024-02-32', '13/13/2024', 'north', '2024', '1.5', 'remark 3', '12:30', 'May', '1 Mar#2024']) {
      expect(isDateSpelling(text), text).toBe(false);
    }
  });

  it('are named in a warning with a count and an example', async () => {
    const settings = await withCsv('mixed.csv', mixedCsv(), { exclude: ['remark'] });
    const { warnings } = await prepareData(settings, studyFile);
    expect(warnings).toHaveLength(1);
    expect(warnings[0]).toMatch(/: column 'visit_date' looks like a date \(60 of its 60 values, e\.g\. '2024-03-01'\); it is used as a category, 10 one-hot inputs; add 'visit_date' to data\.exclude to leave it out/);
  });

  it('are called dates when most non-blank cells are dates, blanks aside', async () => {
    const lines = ['size,when,kind', ...Array.from({ length: 30 }, (_, i) => `${i % 4},${i % 5 === 0 ? '' : i % 5 === 1 ? 'unknown' : `2023-0${1 + (i % 3)}-15`},${i % 2 === 0 ? 'a' : 'b'}`)];
    // 30 rows: 6 blank, 6 'unknown', 18 dates: 18 of the 24 non-blank cells.
    const settings = await withCsv('when.csv', lines, {});
    const { warnings } = await prepareData(settings, studyFile);
    expect(warnings.map((line) => line.replace(/^.*?: column/, 'column'))).toEqual([expect.stringContaining("column 'when' looks like a date (18 of its 24 values, e.g. '2023-0")]);
  });
});

describe('columns that look like identifiers', () => {
  it('are recognised by name: id, *_id, * ID, camelCase Id, not grid, paid or valid', () => {
    for (const name of ['id', 'ID', 'pump_id', 'Pump ID', 'pump-id', 'pumpId', 'userID', 'uuid', 'record.guid']) expect(hasIdentifierName(name), name).toBe(true);
    for (const name of ['grid', 'paid', 'valid', 'idle_hours', 'GRID', 'width']) expect(hasIdentifierName(name), name).toBe(false);
  });

  it('are named by name, by every text value distinct, or by whole numbers rising with every row', async () => {
    const lines = ['row,pump_id,serial,size,kind'];
    for (let i = 0; i < 12; i++) lines.push(`${100 + 2 * i},${i % 4},SN-${1000 + i * 13},${(i * 5) % 7},${i % 2 === 0 ? 'a' : 'b'}`);
    const settings = await withCsv('ids.csv', lines, { features: ['row', 'pump_id', 'serial', 'size'], validationFraction: 0.25, testFraction: 0 });
    const { warnings } = await prepareData(settings, studyFile);
    const about = (column: string): string | undefined => warnings.find((line) => line.includes(`column '${column}'`));
    expect(about('row')).toContain("column 'row' looks like an identifier (its 12 whole numbers rise with every row)");
    expect(about('pump_id')).toContain("column 'pump_id' looks like an identifier (its name says so)");
    // 12 distinct serials in 12 rows: past the limit of 10 but listed in data.features, and distinct in every row.
    expect(about('serial')).toContain("column 'serial' has 12 distinct values, more than the limit of 10");
    expect(about('serial')).toContain('it looks like an identifier');
    expect(about('size')).toBeUndefined();
    expect(warnings).toHaveLength(3);
  });

  it('are not called so for whole numbers that do not rise with every row', async () => {
    const lines = ['count,kind', ...Array.from({ length: 20 }, (_, i) => `${i === 10 ? 9 : i},${i % 2 === 0 ? 'a' : 'b'}`)];
    const settings = await withCsv('counts.csv', lines, {});
    const { warnings } = await prepareData(settings, studyFile);
    expect(warnings).toEqual([]);
  });
});

describe('real data', () => {
  it('Palmer Penguins gives no warning: no column of it is a date, an identifier or free text', async () => {
    // Source: Horst, Hill, Gorman, "palmerpenguins" (2020), doi:10.5281/zenodo.3960218: Island (3 values), four measurements, Sex.
    const csv = await writePenguinsCsv(path.join(folder, 'data'));
    const settings = dataSchema.parse({ csv: path.relative(folder, csv), target: PENGUINS_TARGET, task: 'multiclass' });
    const { warnings, data } = await prepareData(settings, studyFile);
    expect(warnings).toEqual([]);
    expect(data.recipe.features).toHaveLength(6);
  });
});

describe('rungwise run', () => {
  const study = (data: Record<string, unknown>): string =>
    JSON.stringify({
      name: 'columns',
      data: { csv: 'data/mixed.csv', target: 'kind', task: 'binary', ...data },
      space: { depth: { min: 1, max: 1 }, width: { min: 4, max: 4 }, activation: ['relu'], learningRate: { min: 0.01, max: 0.01 } },
      budget: { trials: 1, maxEpochs: 1 },
      threads: 1,
    });

  it('refuses the free-text column: exit 2, one error line, nothing on stdout, no run directory', async () => {
    await writeFile(path.join(folder, 'data', 'mixed.csv'), mixedCsv().join('\n') + '\n');
    const file = path.join(folder, 'refused.json');
    await writeFile(file, study({}));
    const out = path.join(folder, 'run-refused');
    const result = await runCli(['run', file, '--out', out]);
    expect(result.code).toBe(2);
    expect(result.stdout).toBe('');
    expect(result.stderr.trim().split('\n')).toEqual([expect.stringMatching(/^error: .*refused\.json: data: .*mixed\.csv: column 'remark' has 40 distinct values, more than the limit of 30/)]);
    expect(existsSync(out)).toBe(false);
  });

  it('names the date column in a warning on stderr before the first trial', async () => {
    await writeFile(path.join(folder, 'data', 'mixed.csv'), mixedCsv().join('\n') + '\n');
    const file = path.join(folder, 'warned.json');
    await writeFile(file, study({ exclude: ['remark'] }));
    const result = await runCli(['run', file, '--out', path.join(folder, 'run-warned')]);
    expect(result.code).toBe(0);
    const lines = result.stderr.split('\n');
    const warning = lines.findIndex((line) => line.startsWith("warning: ") && line.includes("column 'visit_date' looks like a date"));
    const started = lines.findIndex((line) => line.startsWith('running study columns'));
    expect(warning).toBeGreaterThanOrEqual(0);
    expect(started).toBeGreaterThan(warning);

    // --quiet leaves out progress and notes, not warnings.
    const quiet = await runCli(['run', file, '--out', path.join(folder, 'run-quiet'), '--quiet']);
    expect(quiet.code).toBe(0);
    expect(quiet.stderr.trim().split('\n')).toEqual([expect.stringMatching(/^warning: .*column 'visit_date' looks like a date/)]);
  });
});
