/**
 * What predict warns about (README, "What predict warns about"): per column, the rows holding a
 * category the training split never held, a blank category, or no number; once per column with a
 * count and the first line, never once per row. `--strict` makes them errors: exit 2, one line
 * naming the input file, the line and the column, and no predictions file.
 */
import { existsSync } from 'node:fs';
import { readFile, rm, writeFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { exportModel } from '../src/commands/export.js';
import { defaultPredictionsPath, predictCsv, predictWarnings } from '../src/commands/predict.js';
import { loadModel, predict, predictWithChecks, type InputRow } from '../src/export/hand-off.js';
import { runStudy } from '../src/runner/run-study.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { runCli } from './helpers/cli.js';
import { PENGUINS_MEASUREMENTS, PENGUINS_TARGET, makeTempDir, writePenguinsCsv } from './helpers/datasets.js';

let root: string;
let penguinsCsv: string;
let exportDir: string;

/** vega-datasets' penguins.json as records (null where a value is missing). */
async function penguinRecords(): Promise<Record<string, string | number | null>[]> {
  const entry = createRequire(import.meta.url).resolve('vega-datasets');
  return JSON.parse(await readFile(path.resolve(path.dirname(entry), '..', 'data', 'penguins.json'), 'utf8')) as Record<string, string | number | null>[];
}

beforeAll(async () => {
  await initBackend();
  root = await makeTempDir('rungwise-predict-issues-');
  penguinsCsv = await writePenguinsCsv(root);
  const definition = path.join(root, 'penguins.json');
  await writeFile(
    definition,
    JSON.stringify({
      name: 'penguins-issues',
      data: { csv: 'penguins.csv', target: PENGUINS_TARGET, task: 'multiclass', splitSeed: 2 },
      space: { depth: { min: 1, max: 1 }, width: { min: 8, max: 8 }, activation: ['relu'], learningRate: { min: 0.01, max: 0.01 }, batchSize: [32] },
      budget: { trials: 1, maxEpochs: 2 },
      sampler: { kind: 'random', seed: 4 },
      threads: 1,
    }),
  );
  const runDir = path.join(root, 'run');
  await runStudy(definition, { out: runDir });
  exportDir = (await exportModel({ dir: runDir })).out;
});

afterAll(async () => {
  await rm(root, { recursive: true, force: true });
});

describe('predict on Palmer Penguins', () => {
  it('counts the missing measurements and sexes once per column, with the first line', async () => {
    // Source: Horst, Hill, Gorman, "palmerpenguins" (2020), doi:10.5281/zenodo.3960218, as shipped in
    // vega-datasets' penguins.json: 2 rows (records 3 and 339) lack all four measurements; 11 rows lack
    // Sex (10 nulls and one '.', which the CSV writer spells NA), the first of them record 3.
    const output = path.join(root, 'penguins.predictions.csv');
    const summary = await predictCsv({ model: exportDir, data: penguinsCsv, output });
    expect(summary.rows).toBe(344);
    // Record 3 is the 4th data row: line 5 (header on line 1).
    expect(summary.inputIssues).toEqual([
      ...PENGUINS_MEASUREMENTS.map((column) => ({ column, kind: 'missing-number', count: 2, example: 'NA', firstRow: 3, firstLine: 5, filledWith: expect.any(Number) })),
      { column: 'Sex', kind: 'blank-category', count: 11, example: 'NA', firstRow: 3, firstLine: 5, filledWith: expect.stringMatching(/^(MALE|FEMALE)$/) },
    ]);
    // A measurement is filled with its training mean: Body Mass lies between the lightest and heaviest penguin.
    const mass = summary.inputIssues.find((issue) => issue.column === 'Body Mass (g)')!.filledWith as number;
    expect(mass).toBeGreaterThan(2700);
    expect(mass).toBeLessThan(6300);
    const warnings = predictWarnings(summary, penguinsCsv);
    expect(warnings).toHaveLength(5);
    expect(warnings[0]).toBe(`${penguinsCsv}: column 'Beak Length (mm)': 2 rows have no number (first 'NA' on line 5); filled with the training mean ${Number((summary.inputIssues[0]!.filledWith as number).toPrecision(6))}`);
    expect(warnings[4]).toMatch(new RegExp(`^${penguinsCsv.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}: column 'Sex': 11 rows have no category \\(first 'NA' on line 5\\); filled with the training's most frequent category '(MALE|FEMALE)'$`));
    expect(existsSync(output)).toBe(true);
  });

  it('returns the counts from the library: a null is blank, and the JSON copy\'s one Sex of \'.\' is a category the training split never held', async () => {
    const records = await penguinRecords();
    const model = await loadModel(exportDir);
    try {
      const rows = records.map((record) => ({ ...record }) as InputRow);
      const { predictions, inputIssues } = predictWithChecks(model, rows);
      expect(predictions).toHaveLength(344);
      expect(predict(model, rows)).toEqual(predictions);
      const sex = inputIssues.filter((issue) => issue.column === 'Sex');
      // Source: vega-datasets penguins.json: Sex is null in 10 records, '.' in record 336.
      expect(sex).toEqual([
        { column: 'Sex', kind: 'unseen-category', count: 1, example: '.', firstRow: 336 },
        { column: 'Sex', kind: 'blank-category', count: 10, example: '', firstRow: 3, filledWith: expect.any(String) },
      ]);
      expect(() => predict(model, rows, { strict: true })).toThrow("rows: row 3: column 'Beak Length (mm)' has no number (a blank cell); strict refuses unseen and blank categories and missing numbers (19 such cells in all)");
      const complete = rows.filter((_, index) => ![3, 8, 9, 10, 11, 47, 246, 286, 324, 336, 339].includes(index));
      expect(predictWithChecks(model, complete, { strict: true }).inputIssues).toEqual([]);
    } finally {
      model.dispose();
    }
  });
});

describe('predict on hand-made rows', () => {
  /** Six complete penguin rows, then an unseen island on lines 8 and 10, a blank island on line 9 and a missing flipper on line 10. */
  async function oddCsv(name: string): Promise<string> {
    const lines = (await readFile(penguinsCsv, 'utf8')).trim().split('\n');
    const header = lines[0]!;
    const complete = lines.slice(1).filter((line) => !line.includes('NA')).slice(0, 9);
    const island = header.split(',').indexOf('Island');
    const flipper = header.split(',').indexOf('Flipper Length (mm)');
    const edit = (line: string, column: number, value: string): string => line.split(',').map((cell, c) => (c === column ? value : cell)).join(',');
    complete[6] = edit(complete[6]!, island, 'Atlantis');
    complete[7] = edit(complete[7]!, island, '');
    complete[8] = edit(edit(complete[8]!, island, 'Atlantis'), flipper, '');
    const file = path.join(root, name);
    await writeFile(file, [header, ...complete].join('\n') + '\n');
    return file;
  }

  it('warns once per column and kind with the count and the first line, not once per row', async () => {
    const data = await oddCsv('odd.csv');
    const summary = await predictCsv({ model: exportDir, data });
    expect(summary.inputIssues.map(({ column, kind, count, example, firstLine }) => ({ column, kind, count, example, firstLine }))).toEqual([
      { column: 'Island', kind: 'unseen-category', count: 2, example: 'Atlantis', firstLine: 8 },
      { column: 'Island', kind: 'blank-category', count: 1, example: '', firstLine: 9 },
      { column: 'Flipper Length (mm)', kind: 'missing-number', count: 1, example: '', firstLine: 10 },
    ]);
    expect(predictWarnings(summary, 'odd.csv')[0]).toBe("odd.csv: column 'Island': 2 rows hold a category the training split never held (first 'Atlantis' on line 8); encoded as no category");
    expect(predictWarnings(summary, 'odd.csv')[1]).toMatch(/^odd\.csv: column 'Island': 1 row has no category \(first a blank cell on line 9\); filled with the training's most frequent category '(Biscoe|Dream|Torgersen)'$/);
  });

  it('rungwise predict prints the warnings on stderr and still writes the predictions', async () => {
    const data = await oddCsv('cli-odd.csv');
    const result = await runCli(['predict', exportDir, data]);
    expect(result.code).toBe(0);
    const warnings = result.stderr.split('\n').filter((line) => line.startsWith('warning: '));
    expect(warnings).toHaveLength(3);
    expect(warnings[0]).toContain("column 'Island': 2 rows hold a category the training split never held (first 'Atlantis' on line 8)");
    expect(existsSync(defaultPredictionsPath(data))).toBe(true);
    const json = await runCli(['predict', exportDir, data, '--json', '--output', path.join(root, 'cli-odd.json.csv')]);
    expect((JSON.parse(json.stdout) as { inputIssues: unknown[] }).inputIssues).toHaveLength(3);
  });

  it('rungwise predict --strict exits 2 with one line naming the file, the line and the column, and writes nothing', async () => {
    const data = await oddCsv('strict.csv');
    const result = await runCli(['predict', exportDir, data, '--strict']);
    expect(result.code).toBe(2);
    expect(result.stdout).toBe('');
    expect(result.stderr.trim().split('\n')).toEqual([
      `error: ${data}: line 8: column 'Island' holds 'Atlantis', a category the training split never held; --strict refuses unseen and blank categories and missing numbers (4 such cells in all); nothing was written`,
    ]);
    expect(existsSync(defaultPredictionsPath(data))).toBe(false);
    const toStdout = await runCli(['predict', exportDir, data, '--strict', '--output', '-']);
    expect(toStdout.code).toBe(2);
    expect(toStdout.stdout).toBe('');
  });

  it('--strict passes rows without any issue', async () => {
    const data = path.join(root, 'complete.csv');
    const lines = (await readFile(penguinsCsv, 'utf8')).trim().split('\n');
    await writeFile(data, [lines[0], ...lines.slice(1).filter((line) => !line.includes('NA')).slice(0, 5)].join('\n') + '\n');
    const summary = await predictCsv({ model: exportDir, data, strict: true });
    expect(summary.inputIssues).toEqual([]);
    expect((await readFile(summary.output, 'utf8')).trim().split('\n')).toHaveLength(6);
  });
});
