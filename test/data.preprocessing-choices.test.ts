import { existsSync, readFileSync } from 'node:fs';
import { mkdtemp, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import * as ort from 'onnxruntime-node';
import { beforeAll, describe, expect, it } from 'vitest';
import { exportModel } from '../src/commands/export.js';
import { DEFAULT_PREPROCESSING, type TrialConfiguration } from '../src/core/configuration.js';
import type { SharedDataset, TrainJob } from '../src/core/job.js';
import { readCsv } from '../src/data/csv.js';
import { onnxInputs, runOnnx } from './helpers/exports.js';
import { datasetId } from '../src/data/dataset-id.js';
import { prepareData } from '../src/data/prepare.js';
import type { ExportConfiguration } from '../src/export/configuration.js';
import { loadModel, predict, type ClassPrediction } from '../src/export/hand-off.js';
import { auc } from '../src/metrics/metrics.js';
import { runStudy } from '../src/runner/run-study.js';
import { configurationForTrial } from '../src/space/sample.js';
import { configurationAt, pointOfConfiguration, spaceDimensions } from '../src/space/dimensions.js';
import { spaceSchema } from '../src/space/schema.js';
import { loadStudy } from '../src/study/load.js';
import { ThreadTransport } from '../src/transports/threads/transport.js';
import type { TrialTransport } from '../src/transports/transport.js';
import { runCli } from './helpers/cli.js';
import { tinyStudy, trialsStraightAndResumed, writeTinyStudy } from './helpers/studies.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const DEMO_CSV = path.join(ROOT, 'studies/demo/pump-logs.csv');
const demo = JSON.parse(readFileSync(path.join(ROOT, 'studies/demo/study.json'), 'utf8')) as { data: Record<string, unknown>; space: Record<string, unknown> };
const CHOICES = { numericInputs: ['standardise', 'robust-clip', 'normal-quantiles'], poolCategoriesBelow: [0, 500] };

describe('drawing preprocessing choices', () => {
  const plain = spaceSchema.parse(demo.space);
  const searched = spaceSchema.parse({ ...demo.space, ...CHOICES });

  it('leaves a space without them drawing exactly as before, and draws them after every other field', () => {
    for (let trial = 0; trial < 30; trial++) {
      const before = configurationForTrial(plain, 7, trial);
      const after = configurationForTrial(searched, 7, trial);
      expect(before).not.toHaveProperty('numericInputs');
      expect(before).not.toHaveProperty('poolCategoriesBelow');
      const { numericInputs, poolCategoriesBelow, ...rest } = after;
      expect(rest).toEqual(before);
      expect(CHOICES.numericInputs).toContain(numericInputs);
      expect(CHOICES.poolCategoriesBelow).toContain(poolCategoriesBelow);
    }
  });

  it('are categorical dimensions of the unit cube, so model-based samplers search them too', () => {
    const names = spaceDimensions(searched).map((d) => d.name);
    expect(names.slice(-2)).toEqual(['numericInputs', 'poolCategoriesBelow']);
    const configuration = configurationForTrial(searched, 3, 4);
    expect(configurationAt(searched, pointOfConfiguration(searched, configuration))).toMatchObject({ numericInputs: configuration.numericInputs, poolCategoriesBelow: configuration.poolCategoriesBelow });
  });
});

describe('one prepared data set per choice', () => {
  it('keeps the default data set (and its id) as it was, and gives every other choice its own', async () => {
    const settings = { csv: DEMO_CSV, target: 'fails_within_week', task: 'binary' as const, validationFraction: 0.2, testFraction: 0.15, splitSeed: 1, maxDistinctShare: 0.5 };
    const definitionFile = path.join(ROOT, 'studies/demo/study.json');
    const plain = (await prepareData(settings, definitionFile)).data;
    const withChoices = (await prepareData(settings, definitionFile, { choices: true })).data;
    expect(plain.prepareChoice).toBeUndefined();
    expect(datasetId(withChoices)).toBe(datasetId(plain));
    const again = await withChoices.prepareChoice!(DEFAULT_PREPROCESSING);
    expect(datasetId(again)).toBe(datasetId(plain));
    const robust = await withChoices.prepareChoice!({ numericInputs: 'robust-clip', poolCategoriesBelow: 500 });
    expect(datasetId(robust)).not.toBe(datasetId(plain));
    expect(robust.rowIndices).toEqual(plain.rowIndices);
    expect(Array.from(robust.train.y)).toEqual(Array.from(plain.train.y));
    // The categories with fewer than 500 training rows, counted here from the CSV and the training rows, are pooled: one input for them all.
    const table = await readCsv(DEMO_CSV);
    const rare = (column: string): string[] => {
      const counts = new Map<string, number>();
      for (const row of plain.rowIndices!.train) counts.set(table.rows[row]![column]!, (counts.get(table.rows[row]![column]!) ?? 0) + 1);
      return [...counts].filter(([, count]) => count < 500).map(([category]) => category).sort();
    };
    const pooled = robust.recipe.features.flatMap((f) => (f.kind === 'categorical' ? [f.pooled ?? []] : []));
    expect(pooled).toEqual([rare('site_type'), rare('impeller_material')]);
    expect(pooled.flat().length).toBeGreaterThan(1);
    expect(robust.recipe.inputCount).toBe(plain.recipe.inputCount - pooled.flat().length + pooled.filter((list) => list.length > 0).length);
    // Every robust input stays inside the smooth clip's (-3, 3).
    for (const value of robust.train.x) expect(Math.abs(value)).toBeLessThan(3);
  });
});

/** Records which data set each job named and which data sets were added, around real threads. */
function recording(inner: TrialTransport, jobs: TrainJob[], added: string[]): TrialTransport {
  return {
    get capacity() {
      return inner.capacity;
    },
    addDataset: async (dataset: SharedDataset) => {
      added.push(dataset.id);
      await inner.addDataset(dataset);
    },
    run: (job, onEpoch, signal) => {
      jobs.push(job);
      return inner.run(job, onEpoch, signal);
    },
    close: () => inner.close(),
  };
}


describe('a study that searches preprocessing, end to end', () => {
  const listed: Partial<TrialConfiguration>[] = [
    { numericInputs: 'robust-clip', poolCategoriesBelow: 500 },
    { numericInputs: 'normal-quantiles', poolCategoriesBelow: 0 },
    { numericInputs: 'standardise', poolCategoriesBelow: 0 },
  ];
  const jobs: TrainJob[] = [];
  const added: string[] = [];
  let out: string;
  let trials: { id: number; configuration: TrialConfiguration; rank: number; auc: number }[];

  beforeAll(async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-choices-'));
    const base = { depth: 1, width: 8, activation: 'tanh', learningRate: 0.01, batchSize: 64, optimizer: 'adam', l2: 0.0001, dropout: 0 };
    const definition = {
      name: 'choices',
      data: { ...demo.data, csv: DEMO_CSV },
      space: { ...demo.space, width: { min: 4, max: 16, log: true }, ...CHOICES },
      tryFirst: listed.map((choice) => ({ ...base, ...choice })),
      budget: { trials: 6, maxEpochs: 3 },
      sampler: { kind: 'random', seed: 7 },
      goal: { metric: 'auc', better: 'higher' },
      threads: 2,
    };
    const file = path.join(dir, 'study.json');
    await writeFile(file, JSON.stringify(definition));
    out = path.join(dir, 'run');
    const outcome = await runStudy(await loadStudy(file), { out, transport: ({ threads }) => recording(new ThreadTransport({ threads }), jobs, added) });
    trials = outcome.ranking.map((ranked, i) => ({ id: ranked.trial.id, configuration: ranked.trial.configuration, rank: i + 1, auc: ranked.trial.curve.at(-1)!.metrics.auc! }));
  }, 240_000);

  it('trains each choice on its own data set, added to the transport once, before its first job', () => {
    expect(trials).toHaveLength(6);
    const byChoice = new Map<string, Set<string>>();
    for (const job of jobs) {
      const key = `${job.configuration.numericInputs}/${job.configuration.poolCategoriesBelow}`;
      byChoice.set(key, (byChoice.get(key) ?? new Set()).add(job.datasetId));
      expect(added).toContain(job.datasetId);
    }
    for (const ids of byChoice.values()) expect(ids.size).toBe(1);
    const ids = [...byChoice.values()].map((set) => [...set][0]);
    expect(new Set(ids).size).toBe(byChoice.size);
    expect(new Set(added).size).toBe(added.length);
    expect(byChoice.size).toBeGreaterThanOrEqual(3);
  });

  for (const [index, kind] of [[0, 'robust-clip'], [1, 'normal-quantiles']] as const) {
    it(`exports a ${kind} trial whose recipe, predict and model.onnx agree with what it trained on`, async () => {
      const trial = trials.find((t) => t.id === index)!;
      expect(trial.configuration.numericInputs).toBe(kind);
      const exported = await exportModel({ dir: out, rank: trial.rank, format: 'onnx', out: path.join(out, `export-${kind}`) });
      const configuration = JSON.parse(readFileSync(path.join(exported.out, 'configuration.json'), 'utf8')) as ExportConfiguration;
      const numeric = configuration.recipe.features.find((f) => f.kind === 'numeric');
      expect(numeric?.kind === 'numeric' && numeric.transform?.kind).toBe(kind);
      expect(configuration.recipe.features.some((f) => f.kind === 'categorical' && f.pooled !== undefined)).toBe(index === 0);
      expect(configuration.onnx!.numeric).toContain(kind);

      const table = await readCsv(DEMO_CSV);
      const model = await loadModel(exported.out);
      const probabilities = predict(model, table.rows).map((answer) => (answer as ClassPrediction).probabilities['yes']!);
      const classes = model.configuration.recipe.classes!;
      model.dispose();
      const onnx = await runOnnx(path.join(exported.out, 'model.onnx'), onnxInputs(configuration.recipe, table), table.rows.length, configuration.recipe.inputCount);
      let largest = 0;
      onnx.forEach((value, r) => (largest = Math.max(largest, Math.abs(value - probabilities[r]!))));
      expect(largest).toBeLessThan(1e-5);

      // predict on the validation rows gives the AUC the study recorded for the trial: the exported recipe is the one it trained on.
      const splits = JSON.parse(readFileSync(path.join(out, 'splits.json'), 'utf8')) as { validation: number[] };
      const labels = splits.validation.map((row) => classes.indexOf(table.rows[row - 1]!['fails_within_week']!));
      const scores = splits.validation.map((row) => probabilities[row - 1]!);
      expect(auc(labels, scores)).toBeCloseTo(trial.auc, 4);
    }, 120_000);
  }
});

