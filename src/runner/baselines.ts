/**
 * The study's baselines, computed once before the first trial: the constant predictor, and a linear
 * model (softmax, logistic or least-squares regression: a network without hidden layers, trained by
 * the engine on the coordinator) over a small L2 grid, the grid point chosen on the validation rows.
 */
import type { BaselineEntry, StudyBaselines } from '../core/baselines.js';
import type { SharedDataset } from '../core/job.js';
import type { Goal, MetricName, TrialConfiguration } from '../core/configuration.js';
import { beats } from '../core/configuration.js';
import type { PreparedData } from '../data/types.js';
import { constantBaseline } from '../metrics/constant-baseline.js';
import { deriveSeed } from '../random/streams.js';
import { runTrainRequest } from '../trainers/run-request.js';

/** L2 penalties the linear baseline tries (common practice (no source): a few decades around none). */
export const LINEAR_L2_GRID: readonly number[] = [0, 1e-4, 1e-2];
/** The linear model's optimizer settings (common practice (no source): Adam at 0.01 on standardised inputs). */
const LINEAR_SETTINGS = { optimizer: 'adam', learningRate: 0.01, batchSize: 32 } as const;
/** Epochs the linear model trains: the study's epoch limit, at least the first and at most the second (common practice (no source): a linear model converges in tens of epochs). */
const LINEAR_MIN_EPOCHS = 20;
const LINEAR_MAX_EPOCHS = 100;

/** The constant predictor on the study's validation rows (with folds: the mean over the folds). */
export function constantOf(data: PreparedData): BaselineEntry {
  const { recipe } = data;
  const classCount = recipe.classes?.length ?? 0;
  const parts = data.folds && data.folds.length > 0 ? data.folds : [data];
  const splits = parts.map((part) => ({ trainY: part.train.y, validationY: part.validation.y }));
  const scaling = (fold: number): { mean: number; std: number } | undefined => parts[fold]!.recipe.targetScaling;
  return constantBaseline(recipe.task, splits, classCount, scaling);
}

/** The linear configuration for one L2 penalty: depth 0 (width and activation are unused). */
function linearConfiguration(l2: number): TrialConfiguration {
  return { depth: 0, width: 1, activation: 'relu', ...LINEAR_SETTINGS, l2, dropout: 0 };
}

/** The last epoch's metrics (and validation loss) of a linear model on one data set, or undefined when it diverged. */
async function trainLinear(dataset: SharedDataset, l2: number, epochs: number, seed: number): Promise<Partial<Record<MetricName, number>> | undefined> {
  const result = await runTrainRequest({ trialId: -1, seed, configuration: linearConfiguration(l2), datasetId: dataset.id, fromEpoch: 0, toEpoch: epochs, dataset });
  const last = result.epochs.at(-1);
  if (result.status !== 'completed' || !last) return undefined;
  return { ...last.metrics, validationLoss: last.validationLoss };
}

/** Mean of each metric over the parts (folds), keeping only metrics every part has. */
function meanMetrics(parts: Partial<Record<MetricName, number>>[]): Partial<Record<MetricName, number>> {
  const mean: Partial<Record<MetricName, number>> = {};
  for (const key of Object.keys(parts[0] ?? {}) as MetricName[]) {
    const values = parts.map((p) => p[key]).filter((v): v is number => v !== undefined && Number.isFinite(v));
    if (values.length === parts.length) mean[key] = values.reduce((a, b) => a + b, 0) / values.length;
  }
  return mean;
}

/**
 * The linear baseline: for each L2 of {@link LINEAR_L2_GRID}, train on every data set (the study's, or
 * its folds'), average, and keep the L2 whose goal score is best (ties: the smaller L2).
 */
export async function linearOf(datasets: readonly SharedDataset[], goal: Goal, maxEpochs: number, studySeed: number): Promise<BaselineEntry | undefined> {
  const epochs = Math.min(Math.max(maxEpochs, LINEAR_MIN_EPOCHS), LINEAR_MAX_EPOCHS);
  const seed = deriveSeed(studySeed, 'linear-baseline');
  let best: { l2: number; metrics: Partial<Record<MetricName, number>>; score: number } | undefined;
  for (const l2 of LINEAR_L2_GRID) {
    const parts = await Promise.all(datasets.map((dataset) => trainLinear(dataset, l2, epochs, seed)));
    if (parts.some((p) => p === undefined)) continue;
    const metrics = meanMetrics(parts as Partial<Record<MetricName, number>>[]);
    const score = metrics[goal.metric];
    if (score === undefined) continue;
    if (!best || beats(score, best.score, goal.better)) best = { l2, metrics, score };
  }
  if (!best) return undefined;
  const task = datasets[0]!.task;
  const model = task === 'multiclass' ? 'softmax regression' : task === 'binary' ? 'logistic regression' : 'least-squares regression';
  const folds = datasets.length > 1 ? `, mean over ${datasets.length} folds` : '';
  return { metrics: best.metrics, what: `${model} (no hidden layer, Adam at 0.01, ${epochs} epochs, L2 ${best.l2} of ${LINEAR_L2_GRID.join(', ')})${folds}` };
}

/** Both baselines of a study. `datasets`: the study's data set, or its k fold data sets. */
export async function studyBaselines(data: PreparedData, datasets: readonly SharedDataset[], goal: Goal, maxEpochs: number, studySeed: number): Promise<StudyBaselines> {
  const linear = await linearOf(datasets, goal, maxEpochs, studySeed);
  return { constant: constantOf(data), ...(linear ? { linear } : {}) };
}
