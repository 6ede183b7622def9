/**
 * `export --retrain` is never silently worse: the study's own network and the retrained one on the
 * same test rows, both printed and in the summary, and a warning when the retrained one is worse by
 * more than the paired bootstrap standard error of the difference.
 */
import { copyFile, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { exportModel, exportReport, type ExportSummary } from '../src/commands/export.js';
import { compareOnTest } from '../src/export/hand-off-check.js';
import { retrainEpochs } from '../src/export/retrain.js';
import type { TrialRecord } from '../src/core/trial.js';
import type { PreparedData } from '../src/data/types.js';
import { runStudy } from '../src/runner/run-study.js';
import type { PreprocessingRecipe } from '../src/data/types.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';

const DEMO_CSV = fileURLToPath(new URL('../studies/demo/pump-logs.csv', import.meta.url));
let root: string;
let summary: ExportSummary;

beforeAll(async () => {
  await initBackend();
  root = await mkdtemp(path.join(tmpdir(), 'rungwise-retrain-check-'));
  await copyFile(DEMO_CSV, path.join(root, 'pump-logs.csv'));
  // One epoch: the best epoch is 1, the case the retrained model was silently worse in.
  const definition = {
    name: 'best-epoch-one',
    data: { csv: 'pump-logs.csv', target: 'fails_within_week', task: 'binary', splitSeed: 1 },
    space: { depth: { min: 1, max: 1 }, width: { min: 16, max: 16 }, activation: ['relu'], learningRate: { min: 0.01, max: 0.01 }, batchSize: [32], optimizer: ['adam'] },
    budget: { trials: 1, maxEpochs: 1 },
    sampler: { kind: 'random', seed: 1 },
    goal: { metric: 'auc' },
    threads: 1,
  };
  await writeFile(path.join(root, 'study.json'), JSON.stringify(definition));
  await runStudy(path.join(root, 'study.json'), { out: path.join(root, 'run') });
  summary = await exportModel({ dir: path.join(root, 'run'), rank: 1, retrain: true });
}, 120_000);
afterAll(async () => rm(root, { recursive: true, force: true }));

describe('export --retrain against the study network', () => {
  it('scores both networks on the test split and prints both columns', () => {
    expect(summary.epoch).toBe(1);
    expect(summary.studyTest?.auc).toBeGreaterThan(0.5);
    expect(summary.test?.auc).toBeGreaterThan(0.5);
    expect(summary.handOff).toMatchObject({ metric: 'auc', better: 'higher', study: summary.studyTest!.auc, retrained: summary.test!.auc });
    expect(summary.handOff!.difference).toBeCloseTo(summary.test!.auc! - summary.studyTest!.auc!, 12);
    expect(summary.handOff!.standardError).toBeGreaterThan(0);
    const text = exportReport(summary);
    expect(text).toMatch(/metric\s+validation \(study\)\s+test \(study network\)\s+test \(retrained\)/);
    // The warning appears exactly when the retrained network is worse by more than one standard error.
    const h = summary.handOff!;
    expect(text.includes('warning: the retrained network scores')).toBe(h.study - h.retrained > h.standardError);
    expect(text).toMatch(/^baselines on the validation rows \(auc\): constant 0\.5, linear \d/m);
  });

  it('retrains for the study\'s optimizer steps over the larger set, and warns when whole epochs cannot match them (best epoch 1)', () => {
    // Source: Goodfellow, Bengio, Courville, Deep Learning, 2016, 7.8, Algorithm 7.2 (retrain on all data for the same number of steps; from memory).
    const e = summary.retrainEpochs!;
    expect(e.studyEpochs).toBe(1);
    expect(e.studySteps).toBe(Math.ceil(e.studyRows / 32));
    expect(e.epochs).toBe(1);
    expect(e.steps).toBe(Math.ceil(e.rows / 32));
    expect(e.steps / e.studySteps).toBeGreaterThan(1.25);
    const text = exportReport(summary);
    expect(text).toContain(`warning: the retrained network took ${e.steps} optimizer steps (1 epoch over ${e.rows} rows), the study's took ${e.studySteps}`);
    expect(text).toMatch(/^network: a network retrained from trial 0's configuration and seed on the \d+ training and validation rows for 1 epoch \(the study: 1 over \d+ rows; the same number of optimizer steps/m);
  });
});

describe('the retrained epoch count', () => {
  const trial = (epochsTrained: number, batchSize: number, bestEpoch?: number) =>
    ({ epochsTrained, ...(bestEpoch !== undefined ? { bestEpoch } : {}), configuration: { batchSize } }) as unknown as TrialRecord;
  const data = (train: number, validation: number, folds?: number[]) =>
    ({ train: { rows: train }, validation: { rows: validation }, ...(folds ? { folds: folds.map((rows) => ({ train: { rows } })) } : {}) }) as unknown as PreparedData;

  it('keeps the number of optimizer steps: 20 epochs of 1950 rows in batches of 32 become 15 epochs of 2550 rows', () => {
    // Source: Goodfellow et al., Deep Learning, 2016, 7.8, Algorithm 7.2 (from memory). Worked: 20 x ceil(1950 / 32) = 1220 steps; ceil(2550 / 32) = 80 per epoch; 1220 / 80 = 15.25 -> 15.
    expect(retrainEpochs(data(1950, 600), trial(20, 32))).toMatchObject({ studyEpochs: 20, epochs: 15, studySteps: 1220, steps: 1200 });
    // With early stopping the best epoch's steps: 8 x 61 = 488; 488 / 80 = 6.1 -> 6.
    expect(retrainEpochs(data(1950, 600), trial(20, 32, 8)).epochs).toBe(6);
    // With 5 folds each fold trained on 4/5 of the 2550 rows (2040): 10 x 64 = 640; 640 / 80 = 8.
    expect(retrainEpochs(data(1950, 600, [2040, 2040, 2040, 2040, 2040]), trial(10, 32))).toMatchObject({ studyRows: 2040, epochs: 8 });
    // Never below one epoch.
    expect(retrainEpochs(data(10, 1000), trial(1, 32)).epochs).toBe(1);
  });
});

describe('the paired comparison on the test rows', () => {
  const recipe = { task: 'binary', target: 'y', features: [], inputCount: 1 } as unknown as PreprocessingRecipe;
  const y = Float32Array.from({ length: 40 }, (_, i) => i % 2);
  const split = { rows: 40, x: new Float32Array(40), y };
  it('warns when the retrained network ranks the rows worse than the study network beyond the noise', () => {
    // The study network separates the classes perfectly (AUC 1); the retrained one is constant (AUC 0.5).
    const study = Float32Array.from(y, (v) => (v === 1 ? 0.9 : 0.1));
    const retrained = new Float32Array(40).fill(0.5);
    const result = compareOnTest(recipe, split, study, retrained, 1, { metric: 'auc', better: 'higher' }, 0.5, 7)!;
    expect(result.study).toBe(1);
    expect(result.retrained).toBe(0.5);
    expect(result.difference).toBe(-0.5);
    // Every resample keeps both classes with near certainty, so each difference is -0.5: no spread.
    expect(result.standardError).toBeLessThan(0.01);
    expect(result.worse).toBe(true);
  });

  it('does not warn when the two are equal', () => {
    const outputs = Float32Array.from(y, (v, i) => (v === 1 ? 0.6 : 0.4) + (i % 5) * 0.01);
    const result = compareOnTest(recipe, split, outputs, outputs, 1, { metric: 'auc', better: 'higher' }, 0.5, 7)!;
    expect(result.difference).toBe(0);
    expect(result.worse).toBe(false);
  });
});
