import type { MetricName, Goal, TrialConfiguration } from '../core/configuration.js';
import { samplerTraits } from '../samplers/index.js';
import type { SamplerKind } from '../study/definition.js';
import type { StudyDocument } from '../store/types.js';
import { spaceRegularisers, type RegulariserName } from '../space/regularisers.js';
import { drawsOnLogScale } from '../space/schema.js';

/** Metric names as a reader says them, with units where the metric has one. */
const METRIC_LABELS: Record<MetricName, string> = {
  accuracy: 'accuracy (fraction correct)',
  macroF1: 'macro F1',
  logLoss: 'log loss',
  auc: 'AUC',
  rmse: 'RMSE (target units)',
  mae: 'MAE (target units)',
  r2: 'R²',
  validationLoss: 'validation loss',
  cost: 'cost per row (the study\'s unit)',
};

/** "validation AUC (higher is better)". */
export function goalLabel(goal: Goal): string {
  const better = goal.better === 'higher' ? 'higher is better' : 'lower is better';
  return `validation ${METRIC_LABELS[goal.metric]}, ${better}`;
}

/** "validation AUC", without which way is better, for legends and short titles. */
export function metricLabel(metric: MetricName): string {
  return metric === 'validationLoss' ? METRIC_LABELS.validationLoss : `validation ${METRIC_LABELS[metric]}`;
}

/** True for samplers that stop trials at rungs (their trials carry meaningful rung numbers). */
export function isHalving(kind: SamplerKind): boolean {
  return samplerTraits(kind).stopsAtRungs;
}

/** How a hyperparameter is laid out on an axis. */
export type AxisKind = 'log' | 'linear' | 'ordinal' | 'nominal';

export interface ParameterAxis {
  key: keyof TrialConfiguration;
  /** Axis title in plain words, with the unit or scale. */
  title: string;
  /** A few words for crowded places (the importance bars). */
  shortTitle: string;
  kind: AxisKind;
  /** Category order for ordinal and nominal axes (the search space's own order when known). */
  categories?: (string | number)[];
}

/**
 * The eight hyperparameters, laid out as the search space draws them: learning rate and L2 on a log
 * axis, width on a log axis when the space draws it so, choices as categories in the space's order.
 */
export function parameterAxes(study: StudyDocument): ParameterAxis[] {
  const space = study.definition.space;
  const sortedNumbers = (values: number[]): number[] => [...new Set(values)].sort((a, b) => a - b);
  return [
    { key: 'learningRate', title: 'learning rate (log scale)', shortTitle: 'learning rate (log)', kind: 'log' },
    { key: 'l2', title: 'L2 weight penalty (log scale)', shortTitle: 'L2 penalty (log)', kind: 'log' },
    { key: 'depth', title: 'hidden layers', shortTitle: 'hidden layers', kind: 'ordinal', categories: sortedNumbers(study.trials.map((t) => t.configuration.depth)) },
    { key: 'width', title: space.width.log ? 'units per hidden layer (log scale)' : 'units per hidden layer', shortTitle: space.width.log ? 'units (log)' : 'units', kind: space.width.log ? 'log' : 'linear' },
    { key: 'batchSize', title: 'batch size (rows)', shortTitle: 'batch size', kind: 'ordinal', categories: sortedNumbers([...space.batchSize, ...study.trials.map((t) => t.configuration.batchSize)]) },
    { key: 'dropout', title: 'dropout rate (fraction of units)', shortTitle: 'dropout', kind: 'linear' },
    { key: 'activation', title: 'activation', shortTitle: 'activation', kind: 'nominal', categories: [...space.activation] },
    { key: 'optimizer', title: 'optimizer', shortTitle: 'optimizer', kind: 'nominal', categories: [...space.optimizer] },
    ...scheduleAxes(study),
    ...regulariserAxes(study),
    ...(space.shape ? [{ key: 'shape', title: 'hidden-layer widths (constant or funnel)', shortTitle: 'shape', kind: 'nominal', categories: [...space.shape] } satisfies ParameterAxis] : []),
    ...(space.block ? [{ key: 'block', title: 'hidden layers stacked plain or in residual blocks', shortTitle: 'block', kind: 'nominal', categories: [...space.block] } satisfies ParameterAxis] : []),
    ...preprocessingAxes(study),
    ...(space.classWeights ? [{ key: 'classWeights', title: 'class weighting of the training loss', shortTitle: 'class weights', kind: 'nominal', categories: [...space.classWeights] } satisfies ParameterAxis] : []),
  ];
}

