import { execFile } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { writeFile } from 'node:fs/promises';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import { beforeAll, describe, expect, it } from 'vitest';
import { documentation } from './helpers/docs.js';
import { readCsv } from '../src/data/csv.js';
import { loadModel, predict, type ClassPrediction, type InputRow, type ValuePrediction } from '../src/index.js';
import { exportTinyStudies, type TinyExport } from './helpers/exports.js';

const run = promisify(execFile);
const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const README = documentation();

let exports: TinyExport[];

/** The first rows of a CSV as the objects a user would pass, with a few values blanked (to be imputed). */
async function someRows(csv: string): Promise<Record<string, string | number | null>[]> {
  const table = await readCsv(csv);
  return table.rows.slice(0, 12).map((row, r) => {
    const copy: Record<string, string | number | null> = { ...row };
    const columns = Object.keys(copy);
    if (r % 4 === 1) copy[columns[0]!] = null;
    if (r % 4 === 2) copy[columns[3]!] = '';
    if (r % 4 === 3) copy[columns[1]!] = Number(copy[columns[1]!]);
    return copy;
  });
}

/** The network's raw outputs for rows, as the library computes them (probability of the second class for binary). */
function rawOutputs(task: TinyExport['task'], answers: ReturnType<typeof predict>, classes: string[]): number[] {
  if (task === 'regression') return answers.map((a) => (a as ValuePrediction).predicted);
  if (task === 'binary') return answers.map((a) => (a as ClassPrediction).probabilities[classes[1]!]!);
  return answers.flatMap((a) => classes.map((c) => (a as ClassPrediction).probabilities[c]!));
}

beforeAll(async () => {
  exports = await exportTinyStudies();
});

describe('the library hand-off: loadModel and predict', () => {
  it('predicts as the predict command does, for every task, missing values imputed', async () => {
    const { predictCsv } = await import('../src/commands/predict.js');
    for (const exported of exports) {
      const model = await loadModel(exported.exportDir);
      try {
        const table = await readCsv(exported.csv);
        const answers = predict(model, table.rows);
        let csv = '';
        await predictCsv({ model: exported.exportDir, data: exported.csv, output: '-', stdout: { write: (t: string) => (csv += t) } as unknown as NodeJS.WritableStream });
        const lines = csv.trim().split('\n').slice(1);
        expect(lines, exported.task).toHaveLength(answers.length);
        lines.forEach((line, r) => expect(line.split(',')[1], exported.task).toBe(String(answers[r]!.predicted)));
        const withGaps = predict(model, await someRows(exported.csv));
        expect(withGaps.every((a) => (typeof a.predicted === 'number' ? Number.isFinite(a.predicted) : (model.configuration.recipe.classes ?? []).includes(a.predicted)))).toBe(true);
      } finally {
        model.dispose();
      }
    }
  });

  it('refuses rows that lack a feature column with a one-line error naming it', async () => {
    const model = await loadModel(exports[0]!.exportDir);
    try {
      const feature = model.configuration.recipe.features[0]!.name;
      const row: InputRow = Object.fromEntries(model.configuration.recipe.features.filter((f) => f.name !== feature).map((f) => [f.name, '1']));
      expect(() => predict(model, [row])).toThrow(new RegExp(`column '${feature}' missing`));
    } finally {
      model.dispose();
    }
  });
});

describe('loading the exported model without rungwise', () => {
  it('plain @tensorflow/tfjs in Node with a file-system IO handler (examples/tfjs-node.mjs) gives the library outputs, for every task', async () => {
    // Reference: tfjs's own loadLayersModel and predict on the cpu backend, inputs encoded by examples/encode-row.mjs.
    for (const exported of exports) {
      const rows = await someRows(exported.csv);
      const rowsFile = path.join(exported.exportDir, '..', `${exported.task}-rows.json`);
      await writeFile(rowsFile, JSON.stringify(rows));
      const { stdout } = await run(process.execPath, [path.join(ROOT, 'examples/tfjs-node.mjs'), exported.exportDir, rowsFile], { cwd: ROOT });
      const plain = JSON.parse(stdout.trim().split('\n').at(-1)!) as { values: number[] };
      const model = await loadModel(exported.exportDir);
      try {
        const ours = rawOutputs(exported.task, predict(model, rows), model.configuration.recipe.classes ?? []);
        expect(plain.values).toHaveLength(ours.length);
        plain.values.forEach((value, i) => expect(Math.abs(value - ours[i]!), `${exported.task} output ${i}`).toBeLessThan(1e-5));
      } finally {
        model.dispose();
      }
    }
  });

  it('the documentation (README and docs/) shows the examples as they are in examples/', () => {
    for (const file of ['examples/predict.mjs', 'examples/tfjs-node.mjs', 'examples/encode-row.mjs']) {
      expect(README, file).toContain(readFileSync(path.join(ROOT, file), 'utf8').trim());
    }
  });

  it('examples/predict.mjs runs as a clean script importing the package by name', async () => {
    const binary = exports.find((e) => e.task === 'binary')!;
    const rowsFile = path.join(binary.exportDir, '..', 'clean-rows.json');
    await writeFile(rowsFile, JSON.stringify(await someRows(binary.csv)));
    const { stdout } = await run(process.execPath, [path.join(ROOT, 'examples/predict.mjs'), binary.exportDir, rowsFile], { cwd: ROOT });
    const answers = JSON.parse(stdout) as ClassPrediction[];
    expect(answers).toHaveLength(12);
    for (const answer of answers) expect(['no', 'yes']).toContain(answer.predicted);
  });
});
