import * as tf from '@tensorflow/tfjs';
import { mkdtemp, readFile, readdir, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { exportModel, exportReport, type ExportSummary } from '../src/commands/export.js';
import { prepareData } from '../src/data/prepare.js';
import type { ExportConfiguration } from '../src/export/configuration.js';
import { loadLayersModelFromDir, predictRows } from '../src/export/model-files.js';
import { OPTIMISM_CAUTION } from '../src/report/caution.js';
import { runStudy } from '../src/runner/run-study.js';
import { rankTrials } from '../src/core/ranking.js';
import { StudyStore } from '../src/store/study-store.js';
import type { StudyDocument } from '../src/store/types.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { computeMetrics } from '../src/metrics/metrics.js';
import { writeIrisCsv } from './helpers/datasets.js';

let root: string;
let runDir: string;
let doc: StudyDocument;

beforeAll(async () => {
  await initBackend();
  root = await mkdtemp(path.join(tmpdir(), 'rungwise-retrain-'));
  await writeIrisCsv(root);
  const file = path.join(root, 'study.json');
  await writeFile(
    file,
    JSON.stringify({
      name: 'iris-retrain',
      data: { csv: 'iris.csv', target: 'species', task: 'multiclass', splitSeed: 2 },
      space: {
        depth: { min: 1, max: 2 },
        width: { min: 4, max: 12 },
        activation: ['relu', 'tanh'],
        learningRate: { min: 0.005, max: 0.05 },
        batchSize: [16],
        optimizer: ['adam'],
      },
      budget: { trials: 4, maxEpochs: 4 },
      sampler: { kind: 'random', seed: 8 },
      threads: 1,
    }),
  );
  runDir = path.join(root, 'run');
  await runStudy(file, { out: runDir });
  doc = await StudyStore.read(runDir);
});

afterAll(async () => {
  await rm(root, { recursive: true, force: true });
});

describe('rungwise export --retrain', () => {
  let summary: ExportSummary;

  beforeAll(async () => {
    // Rank 4 has no kept checkpoint: --retrain is the way to export it.
    summary = await exportModel({ dir: runDir, rank: 4, retrain: true });
  });

  it('reports the held-out test metrics beside the validation metrics the study recorded', () => {
    const trial = rankTrials(doc.trials, doc.goal)[3]!.trial;
    expect(summary.retrained).toBe(true);
    expect(summary.trialId).toBe(trial.id);
    expect(summary.validation).toEqual(trial.curve.at(-1)!.metrics);
    expect(Object.keys(summary.test!).sort()).toEqual(['accuracy', 'logLoss', 'macroF1']);
    expect(summary.test!.accuracy).toBeGreaterThanOrEqual(0);
    expect(summary.test!.accuracy).toBeLessThanOrEqual(1);

    const text = exportReport(summary);
    expect(text).toMatch(/metric\s+validation \(study\)\s+test \(retrained\)/);
    expect(text).toMatch(/^accuracy\s+[\d.]+\s+[\d.]+$/m);
    expect(text).toContain(OPTIMISM_CAUTION);
  });

  it('records both sets of metrics, the rows it trained on and the caution in configuration.json', async () => {
    const configuration = JSON.parse(await readFile(path.join(summary.out, 'configuration.json'), 'utf8')) as ExportConfiguration;
    expect(configuration.rank).toBe(4);
    expect(configuration.trainedOn).toBe('training and validation splits');
    expect(configuration.validation.metrics).toEqual(summary.validation);
    expect(configuration.test).toEqual(summary.test);
    expect(configuration.caution).toBe(OPTIMISM_CAUTION);
    expect((await readdir(summary.out)).sort()).toEqual(['configuration.json', 'model.json', 'splits.json', 'weights.bin']);
  });

  it('exports the retrained model itself: its predictions on the test rows give the reported test metrics', async () => {
    const { data } = await prepareData(doc.definition.data, doc.definitionFile);
    expect(data.test.rows).toBeGreaterThan(0);
    const model = await loadLayersModelFromDir(summary.out);
    const outputs = predictRows(model, data.test.x, data.test.rows, data.recipe.inputCount);
    model.dispose();
    const again = computeMetrics('multiclass', data.test.y, outputs, 3);
    expect(Math.abs(again.accuracy! - summary.test!.accuracy!)).toBeLessThan(1e-9);
    expect(Math.abs(again.logLoss! - summary.test!.logLoss!)).toBeLessThan(1e-6);
  });

  it('retrains deterministically from the trial seed, and on more rows than the kept checkpoint saw', async () => {
    const kept = await exportModel({ dir: runDir, rank: 1, out: path.join(root, 'kept-1') });
    const tensorsBefore = tf.memory().numTensors;
    const first = await exportModel({ dir: runDir, rank: 1, retrain: true, out: path.join(root, 'retrained-1a') });
    const second = await exportModel({ dir: runDir, rank: 1, retrain: true, out: path.join(root, 'retrained-1b') });
    expect(tf.memory().numTensors).toBe(tensorsBefore); // retraining and exporting release every tensor they make
    expect(second.test).toEqual(first.test);
    const weights = async (dir: string): Promise<Buffer> => readFile(path.join(dir, 'weights.bin'));
    expect((await weights(second.out)).equals(await weights(first.out))).toBe(true);
    // Same seed and epochs, but training plus validation rows: the weights differ from the study's checkpoint.
    expect((await weights(first.out)).equals(await weights(kept.out))).toBe(false);
  });
});
