import { readFileSync } from 'node:fs';
import { mkdtemp, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { quantileSorted } from 'd3-array';
import * as ort from 'onnxruntime-node';
import { beforeAll, describe, expect, it } from 'vitest';
import { exportModel } from '../src/commands/export.js';
import { exportEnsemble } from '../src/commands/export-ensemble.js';
import { DEFAULT_ENCODING_SETTINGS, type TrialConfiguration } from '../src/core/configuration.js';
import { readCsv } from '../src/data/csv.js';
import { datasetId } from '../src/data/dataset-id.js';
import { binValue, encodedInputCount, encodedWidth, periodicFrequencies, quantileEdges, writeEncoded } from '../src/data/numeric-encodings.js';
import { prepareData } from '../src/data/prepare.js';
import { buildRecipe, encodeFeatures, rawInputCount } from '../src/data/recipe.js';
import type { ExportConfiguration } from '../src/export/configuration.js';
import { loadModel, predict, type ClassPrediction } from '../src/export/hand-off.js';
import { auc } from '../src/metrics/metrics.js';
import { runStudy } from '../src/runner/run-study.js';
import { configurationAt, pointOfConfiguration, spaceDimensions } from '../src/space/dimensions.js';
import { configurationForTrial } from '../src/space/sample.js';
import { spaceSchema } from '../src/space/schema.js';
import { loadStudy } from '../src/study/load.js';
import { onnxInputs, runOnnx } from './helpers/exports.js';
import { tinyStudy, trialsStraightAndResumed, writeTinyStudy } from './helpers/studies.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const DEMO_CSV = path.join(ROOT, 'studies/demo/pump-logs.csv');
const DEMO_FILE = path.join(ROOT, 'studies/demo/study.json');
const demo = JSON.parse(readFileSync(DEMO_FILE, 'utf8')) as { data: Record<string, unknown>; space: Record<string, unknown> };
const SETTINGS = { csv: DEMO_CSV, target: 'fails_within_week', task: 'binary' as const, validationFraction: 0.2, testFraction: 0.15, splitSeed: 1, maxDistinctShare: 0.5 };
const NUMERIC_COLUMNS = ['vibration_rms_mm_s', 'bearing_temp_c', 'discharge_pressure_bar', 'motor_current_a', 'hours_since_service', 'duty_cycle_pct', 'ambient_humidity_pct'];

describe('the piecewise-linear encoding', () => {
  it("follows the paper's definition: 0 below a bin, 1 above, the ramp inside, the first bin open below and the last open above", () => {
    // Source: Gorishniy, Rubachev and Babenko, "On Embeddings for Numerical Features in Tabular Deep Learning", NeurIPS 2022,
    // Section 3.2: e_t = 0 if x < b_{t-1} and t > 1; 1 if x >= b_t and t < T; (x - b_{t-1}) / (b_t - b_{t-1}) otherwise.
    // Worked by hand for the edges 0, 1, 3 (T = 2).
    const edges = [0, 1, 3];
    const encode = (x: number): number[] => [binValue(edges, 0, x), binValue(edges, 1, x)];
    expect(encode(-1)).toEqual([-1, 0]);
    expect(encode(0.5)).toEqual([0.5, 0]);
    expect(encode(1)).toEqual([1, 0]);
    expect(encode(2)).toEqual([1, 0.5]);
    expect(encode(3)).toEqual([1, 1]);
    expect(encode(5)).toEqual([1, 2]);
  });

  it('takes its edges from the training quantiles, as d3-array computes them, with tied edges merged', () => {
    // Source: d3-array 3.2.5 quantileSorted (R-7: Hyndman and Fan, "Sample Quantiles in Statistical Packages", 1996, definition 7);
    // the paper's bins are the quantiles at t / T (Gorishniy et al. 2022, Section 3.2.1, from memory).
    let seed = 12345;
    const next = (): number => (seed = (seed * 1103515245 + 12345) % 2 ** 31) / 2 ** 31;
    const sorted = Float64Array.from({ length: 501 }, () => Math.exp(2 * next())).sort();
    for (const bins of [1, 2, 8, 48]) {
      const expected = Array.from({ length: bins + 1 }, (_, t) => quantileSorted(sorted, t / bins)!);
      expect(quantileEdges(sorted, bins)).toEqual(expected.map((edge) => expect.closeTo(edge, 10)));
    }
    // A column of 3 distinct values, most of them 0: fewer distinct edges, so fewer bins than asked.
    const tied = Float64Array.from({ length: 100 }, (_, i) => (i < 70 ? 0 : i < 90 ? 1 : 2)).sort();
    const edges = quantileEdges(tied, 8);
    const reference = [...new Set(Array.from({ length: 9 }, (_, t) => quantileSorted(tied, t / 8)!))];
    expect(edges).toEqual(reference);
    expect(encodedWidth({ kind: 'piecewise-linear', edges })).toBe(edges.length - 1);
    expect(edges.length - 1).toBeLessThan(8);
  });

  it('gives a constant column one input, always 0', () => {
    const edges = quantileEdges(Float64Array.from([4, 4, 4, 4]), 8);
    expect(edges).toEqual([4]);
    const out = new Float32Array(1).fill(7);
    writeEncoded({ kind: 'piecewise-linear', edges }, 123, out, 0);
    expect(encodedWidth({ kind: 'piecewise-linear', edges })).toBe(1);
    expect(out[0]).toBe(0);
  });

  it('is fitted on the training rows only, after the scaling', () => {
    // Training rows 0..3 only: the test row's 1000 must not move the edges.
    const rows = [1, 2, 3, 4].map((v) => ({ x: String(v), y: v % 2 ? 'a' : 'b' }));
    const recipe = buildRecipe({ task: 'binary', target: 'y', features: [{ name: 'x', kind: 'numeric' }], trainingRows: rows, preprocessing: { numericInputs: 'standardise', poolCategoriesBelow: 0, numericEncoding: 'piecewise-linear' }, encoding: { settings: { ...DEFAULT_ENCODING_SETTINGS, bins: 2 }, seed: 0 } });
    const feature = recipe.features[0]!;
    if (feature.kind !== 'numeric') throw new Error('numeric expected');
    // Standardised 1..4 (mean 2.5, population std sqrt(1.25)): quantiles at 0, 1/2, 1 are -1.342, 0, 1.342.
    const z = 1.5 / Math.sqrt(1.25);
    expect(feature.encoding).toEqual({ kind: 'piecewise-linear', edges: [expect.closeTo(-z, 12), expect.closeTo(0, 12), expect.closeTo(z, 12)] });
    expect(recipe.inputCount).toBe(2);
    const x = encodeFeatures(recipe, [{ x: '1000', y: 'a' }, { x: '2.5', y: 'a' }], 'rows.csv');
    const far = (1000 - 2.5) / Math.sqrt(1.25);
    expect(Array.from(x)).toEqual([1, expect.closeTo(far / z, 3), 1, 0]);
  });
});

describe('the periodic encoding', () => {
  it('draws its frequencies from N(0, sigma^2), the same for the same seed and column, different for another column', () => {
    // Source: Box and Muller, "A Note on the Generation of Random Normal Deviates", Ann. Math. Statist. 29(2), 1958: the draws are
    // standard normal; with 20,000 draws the sample mean is within 0.05 sigma and the standard deviation within 3% of sigma.
    const settings = { ...DEFAULT_ENCODING_SETTINGS, frequencies: 128, scale: 2.5 };
    const draws = Array.from({ length: 160 }, (_, column) => periodicFrequencies(7, settings, `column${column}`)).flat();
    const mean = draws.reduce((a, b) => a + b, 0) / draws.length;
    const std = Math.sqrt(draws.reduce((a, b) => a + (b - mean) ** 2, 0) / draws.length);
    expect(Math.abs(mean)).toBeLessThan(0.05 * 2.5);
    expect(Math.abs(std / 2.5 - 1)).toBeLessThan(0.03);
    expect(periodicFrequencies(7, settings, 'a')).toEqual(periodicFrequencies(7, settings, 'a'));
    expect(periodicFrequencies(7, settings, 'a')).not.toEqual(periodicFrequencies(7, settings, 'b'));
    expect(periodicFrequencies(7, settings, 'a')).not.toEqual(periodicFrequencies(8, settings, 'a'));
  });

  it('writes sin(2 pi c x) then cos(2 pi c x) for each frequency', () => {
    // Source: Gorishniy et al. 2022, Section 3.3: v = [sin(2 pi c_1 x), cos(2 pi c_1 x), ...] (the order of sin and cos within a pair from memory).
    const out = new Float32Array(4);
    writeEncoded({ kind: 'periodic', frequencies: [0.25, -1] }, 1, out, 0);
    // c = 0.25, x = 1: sin(pi / 2) = 1, cos(pi / 2) = 0; c = -1: sin(-2 pi) = 0, cos(-2 pi) = 1.
    expect(Array.from(out).map((v) => Math.round(v * 1e6) / 1e6 + 0)).toEqual([1, 0, 0, 1]);
  });
});

describe('drawing the encoding and the inputs it gives', () => {
  const plain = spaceSchema.parse(demo.space);
  const searched = spaceSchema.parse({ ...demo.space, numericEncoding: ['none', 'piecewise-linear', 'periodic'] });

  it('leaves a space without it drawing exactly as before, and draws it after every other field', () => {
    const seen = new Set<string>();
    for (let trial = 0; trial < 30; trial++) {
      const before = configurationForTrial(plain, 7, trial);
      const { numericEncoding, ...rest } = configurationForTrial(searched, 7, trial);
      expect(before).not.toHaveProperty('numericEncoding');
      expect(rest).toEqual(before);
      seen.add(numericEncoding!);
    }
    expect(seen.size).toBe(3);
    expect(spaceDimensions(searched).at(-1)!.name).toBe('numericEncoding');
    const configuration = configurationForTrial(searched, 3, 4);
    expect(configurationAt(searched, pointOfConfiguration(searched, configuration)).numericEncoding).toBe(configuration.numericEncoding);
  });

  it("widens the first layer's inputs: the encoded count, exact for periodic, at most the bins for piecewise-linear, and counted the same from the recipe alone", async () => {
    const withChoices = (await prepareData(SETTINGS, DEMO_FILE, { choices: true, foldSeed: 7 })).data;
    const plainData = (await prepareData(SETTINGS, DEMO_FILE)).data;
    expect(datasetId(withChoices)).toBe(datasetId(plainData));
    const oneHot = plainData.recipe.inputCount - NUMERIC_COLUMNS.length;
    const periodic = await withChoices.prepareChoice!({ numericInputs: 'standardise', poolCategoriesBelow: 0, numericEncoding: 'periodic' });
    expect(periodic.recipe.inputCount).toBe(encodedInputCount(NUMERIC_COLUMNS.length, oneHot, 'periodic', DEFAULT_ENCODING_SETTINGS));
    expect(periodic.recipe.inputCount).toBe(NUMERIC_COLUMNS.length * 2 * DEFAULT_ENCODING_SETTINGS.frequencies + oneHot);
    expect(rawInputCount(periodic.recipe)).toBe(plainData.recipe.inputCount);
    expect(periodic.train.x.length).toBe(periodic.train.rows * periodic.recipe.inputCount);
    const bins = await withChoices.prepareChoice!({ numericInputs: 'robust-clip', poolCategoriesBelow: 0, numericEncoding: 'piecewise-linear' });
    expect(bins.recipe.inputCount).toBeLessThanOrEqual(encodedInputCount(NUMERIC_COLUMNS.length, oneHot, 'piecewise-linear', DEFAULT_ENCODING_SETTINGS));
    expect(bins.recipe.inputCount).toBeGreaterThan(plainData.recipe.inputCount);
    // Counted from the choice's recipe without encoding rows, as the weight limit sizes a configuration's network.
    expect(withChoices.inputCountFor!({ numericInputs: 'standardise', poolCategoriesBelow: 0, numericEncoding: 'periodic' })).toBe(periodic.recipe.inputCount);
    expect(withChoices.inputCountFor!({ numericInputs: 'robust-clip', poolCategoriesBelow: 0, numericEncoding: 'piecewise-linear' })).toBe(bins.recipe.inputCount);
    expect(withChoices.inputCountFor!({ numericInputs: 'standardise', poolCategoriesBelow: 0 })).toBe(plainData.recipe.inputCount);
    expect(datasetId(bins)).not.toBe(datasetId(plainData));
    expect(Array.from(bins.validation.y)).toEqual(Array.from(plainData.validation.y));
  });

  it('refuses an encoding setting without the encoding it sets, naming the field', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-encoding-'));
    const file = path.join(dir, 'study.json');
    await writeFile(file, JSON.stringify({ ...demo, data: { ...demo.data, csv: DEMO_CSV }, space: { ...demo.space, numericEncoding: ['none', 'piecewise-linear'], periodicScale: 2 } }));
    await expect(loadStudy(file)).rejects.toThrow(/space\.periodicScale.*periodic/);
  });
});