describe('preprocessing choices from the command line', () => {
  let dir: string;
  let file: string;

  beforeAll(async () => {
    const base = tinyStudy();
    // 8 trials: enough for the report's hyperparameter importance.
    file = await writeTinyStudy(tinyStudy({ space: { ...base.space, numericInputs: ['robust-clip', 'normal-quantiles'], poolCategoriesBelow: [0, 40] }, budget: { trials: 8, maxEpochs: 3 } }));
    dir = path.join(path.dirname(file), 'run');
  });

  it('runs a study file that searches them, exports its winner as ONNX and predicts a CSV with it', async () => {
    const ran = await runCli(['run', file, '--out', dir]);
    expect(ran.code).toBe(0);
    // The ranking shows each trial's choice.
    expect(ran.stdout).toContain('preprocessing');
    expect(ran.stdout).toMatch(/(robust-clip|normal-quantiles)(, pooled below 40)?/);
    const exported = await runCli(['export', dir, '--format', 'onnx']);
    expect(exported.code).toBe(0);
    const folder = path.join(dir, 'export', 'rank-1');
    const configuration = JSON.parse(readFileSync(path.join(folder, 'configuration.json'), 'utf8')) as ExportConfiguration;
    const numeric = configuration.recipe.features.find((f) => f.kind === 'numeric');
    expect(['robust-clip', 'normal-quantiles']).toContain(numeric?.kind === 'numeric' ? numeric.transform?.kind : undefined);
    const output = path.join(dir, 'predictions.csv');
    const predicted = await runCli(['predict', folder, path.join(path.dirname(file), 'tiny.csv'), '--output', output]);
    expect(predicted.code).toBe(0);
    expect(readFileSync(output, 'utf8').trim().split('\n')).toHaveLength(121);
    // The report weighs the choices as hyperparameters.
    const plotted = await runCli(['plot', dir]);
    expect(plotted.code).toBe(0);
    expect(readFileSync(path.join(dir, 'plots', 'report.html'), 'utf8')).toContain('numeric inputs');
  }, 180_000);

  it('refuses a choice it does not know with one line naming the field, exit code 2', async () => {
    const base = tinyStudy();
    const bad = await writeTinyStudy(tinyStudy({ space: { ...base.space, numericInputs: ['min-max'] } as unknown as typeof base.space }));
    const result = await runCli(['run', bad, '--out', path.join(path.dirname(bad), 'run')]);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('space.numericInputs[0]');
    expect(result.stderr.trim().split('\n')).toHaveLength(1);
    expect(existsSync(path.join(path.dirname(bad), 'run', 'study.json'))).toBe(false);
  });

  it('refuses a listed configuration without the choices the space draws', async () => {
    const base = tinyStudy();
    const listed = { depth: 1, width: 8, activation: 'tanh', learningRate: 0.01, batchSize: 16 };
    const bad = await writeTinyStudy(tinyStudy({ space: { ...base.space, poolCategoriesBelow: [0, 40] }, tryFirst: [listed] } as unknown as typeof base));
    const result = await runCli(['run', bad, '--out', path.join(path.dirname(bad), 'run')]);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('tryFirst[0]');
    expect(result.stderr).toContain('poolCategoriesBelow');
  });
});