/** The regularisers the space searches (src/space/regularisers.ts), each on its own scale. */
function regulariserAxes(study: StudyDocument): ParameterAxis[] {
  const words: Record<RegulariserName, { title: string; shortTitle: string }> = {
    weightDecay: { title: 'decoupled weight decay per step', shortTitle: 'weight decay' },
    maxGradientNorm: { title: 'largest gradient norm (clipping)', shortTitle: 'max gradient norm' },
    labelSmoothing: { title: 'label smoothing (epsilon)', shortTitle: 'label smoothing' },
  };
  return spaceRegularisers(study.definition.space).map(({ dimension, range }) => {
    const log = drawsOnLogScale(range, dimension.defaultLog);
    const { title, shortTitle } = words[dimension.name];
    return { key: dimension.name, title: log ? `${title} (log scale)` : title, shortTitle: log ? `${shortTitle} (log)` : shortTitle, kind: log ? 'log' : 'linear' };
  });
}

/** The preprocessing choices, when the space searches them. */
function preprocessingAxes(study: StudyDocument): ParameterAxis[] {
  const { numericInputs, poolCategoriesBelow, numericEncoding } = study.definition.space;
  const axes: ParameterAxis[] = [];
  if (numericInputs) axes.push({ key: 'numericInputs', title: 'numeric inputs', shortTitle: 'numeric inputs', kind: 'nominal', categories: [...numericInputs] });
  if (numericEncoding) axes.push({ key: 'numericEncoding', title: 'numeric encoding', shortTitle: 'encoding', kind: 'nominal', categories: [...numericEncoding] });
  if (poolCategoriesBelow) {
    const categories = [...poolCategoriesBelow].sort((a, b) => a - b);
    axes.push({ key: 'poolCategoriesBelow', title: 'categories pooled below (training rows)', shortTitle: 'pool below', kind: 'ordinal', categories });
  }
  return axes;
}

/** The learning-rate schedule's settings, when the space has a schedule (src/core/schedule.ts). */
function scheduleAxes(study: StudyDocument): ParameterAxis[] {
  const schedule = study.definition.space.schedule;
  if (!schedule) return [];
  const sortedNumbers = (values: (number | undefined)[]): number[] => [...new Set(values.filter((v): v is number => v !== undefined))].sort((a, b) => a - b);
  const axes: ParameterAxis[] = [{ key: 'schedule', title: 'learning-rate schedule', shortTitle: 'schedule', kind: 'nominal', categories: [...schedule.kind] }];
  axes.push({ key: 'warmupEpochs', title: 'warm-up epochs', shortTitle: 'warm-up', kind: 'ordinal', categories: sortedNumbers(study.trials.map((t) => t.configuration.warmupEpochs)) });
  if (schedule.kind.includes('step')) {
    axes.push({ key: 'gamma', title: 'step decay factor (gamma)', shortTitle: 'gamma', kind: 'linear' });
    axes.push({ key: 'stepEpochs', title: 'epochs between decays', shortTitle: 'step epochs', kind: 'ordinal', categories: sortedNumbers(study.trials.map((t) => t.configuration.stepEpochs)) });
  }
  if (schedule.kind.includes('cosine')) axes.push({ key: 'minFactor', title: 'final learning rate (fraction of the initial)', shortTitle: 'min factor', kind: 'linear' });
  return axes;
}

/**
 * The axes worth drawing: a hyperparameter that takes one value in every trial says nothing, and a
 * log axis cannot show zero (L2 is 0 when the space leaves it out).
 */
export function variedParameterAxes(study: StudyDocument): ParameterAxis[] {
  return parameterAxes(study).filter((axis) => {
    const values = study.trials.map((t) => t.configuration[axis.key]);
    if (axis.kind === 'log' && values.some((v) => typeof v !== 'number' || !(v > 0))) return false;
    return new Set(values).size > 1;
  });
}