describe('a study that searches the numeric encoding, end to end', () => {
  const listed: Partial<TrialConfiguration>[] = [{ numericEncoding: 'piecewise-linear' }, { numericEncoding: 'periodic' }, { numericEncoding: 'none' }];
  let out: string;
  let trials: { id: number; configuration: TrialConfiguration; rank: number; auc: number }[];

  beforeAll(async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-encodings-'));
    const base = { depth: 1, width: 8, activation: 'tanh', learningRate: 0.01, batchSize: 64, optimizer: 'adam', l2: 0.0001, dropout: 0 };
    const definition = {
      name: 'encodings',
      data: { ...demo.data, csv: DEMO_CSV },
      space: { ...demo.space, width: { min: 4, max: 16, log: true }, numericEncoding: ['none', 'piecewise-linear', 'periodic'], encodingBins: 6, periodicFrequencies: 4 },
      tryFirst: listed.map((choice) => ({ ...base, ...choice })),
      budget: { trials: 3, maxEpochs: 3 },
      sampler: { kind: 'random', seed: 7 },
      goal: { metric: 'auc', better: 'higher' },
      threads: 2,
    };
    const file = path.join(dir, 'study.json');
    await writeFile(file, JSON.stringify(definition));
    out = path.join(dir, 'run');
    const outcome = await runStudy(await loadStudy(file), { out });
    trials = outcome.ranking.map((ranked, i) => ({ id: ranked.trial.id, configuration: ranked.trial.configuration, rank: i + 1, auc: ranked.trial.curve.at(-1)!.metrics.auc! }));
  }, 240_000);

  for (const [index, kind] of [[0, 'piecewise-linear'], [1, 'periodic']] as const) {
    it(`exports a ${kind} trial whose recipe, predict and model.onnx agree with what it trained on`, async () => {
      const trial = trials.find((t) => t.id === index)!;
      expect(trial.configuration.numericEncoding).toBe(kind);
      const exported = await exportModel({ dir: out, rank: trial.rank, format: 'onnx', out: path.join(out, `export-${kind}`) });
      const configuration = JSON.parse(readFileSync(path.join(exported.out, 'configuration.json'), 'utf8')) as ExportConfiguration;
      const encoded = configuration.recipe.features.filter((f) => f.kind === 'numeric' && f.encoding?.kind === kind);
      expect(encoded).toHaveLength(NUMERIC_COLUMNS.length);
      expect(configuration.recipe.inputCount).toBe(configuration.inputs.length);
      expect(configuration.onnx!.numeric).toContain(kind);
      expect(configuration.onnx!.inputs).toHaveLength(rawInputCount(configuration.recipe));

      const table = await readCsv(DEMO_CSV);
      const model = await loadModel(exported.out);
      const probabilities = predict(model, table.rows).map((answer) => (answer as ClassPrediction).probabilities['yes']!);
      const classes = model.configuration.recipe.classes!;
      model.dispose();
      // Source: onnxruntime-node runs the ONNX operators (MatMul, Mul, Add, Max, Min, Sin, Cos) as the ONNX specification defines them.
      const onnx = await runOnnx(path.join(exported.out, 'model.onnx'), onnxInputs(configuration.recipe, table), table.rows.length, rawInputCount(configuration.recipe));
      let largest = 0;
      onnx.forEach((value, r) => (largest = Math.max(largest, Math.abs(value - probabilities[r]!))));
      expect(table.rows.length).toBe(3000);
      expect(largest).toBeLessThan(1e-5);

      // predict on the validation rows gives the AUC the study recorded: the exported recipe is the one the trial trained on.
      const splits = JSON.parse(readFileSync(path.join(out, 'splits.json'), 'utf8')) as { validation: number[] };
      const labels = splits.validation.map((row) => classes.indexOf(table.rows[row - 1]!['fails_within_week']!));
      const scores = splits.validation.map((row) => probabilities[row - 1]!);
      expect(auc(labels, scores)).toBeCloseTo(trial.auc, 4);
    }, 120_000);
  }

  it("hands over an ensemble of rank 1's encoding only: members trained on another encoding have other inputs and are left out", async () => {
    expect(new Set(trials.map((t) => t.configuration.numericEncoding)).size).toBe(3);
    const summary = await exportEnsemble({ dir: out, size: 3, out: path.join(out, 'export-ensemble') });
    const winner = trials.find((t) => t.rank === 1)!;
    expect(summary.ensemble.members.length).toBeGreaterThanOrEqual(1);
    expect(summary.ensemble.members.every((member) => (member.configuration.numericEncoding ?? 'none') === winner.configuration.numericEncoding)).toBe(true);
    const single = await exportModel({ dir: out, rank: 1, out: path.join(out, 'export-rank-1') });
    const recipeOf = (dir: string) => (JSON.parse(readFileSync(path.join(dir, 'configuration.json'), 'utf8')) as ExportConfiguration).recipe;
    expect(recipeOf(summary.out)).toEqual(recipeOf(single.out));
  }, 120_000);
});