describe('a study searching preprocessing is deterministic, with folds too', () => {
  const base = tinyStudy();
  const searching = (folds?: number) =>
    tinyStudy({
      space: { ...base.space, numericInputs: ['standardise', 'robust-clip', 'normal-quantiles'], poolCategoriesBelow: [0, 40] },
      budget: { trials: 6, maxEpochs: 2 },
      ...(folds ? { data: { ...base.data, folds } } : {}),
    });
  const trialsOf = (trials: readonly { id: number; configuration: TrialConfiguration; score?: number | null; status: string }[]) =>
    trials.map((t) => ({ id: t.id, choice: `${t.configuration.numericInputs}/${t.configuration.poolCategoriesBelow}`, score: t.score, status: t.status })).sort((a, b) => a.id - b.id);

  it('gives the same trials with 1 and 2 threads, and after an interruption and a resume', async () => {
    const { one, two, interrupted, resumed, resumedState } = await trialsStraightAndResumed(searching, trialsOf);
    expect(new Set(one.map((t) => t.choice)).size).toBeGreaterThan(1);
    expect(two).toEqual(one);
    expect(interrupted.doc.state).not.toBe('finished');
    expect(resumedState).toBe('finished');
    expect(resumed).toEqual(one);
  }, 240_000);

  it('trains every choice on its own k folds', async () => {
    const file = await writeTinyStudy(searching(3));
    const jobs: TrainJob[] = [];
    const added: string[] = [];
    const outcome = await runStudy(file, { out: path.join(path.dirname(file), 'run'), transport: ({ threads }) => recording(new ThreadTransport({ threads }), jobs, added) });
    expect(outcome.doc.trials.every((t) => t.status === 'trained' && t.scoreStandardError !== undefined)).toBe(true);
    // The study's own data set (the default choice) is always added; then each other choice its trials name.
    const choices = new Set(['standardise/0', ...outcome.doc.trials.map((t) => `${t.configuration.numericInputs}/${t.configuration.poolCategoriesBelow}`)]);
    expect(choices.size).toBeGreaterThan(2);
    // Three fold data sets per choice, each added once, and every fold job names one of them.
    expect(added).toHaveLength(3 * choices.size);
    expect(new Set(added).size).toBe(added.length);
    for (const job of jobs) expect(added).toContain(job.datasetId);
  }, 240_000);
});
