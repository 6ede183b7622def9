/**
 * The study rungwise defines for a CSV and a target alone: a search space, a budget and a sampler
 * chosen from the data's size and the task, starting from a known-good configuration. Every value's
 * origin is in {@link DEFAULT_SOURCES} (and the README's "A study from a CSV and a target").
 */
import type { Task, TrialConfiguration } from '../core/configuration.js';
import type { StudyDefinitionInput } from './definition.js';

/** What the defaults depend on. */
export interface DataShape {
  /** Path of the CSV as the written definition gives it (relative to where the definition is written). */
  csv: string;
  target: string;
  task: Task;
  /** Data rows of the CSV. */
  rows: number;
  /** Columns of the CSV, the target included. */
  columns: number;
  splitSeed?: number;
  /** The study's name; default: the CSV's file name without its extension, made a valid name. */
  name?: string;
  /** Replaces the default budget; the first rung then trains maxEpochs / 27 epochs (at least 1). */
  budget?: { trials: number; maxEpochs: number };
}

/** Where each default comes from, one line each, as docs/study-definition.md ("A study from a CSV and a target") lists them. */
export const DEFAULT_SOURCES: readonly string[] = [
  'depth 1 to 4, width 32 to 512 (log), dropout 0 to 0.5, L2 1e-6 to 1e-3 (log): narrowed from the MLP search space of Gorishniy, Rubachev, Khrulkov, Babenko, "Revisiting Deep Learning Models for Tabular Data", NeurIPS 2021 (appendix; from memory), to what trains on two cores in minutes',
  'learning rate 1e-4 to 1e-2 (log) with Adam: the same search space, its lower end raised (from memory); Adam: Kingma and Ba, ICLR 2015',
  'activations relu, selu and swish: selu for classification and a smooth activation (mish, here swish) for regression are the defaults of RealMLP-TD, Holzmüller, Grinsztajn, Steinwart, "Better by Default", NeurIPS 2024 (from memory); relu as the common baseline',
  'first configuration 3 x 256, dropout 0.15: RealMLP-TD\'s shape and dropout (Holzmüller et al. 2024, from memory); learning rate 0.001 (Adam\'s default, Kingma and Ba 2015); L2 at the bottom of its range, since RealMLP-TD uses no weight decay',
  'batch sizes by rows (32 to 128 below 5,000 rows, 128 to 512 above): common practice (no source); RealMLP-TD uses 256',
  'numeric inputs standardise or robust-clip, the known-good configuration robust-clip: robust scaling with smooth clipping is RealMLP-TD\'s preprocessing (Holzmüller, Grinsztajn, Steinwart, "Better by Default", NeurIPS 2024, from memory); measured against standardising alone on the reference sets (docs/performance.md)',
  'weight decay 1e-6 to 1e-3 (log) beside L2 and dropout, searched together: Kadra, Lindauer, Hutter, Grabocka, "Well-tuned Simple Nets Excel on Tabular Datasets", NeurIPS 2021 (their regularisation cocktail includes decoupled weight decay; from memory); decoupled weight decay: Loshchilov and Hutter, ICLR 2019',
  'schedule constant or cosine (no warm-up), the known-good configuration cosine: cosine annealing, Loshchilov and Hutter, "SGDR", ICLR 2017; RealMLP-TD decays its learning rate over training (Holzmüller et al. 2024, from memory); measured with and without (docs/performance.md)',
  'label smoothing 0 to 0.2 for classification, the known-good configuration 0.1: RealMLP-TD\'s classification default (Holzmüller et al. 2024, from memory); label smoothing: Szegedy et al., CVPR 2016',
  'sampler: successive halving (Jamieson and Talwalkar, AISTATS 2016) with eta 3 over 4 rungs; trials and epochs from the rows so the time stays about the same: a 2,000-row, 30-column set takes 20 s on a quiet two-core machine, and three times the budget gave no better test scores on the reference sets (docs/performance.md)',
];