describe('a study searching the numeric encoding is deterministic, with folds too', () => {
  const base = tinyStudy();
  const searching = (folds?: number) =>
    tinyStudy({
      space: { ...base.space, numericEncoding: ['none', 'piecewise-linear', 'periodic'], encodingBins: 4, periodicFrequencies: 3 },
      budget: { trials: 6, maxEpochs: 2 },
      ...(folds ? { data: { ...base.data, folds } } : {}),
    });
  const trialsOf = (trials: readonly { id: number; configuration: TrialConfiguration; score?: number | null; status: string }[]) =>
    trials.map((t) => ({ id: t.id, encoding: t.configuration.numericEncoding, score: t.score, status: t.status })).sort((a, b) => a.id - b.id);

  it('gives the same trials with 1 and 2 threads, and after an interruption and a resume', async () => {
    const { one, two, interrupted, resumed, resumedState } = await trialsStraightAndResumed(searching, trialsOf);
    expect(new Set(one.map((t) => t.encoding)).size).toBeGreaterThan(1);
    expect(two).toEqual(one);
    expect(interrupted.doc.state).not.toBe('finished');
    expect(resumedState).toBe('finished');
    expect(resumed).toEqual(one);
  }, 240_000);

  it('trains every encoding on k folds of its own', async () => {
    const file = await writeTinyStudy(searching(3));
    const outcome = await runStudy(file, { out: path.join(path.dirname(file), 'run') });
    expect(outcome.doc.trials.every((t) => t.status === 'trained' && t.scoreStandardError !== undefined)).toBe(true);
    expect(new Set(outcome.doc.trials.map((t) => t.configuration.numericEncoding)).size).toBeGreaterThan(1);
  }, 240_000);
});