/** Data rows for which the budget below was measured; smaller sets get more epochs, larger ones fewer. */
const REFERENCE_ROWS = 2000;

/** The known-good configuration a default study tries first (see {@link DEFAULT_SOURCES}). */
export function defaultFirstConfiguration(task: Task, rows: number): TrialConfiguration {
  return {
    depth: 3,
    width: 256,
    activation: task === 'regression' ? 'swish' : 'selu',
    learningRate: 1e-3,
    batchSize: defaultBatchSizes(rows)[1]!,
    optimizer: 'adam',
    l2: 1e-6,
    dropout: 0.15,
    schedule: 'cosine',
    warmupEpochs: 0,
    minFactor: 0,
    weightDecay: 1e-6,
    numericInputs: 'robust-clip',
    ...(task === 'regression' ? {} : { labelSmoothing: 0.1 }),
  };
}

/** Batch sizes to choose from for a data set of `rows` rows (common practice, no source). */
export function defaultBatchSizes(rows: number): number[] {
  return rows < 5000 ? [32, 64, 128] : [128, 256, 512];
}

/**
 * Successive halving over 4 rungs (eta 3): `trials` (81) configurations train minEpochs, the best third
 * 3 x minEpochs, and so on to maxEpochs = 27 x minEpochs. Epochs scale inversely with the rows (so the
 * time stays about the same), between 1 and 8 epochs at the first rung.
 */
export function defaultBudget(rows: number): { trials: number; maxEpochs: number; minEpochs: number } {
  const minEpochs = Math.max(1, Math.min(8, Math.round((2 * REFERENCE_ROWS) / Math.max(rows, 1))));
  return { trials: 81, minEpochs, maxEpochs: 27 * minEpochs };
}

/** A valid study name from a file name ('Pump logs (2024).csv' gives 'Pump-logs-2024'). */
export function studyNameFor(csv: string): string {
  const base = csv.replace(/^.*[\\/]/, '').replace(/\.[^.]*$/, '');
  const name = base.replace(/[^A-Za-z0-9._-]+/g, '-').replace(/^[^A-Za-z0-9]+/, '').replace(/-+$/, '');
  return name === '' ? 'study' : name;
}

/** The full study definition rungwise writes for a CSV, a target and the task, with every default spelled out. */
export function defaultStudy(shape: DataShape): StudyDefinitionInput {
  const { trials, maxEpochs, minEpochs } = shape.budget
    ? { ...shape.budget, minEpochs: Math.max(1, Math.floor(shape.budget.maxEpochs / 27)) }
    : defaultBudget(shape.rows);
  return {
    name: shape.name ?? studyNameFor(shape.csv),
    data: { csv: shape.csv, target: shape.target, task: shape.task, ...(shape.splitSeed !== undefined ? { splitSeed: shape.splitSeed } : {}) },
    space: {
      depth: { min: 1, max: 4 },
      width: { min: 32, max: 512, log: true },
      activation: ['relu', 'selu', 'swish'],
      learningRate: { min: 1e-4, max: 1e-2, log: true },
      batchSize: defaultBatchSizes(shape.rows),
      optimizer: ['adam'],
      l2: { min: 1e-6, max: 1e-3, log: true },
      dropout: { min: 0, max: 0.5, log: false },
      schedule: { kind: ['constant', 'cosine'], warmupEpochs: 0 },
      weightDecay: { min: 1e-6, max: 1e-3, log: true },
      numericInputs: ['standardise', 'robust-clip'],
      ...(shape.task === 'regression' ? {} : { labelSmoothing: { min: 0, max: 0.2, log: false } }),
    },
    budget: { trials, maxEpochs },
    sampler: { kind: 'successive-halving', seed: 0, eta: 3, minEpochs },
    tryFirst: [defaultFirstConfiguration(shape.task, shape.rows)],
  };
}
