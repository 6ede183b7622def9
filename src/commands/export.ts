import { existsSync } from 'node:fs';
import { copyFile, writeFile } from 'node:fs/promises';
import path from 'node:path';
import type { PreparedData, SplitArrays } from '../data/types.js';
import { UserError } from '../core/errors.js';
import { writeFolderAtomically } from '../files/atomic-folder.js';
import { packageVersion } from '../files/package-files.js';
import type * as tf from '@tensorflow/tfjs';
import { CONFIGURATION_FILE, buildConfiguration, lastEpochFigures, scoredEpoch, type ExportCosts, type ExportFigures } from '../export/configuration.js';
import { OPTIMISM_CAUTION } from '../report/caution.js';
import { evaluateExportedModel } from '../export/evaluate.js';
import { MODEL_FILE, WEIGHTS_FILE, buildLayersModel, outputCount, predictRows, saveLayersModel } from '../export/model-files.js';
import { DEFAULT_THRESHOLD, chooseThreshold, describeRule, type ThresholdChoice } from '../export/threshold.js';
import { classReport, classReportText, trialClassReport, type ClassReport } from '../report/class-report.js';
import { classFigures } from '../metrics/class-figures.js';
import { ONNX_FILE } from '../export/onnx-schema.js';
import { RETRAIN_STEP_TOLERANCE, retrainEpochs, retrainTrial, type RetrainEpochs } from '../export/retrain.js';
import { compareOnTest, type HandOffComparison } from '../export/hand-off-check.js';
import type { NamedWeights } from '../checkpoints/format.js';
import { keptCheckpointWeights, rankOnFront, trialAtRank } from '../export/select.js';
import { formatNumber, textTable } from '../report/format.js';
import { SPLIT_RECORD_NAME, runPaths } from '../store/run-dir.js';
import { studyData } from '../store/study-data.js';
import { StudyStore, studyFilePath } from '../store/study-store.js';
import type { StudyDocument } from '../store/types.js';
import type { TrialRecord } from '../core/trial.js';
import { rankTrials } from '../core/ranking.js';
import { pickText, studyRepeats } from '../report/repeat-text.js';
import { DEFAULT_COST_UNIT, resolveThresholdRule, type DecisionThresholdRule } from '../study/definition.js';
import { constantPredictionCost, costMetric } from '../metrics/costs.js';
import { isDefaultPreprocessing, preprocessingOf, type MetricName, type Goal, type PreprocessingChoice } from '../core/configuration.js';
import { initBackend } from '../trainers/tfjs/backend.js';
import type { Metrics } from '../metrics/metrics.js';

export interface ExportCommandOptions {
  /** Run directory holding `study.json` (and `checkpoints/`). */
  dir: string;
  /** Rank in the study's ranking. @default 1 (not together with `front` or `maxWeights`) */
  rank?: number;
  /** Place on the study's front (`footprint.against`), 1 = the smallest or fastest; instead of `rank`. */
  front?: number;
  /** The front of score against weights: export the configuration with the most weights at most this many; instead of `rank`. */
  maxWeights?: number;
  /** Take the one-standard-error pick of the repeat runs (src/core/repeat-figures.ts) instead of `rank`. @default false */
  oneSePick?: boolean;
  /** With --retrain: go on although the CSV changed since the study ran. @default false */
  allowChangedData?: boolean;
  /** Export folder. @default `<dir>/export/rank-<rank>` */
  out?: string;
  /** Train the configuration afresh on training plus validation rows, then score it once on the test split. @default false */
  retrain?: boolean;
  /** Model files to write: the tfjs Layers model always, and `model.onnx` as well with 'onnx'. @default 'tfjs' */
  format?: ExportFormat;
}

/** Formats `export --format` accepts. */
export const EXPORT_FORMATS = ['tfjs', 'onnx'] as const;
export type ExportFormat = (typeof EXPORT_FORMATS)[number];

/** Checks a `--format` value. @throws UserError naming the formats allowed. */
export function parseExportFormat(value: string): ExportFormat {
  const format = EXPORT_FORMATS.find((name) => name === value);
  if (!format) throw new UserError('E_USAGE', `export: --format '${value}' is not known; expected one of ${EXPORT_FORMATS.map((f) => `'${f}'`).join(', ')}`);
  return format;
}

export interface ExportSummary {
  /** The run directory the study came from (absolute). */
  dir: string;
  /** The export folder (absolute). */
  out: string;
  study: string;
  trialId: number;
  rank: number;
  /** Why this trial was taken: rank 1 or the rank asked for, or the one-standard-error pick with its figures. */
  choice: string;
  /** The repeated configurations' figures, where the study has them: this trial's mean ± standard error and the pick. */
  repeats?: { mean: number; standardError?: number; count: number; pickId: number; winnerId: number };
  goal: Goal;
  /** The trial's score: the goal's metric at its last epoch (the best epoch with early stopping), on the validation split. */
  score: number;
  /** The epoch whose weights were exported (the best with early stopping); `stoppedAtEpoch` where early stopping ended the trial. */
  epoch: number;
  bestEpoch?: number;
  stoppedAtEpoch?: number;
  /** Metrics the study recorded for the trial's last epoch, on the validation split. */
  validation: Metrics;
  /** The exported network's metrics on the held-out test split: the study's own network, or the retrained one with --retrain (and with folds). */
  test?: Metrics;
  /** What the exported network is, in words: the study's own at which epoch, or retrained on which rows for how many epochs. */
  network: string;
  /** With --retrain (and with folds): the retrained network's epoch count and the rule that gave it. */
  retrainEpochs?: RetrainEpochs;
  /** With --retrain (without folds): the study's own network's metrics on the same test split, when its checkpoint is kept. */
  studyTest?: Metrics;
  /** With --retrain: the two networks compared on the test split, with the noise of the difference. */
  handOff?: HandOffComparison;
  /** The study's baselines on its validation rows, to read the winner against (absent for files from before them). */
  baselines?: StudyDocument['baselines'];
  /** Warnings the CLI prints (e.g. the retrained network is worse than the study's). */
  warnings?: string[];
  /** Binary: the decision threshold and how it was chosen. */
  threshold?: ThresholdChoice;
  /** With the study's `data.costs`: the matrix and the constant predictor's cost on the validation rows. */
  costs?: ExportCosts;
  /** Classification: per-class figures on the validation split (and the test split with --retrain). */
  classes?: { validation?: ClassReport; test?: ClassReport };
  retrained: boolean;
  /** k-fold studies: the number of folds (the validation figures are their mean; the export retrained on every fold). */
  folds?: number;
  format: ExportFormat;
  /** Files written into `out`. */
  files: string[];
  caution: string;
}

/**
 * The study's data, unchanged since the run: for --retrain (with a held-out test split to score the
 * retrained model on) and for choosing a binary model's decision threshold on the validation split.
 */
async function exportData(doc: StudyDocument, studyFile: string, allowChangedData: boolean, retrain: boolean): Promise<PreparedData> {
  const data = await studyData(doc, studyFile, { command: retrain ? 'export --retrain' : 'export', allowChangedData });
  if (retrain && data.test.rows === 0 && doc.definition.data.folds === undefined) {
    throw new UserError('E_EXPORT_NO_TEST', `${doc.definitionFile}: data.testFraction is 0, so there is no held-out test split to score a retrained model on`);
  }
  return data;
}

/** The study's data encoded under a trial's preprocessing choice (its recipe fitted on the same training rows). */
export async function choiceData(data: PreparedData, choice: PreprocessingChoice): Promise<PreparedData> {
  if (!data.prepareChoice) throw new Error(`export: the study's data were prepared without its preprocessing choices`);
  return data.prepareChoice(choice);
}

/**
 * `rungwise export`: writes the trial at `rank` as a tfjs Layers model (`model.json`, `weights.bin`)
 * with `configuration.json`, into a folder that appears complete or not at all.
 * Without --retrain the kept checkpoint is exported; with it, the configuration is retrained and
 * scored once on the held-out test split (the only place the tool touches that split).
 * @throws UserError for a rank that does not exist or, without --retrain, has no kept checkpoint.
 * @example
 * import { exportModel } from 'rungwise';
 * const { out, files } = await exportModel({ dir: 'runs/demo', rank: 1, format: 'onnx' });
 * // out: runs/demo/export/rank-1; files: configuration.json, model.json, weights.bin, model.onnx
 */
export async function exportModel(options: ExportCommandOptions): Promise<ExportSummary> {
  const runDir = path.resolve(options.dir);
  const doc = await StudyStore.read(runDir);
  const studyFile = studyFilePath(runDir);
  const { rank, choice: chosenBecause } = chosenRank(doc, studyFile, options);
  const chosen = trialAtRank(doc, rank, studyFile);
  const trial = chosen.trial;
  // A k-fold study trained k networks per trial, none on every row: its export always retrains on
  // training plus validation rows (all folds) for the epochs the trial was scored at.
  const folds = doc.definition.data.folds;
  const retrain = options.retrain === true || folds !== undefined;
  // Every check that can refuse runs before the export folder is touched.
  const kept = retrain ? undefined : await keptCheckpointWeights(runDir, doc, chosen);
  const rule = resolveThresholdRule(doc.definition);
  const notes: string[] = [];
  // A trial trained under another preprocessing choice than the study's own recipe: its recipe is fitted again from the data.
  const choice = preprocessingOf(trial.configuration);
  const ownRecipe = !isDefaultPreprocessing(choice);
  const loaded = retrain || rule || doc.definition.data.costs || ownRecipe ? await exportData(doc, studyFile, options.allowChangedData ?? false, retrain) : await testSplitData(doc, studyFile, options.allowChangedData ?? false, notes);
  const data = loaded && ownRecipe ? await choiceData(loaded, choice) : loaded;
  const out = path.resolve(options.out ?? runPaths.exportDir(runDir, rank));
  const format = options.format ?? 'tfjs';
  // The rows of each split travel with the model, so the winner can be re-scored elsewhere (absent for studies from before the record).
  const splitRecord = existsSync(runPaths.splitRecord(runDir)) ? runPaths.splitRecord(runDir) : undefined;

  // With --retrain, the study's own network too (when kept), to be scored on the same test rows.
  const studyWeights = retrain && folds === undefined ? await keptCheckpointWeights(runDir, doc, chosen).catch(() => undefined) : undefined;
  const plan: ExportPlan = { doc: data && ownRecipe ? { ...doc, recipe: data.recipe } : doc, trial, rank, choice: chosenBecause, data, rule, retrain, format, splitRecord, ...(kept ? { kept } : {}), ...(studyWeights ? { studyWeights } : {}) };
  const figures = await writeFolderAtomically(out, (existing) => existsSync(path.join(existing, CONFIGURATION_FILE)), (partial) => writeExport(plan, partial));
  const summary = exportSummaryOf(plan, { dir: runDir, out, figures, studyNetworkLost: retrain && folds === undefined && !studyWeights });
  if (notes.length > 0) summary.warnings = [...(summary.warnings ?? []), ...notes];
  return summary;
}

/**
 * The study's data for scoring the study's own network on the test split, when there is one; when
 * the data cannot be read back unchanged, the export goes on without a test score and says why.
 */
async function testSplitData(doc: StudyDocument, studyFile: string, allowChangedData: boolean, notes: string[]): Promise<PreparedData | undefined> {
  if (doc.definition.data.testFraction === 0) return undefined;
  try {
    return await exportData(doc, studyFile, allowChangedData, false);
  } catch (error) {
    if (!(error instanceof UserError)) throw error;
    notes.push(`note: no test-split score: ${error.message}`);
    return undefined;
  }
}

/** The rank to export and why (also for `--average-folds`): the one-standard-error pick of the repeat runs when asked for, else the rank given (1). */
export function chosenRank(doc: StudyDocument, studyFile: string, options: Pick<ExportCommandOptions, 'rank' | 'front' | 'maxWeights' | 'oneSePick'>): { rank: number; choice: string } {
  const given = [options.rank !== undefined && '--rank', options.front !== undefined && '--front', options.maxWeights !== undefined && '--max-weights', options.oneSePick === true && '--one-se-pick'].filter((flag) => flag !== false);
  if (given.length > 1) throw new UserError('E_USAGE', `export: ${given.join(' and ')} choose the configuration each; give one of them`);
  if (options.oneSePick) return oneStandardErrorRank(doc, studyFile);
  if (options.front !== undefined || options.maxWeights !== undefined) {
    const rank = rankOnFront(doc, { ...(options.front !== undefined ? { front: options.front } : {}), ...(options.maxWeights !== undefined ? { maxWeights: options.maxWeights } : {}) }, studyFile);
    return { rank, choice: options.front !== undefined ? `place ${options.front} of the front, as asked` : `the front's configuration with the most weights at most ${options.maxWeights}` };
  }
  const rank = options.rank ?? 1;
  return { rank, choice: rank === 1 ? 'rank 1 of the ranking' : `rank ${rank} of the ranking, as asked` };
}

/** The rank of the one-standard-error pick of the repeat runs. */
function oneStandardErrorRank(doc: StudyDocument, studyFile: string): { rank: number; choice: string } {
  const summary = studyRepeats(doc);
  if (!summary) {
    throw new UserError('E_EXPORT_PICK', `${studyFile}: the study has no repeat runs (a study from before them, or repeats.top 0), so there is no one-standard-error pick; export a rank instead`);
  }
  const rank = rankTrials(doc.trials, doc.goal).findIndex((r) => r.trial.id === summary.pickId) + 1;
  return { rank, choice: `trial ${summary.pickId}, the ${pickText(summary, doc.goal.metric)}` };
}

/** This trial's repeat figures, where the study has them. */
function repeatsOfTrial(doc: StudyDocument, trialId: number): ExportSummary['repeats'] | undefined {
  const summary = studyRepeats(doc);
  const figure = summary?.figures.find((f) => f.trialId === trialId);
  if (!summary || !figure) return undefined;
  return { mean: figure.mean, ...(figure.standardError !== undefined ? { standardError: figure.standardError } : {}), count: figure.count, pickId: summary.pickId, winnerId: summary.winnerId };
}

/** Everything an export writes, decided before the folder is touched. */
interface ExportPlan {
  doc: StudyDocument;
  trial: TrialRecord;
  rank: number;
  choice: string;
  data: PreparedData | undefined;
  rule: DecisionThresholdRule | undefined;
  retrain: boolean;
  format: 'tfjs' | 'onnx';
  splitRecord: string | undefined;
  /** The kept checkpoint's weights (without --retrain). */
  kept?: NamedWeights[];
  /** With --retrain: the study's own network, when its checkpoint is kept, to score beside the retrained one. */
  studyWeights?: NamedWeights[];
}

/** Fills the export folder: the network (retrained or the study's own), its configuration, ONNX on request, the split record. */
async function writeExport(plan: ExportPlan, partial: string): Promise<ExportFigures> {
  const { doc, trial, data, rule, retrain } = plan;
  await initBackend();
  const weights = retrain ? await retrainTrial(data!, trial, doc.definition.budget.maxEpochs) : plan.kept!;
  const model = buildLayersModel(trial.configuration, doc.recipe, weights);
  try {
    let figures: ExportFigures = { ...exportFigures(model, doc, trial, data, rule, retrain), ...(retrain ? { retrained: true } : {}) };
    if (plan.studyWeights && data && data.test.rows > 0) figures = { ...figures, ...studyNetworkOnTest(plan.studyWeights, model, doc, trial, data, figures) };
    await saveLayersModel(model, partial);
    const configuration = buildConfiguration(doc, trial, plan.rank, figures);
    if (plan.format === 'onnx') {
      const { describeOnnx, writeOnnxModel } = await import('../export/onnx.js');
      configuration.onnx = describeOnnx(configuration);
      await writeOnnxModel(model, configuration, partial, packageVersion());
    }
    await writeFile(path.join(partial, CONFIGURATION_FILE), `${JSON.stringify(configuration, null, 2)}\n`);
    if (plan.splitRecord) await copyFile(plan.splitRecord, path.join(partial, SPLIT_RECORD_NAME));
    return figures;
  } finally {
    model.dispose();
  }
}

/** What `export` returns: where it went, the scores (validation, test, baselines), the threshold, costs and warnings. */
function exportSummaryOf(plan: ExportPlan, written: { dir: string; out: string; figures: ExportFigures; studyNetworkLost: boolean }): ExportSummary {
  const { doc, trial, rank, retrain, format, splitRecord, choice } = plan;
  const { figures } = written;
  const repeats = repeatsOfTrial(doc, trial.id);
  const folds = doc.definition.data.folds;
  const summary: ExportSummary = {
    dir: written.dir,
    out: written.out,
    study: doc.name,
    trialId: trial.id,
    choice,
    ...(repeats ? { repeats } : {}),
    rank,
    goal: doc.goal,
    score: trial.score!,
    epoch: retrain && plan.data ? retrainEpochs(plan.data, trial).epochs : scoredEpoch(trial),
    network: networkInWords(plan),
    ...(trial.bestEpoch !== undefined ? { bestEpoch: trial.bestEpoch } : {}),
    ...(trial.stoppedAtEpoch !== undefined ? { stoppedAtEpoch: trial.stoppedAtEpoch } : {}),
    validation: lastEpochFigures(trial).metrics,
    retrained: retrain,
    format,
    files: [CONFIGURATION_FILE, MODEL_FILE, WEIGHTS_FILE, ...(format === 'onnx' ? [ONNX_FILE] : []), ...(splitRecord ? [SPLIT_RECORD_NAME] : [])],
    caution: OPTIMISM_CAUTION,
  };
  if (retrain && plan.data) summary.retrainEpochs = retrainEpochs(plan.data, trial);
  if (figures.test) summary.test = figures.test;
  if (figures.studyTest) summary.studyTest = figures.studyTest;
  if (doc.baselines) summary.baselines = doc.baselines;
  if (figures.handOff) summary.handOff = figures.handOff;
  const warnings = handOffWarnings(summary, written.studyNetworkLost);
  if (warnings.length > 0) summary.warnings = warnings;
  if (folds !== undefined) summary.folds = folds;
  if (figures.threshold) summary.threshold = figures.threshold;
  if (figures.classes) summary.classes = figures.classes;
  if (figures.costs) summary.costs = figures.costs;
  return summary;
}

/** What the exported network is: the study's own (and at which epoch), or retrained on which rows, for how many epochs, and why. */
function networkInWords(plan: ExportPlan): string {
  const { trial, data, doc } = plan;
  if (!plan.retrain || !data) return `the study's own network of trial ${trial.id}, trained on the training split, weights of epoch ${scoredEpoch(trial)}${trial.bestEpoch !== undefined ? ' (its best epoch)' : ''}`;
  const e = retrainEpochs(data, trial);
  const folds = doc.definition.data.folds;
  const why = folds !== undefined ? `, because the study trained ${folds} networks per trial (one per fold, none on every row) and none of them is exported` : '';
  return `a network retrained from trial ${trial.id}'s configuration and seed on the ${e.rows} training and validation rows for ${e.epochs} epoch${e.epochs === 1 ? '' : 's'} (the study: ${e.studyEpochs} over ${formatNumber(e.studyRows)} rows; ${e.rule})${why}`;
}

/** The study's own network scored on the test split beside the retrained one, and the two compared. */
function studyNetworkOnTest(weights: NamedWeights[], retrained: tf.LayersModel, doc: StudyDocument, trial: TrialRecord, data: PreparedData, figures: ExportFigures): Pick<ExportFigures, 'studyTest' | 'handOff'> {
  const studyModel = buildLayersModel(trial.configuration, doc.recipe, weights);
  try {
    const threshold = figures.threshold?.threshold ?? DEFAULT_THRESHOLD;
    const columns = outputCount(doc.recipe);
    const studyOutputs = predictRows(studyModel, data.test.x, data.test.rows, doc.recipe.inputCount);
    const retrainedOutputs = predictRows(retrained, data.test.x, data.test.rows, doc.recipe.inputCount);
    const studyTest = evaluateExportedModel(studyModel, doc.recipe, data.test, threshold, studyOutputs);
    const handOff = compareOnTest(doc.recipe, data.test, studyOutputs, retrainedOutputs, columns, doc.goal, threshold, trial.seed);
    return { studyTest, ...(handOff ? { handOff } : {}) };
  } finally {
    studyModel.dispose();
  }
}

/** Warnings of a retrained export: worse than the study's network beyond the noise, or no study network to compare with. */
function handOffWarnings(summary: ExportSummary, studyNetworkMissing: boolean): string[] {
  const warnings: string[] = [];
  const h = summary.handOff;
  if (h?.worse) {
    warnings.push(
      `warning: the retrained network scores ${h.metric} ${formatNumber(h.retrained)} on the test split, worse than the study's own network (${formatNumber(h.study)}) by more than the noise (difference ${formatNumber(h.difference)}, standard error ${formatNumber(h.standardError)}, ${h.method}); \`rungwise export ${summary.dir} --rank ${summary.rank}\` exports the study's network`,
    );
  }
  const e = summary.retrainEpochs;
  if (e && Math.abs(e.steps / e.studySteps - 1) > RETRAIN_STEP_TOLERANCE) {
    warnings.push(
      `warning: the retrained network took ${e.steps} optimizer steps (${e.epochs} epoch${e.epochs === 1 ? '' : 's'} over ${e.rows} rows), the study's took ${e.studySteps} (${e.studyEpochs} over ${formatNumber(e.studyRows)} rows): whole epochs cannot match them, so it may be under- or over-trained; compare its test score with the study network's`,
    );
  }
  if (studyNetworkMissing) warnings.push(`note: rank ${summary.rank} (trial ${summary.trialId}) has no kept checkpoint, so the retrained network could not be compared with the study's own on the test split`);
  return warnings;
}

/**
 * Test metrics (with --retrain), the decision threshold (binary, by the study's rule, on the
 * validation split) and the per-class reports. The validation report is the exported network's at
 * the chosen threshold when a rule chose one, else the one the study recorded for the trial (a
 * retrained network has trained on the validation rows, so its own figures there would flatter it).
 */
function exportFigures(model: tf.LayersModel, doc: StudyDocument, trial: TrialRecord, data: PreparedData | undefined, rule: DecisionThresholdRule | undefined, retrain: boolean): ExportFigures {
  const { recipe } = doc;
  const figures: ExportFigures = {};
  const classes: NonNullable<ExportFigures['classes']> = {};
  const outputsOf = (split: SplitArrays): Float32Array => predictRows(model, split.x, split.rows, recipe.inputCount);
  const reportAt = (split: SplitArrays, outputs: Float32Array, threshold: number): ClassReport | undefined => {
    const counted = classFigures(recipe.task, split.y, outputs, outputCount(recipe), scoredEpoch(trial), threshold);
    return counted && recipe.classes ? classReport(recipe.task, recipe.classes, counted) : undefined;
  };
  if (rule && data) {
    const outputs = outputsOf(data.validation);
    figures.threshold = chooseThreshold(rule, data.validation.y, outputs, data.costMatrix);
    const validation = reportAt(data.validation, outputs, figures.threshold.threshold);
    if (validation) classes.validation = validation;
  } else {
    const validation = trialClassReport(doc, trial);
    if (validation) classes.validation = validation;
  }
  if (data && data.test.rows > 0) {
    const threshold = figures.threshold?.threshold ?? DEFAULT_THRESHOLD;
    const testOutputs = outputsOf(data.test);
    figures.test = evaluateExportedModel(model, recipe, data.test, threshold, testOutputs);
    if (data.costMatrix) figures.test.cost = costMetric(Int32Array.from(data.test.y), testOutputs, outputCount(recipe), data.costMatrix, recipe.task === 'binary' ? threshold : undefined);
    const test = reportAt(data.test, testOutputs, threshold);
    if (test) classes.test = test;
  }
  if (classes.validation || classes.test) figures.classes = classes;
  const costs = exportCosts(doc, data);
  if (costs) figures.costs = costs;
  return figures;
}

/** The study's costs for the export: the matrix, how a class is decided, and the constant predictor's cost on the validation rows. */
export function exportCosts(doc: StudyDocument, data: PreparedData | undefined): ExportCosts | undefined {
  const settings = doc.definition.data.costs;
  const classes = doc.recipe.classes;
  if (!settings || !data?.costMatrix || !classes) return undefined;
  const constant = constantPredictionCost(Int32Array.from(data.validation.y), classes.length, data.costMatrix);
  const decision: ExportCosts['decision'] = doc.recipe.task === 'binary' ? 'threshold' : 'least expected cost';
  return {
    unit: settings.unit ?? DEFAULT_COST_UNIT,
    matrix: data.costMatrix.map((row) => [...row]),
    decision,
    constant: { predicted: classes[constant.predicted]!, costPerRow: constant.costPerRow },
  };
}

/** What the CLI prints after an export: where it went, the metrics (validation beside test) and the caution. */
export function exportReport(summary: ExportSummary): string {
  const lines = [
    `exported rank ${summary.rank} (trial ${summary.trialId}) of study ${summary.study}${summary.retrained ? ', retrained on training and validation rows' : ''}`,
    `network: ${summary.network}`,
    ...(summary.folds !== undefined ? [`the study scored each trial on ${summary.folds} folds: its validation figures are the mean over the folds' networks, not figures of the exported one`] : []),
    `chosen: ${summary.choice}`,
    ...(summary.bestEpoch !== undefined ? [`weights: ${weightsLine(summary)}`] : []),
    `folder: ${summary.out} (${summary.files.join(', ')})`,
    '',
  ];
  const names = Object.keys(summary.validation) as MetricName[];
  const study = summary.folds !== undefined ? `validation (study, mean of ${summary.folds} folds)` : 'validation (study)';
  const header = summary.test ? ['metric', study, ...(summary.studyTest ? ['test (study network)'] : []), summary.retrained ? 'test (retrained)' : 'test (study network)'] : ['metric', study];
  const rows = names.map((name) => {
    const row = [name, formatNumber(summary.validation[name])];
    if (summary.test && summary.studyTest) row.push(formatNumber(summary.studyTest[name]));
    if (summary.test) row.push(formatNumber(summary.test[name]));
    return row;
  });
  lines.push(textTable(header, rows), '');
  const constant = summary.baselines?.constant.metrics[summary.goal.metric];
  const linear = summary.baselines?.linear?.metrics[summary.goal.metric];
  if (constant !== undefined) lines.push(`baselines on the validation rows (${summary.goal.metric}): constant ${formatNumber(constant)}${linear !== undefined ? `, linear ${formatNumber(linear)}` : ''}; this trial ${formatNumber(summary.score)}`, '');
  lines.push(...thresholdLines(summary), ...costLines(summary));
  if (summary.classes?.validation) lines.push(classReportText(summary.classes.validation).replace(/^validation rows/, 'validation split'), '');
  if (summary.classes?.test) lines.push(classReportText(summary.classes.test).replace(/^validation rows/, summary.retrained ? 'test split (retrained model)' : 'test split (study network)'), '');
  if (!summary.test) lines.push('No test metrics: the study holds no test split (data.testFraction is 0), or its data could not be read back (see the note).');
  lines.push(...(summary.warnings ?? []));
  lines.push(summary.caution);
  return lines.join('\n');
}

/** What the export's decisions cost per row and per 1,000 rows, beside predicting one class for every row. */
function costLines(summary: ExportSummary): string[] {
  const costs = summary.costs;
  if (!costs) return [];
  const at = (perRow: number | undefined): string => (perRow === undefined ? '-' : `${formatNumber(perRow)} per row, ${formatNumber(perRow * 1000)} per 1,000 rows`);
  const validation = summary.threshold?.costPerRow ?? summary.validation.cost;
  const lines = [`cost (${costs.unit}): validation ${at(validation)}${summary.test ? `; test ${at(summary.test.cost)}` : ''}`];
  lines.push(`  predicting '${costs.constant.predicted}' for every row would cost ${at(costs.constant.costPerRow)} on the validation rows`);
  if (costs.decision === 'least expected cost') lines.push('  each row gets the class of least expected cost under the study\'s costs (predict does the same)');
  lines.push('');
  return lines;
}

/** Which epoch's weights were exported, in words (early stopping only: otherwise they are the last epoch's). */
function weightsLine(summary: ExportSummary): string {
  const trained = summary.retrained ? `retrained for ${summary.epoch} epoch${summary.epoch === 1 ? '' : 's'}` : `epoch ${summary.epoch}`;
  const stopped = summary.stoppedAtEpoch !== undefined ? `, early stopping ended the trial after epoch ${summary.stoppedAtEpoch}` : '';
  return `${trained} (the trial's best epoch ${summary.bestEpoch}${stopped})`;
}

const figure = (value: number | null): string => (value === null ? '-' : value.toFixed(3));
const formatThreshold = (value: number): string => String(Number(value.toPrecision(4)));

/** What the export says of a binary model's decision threshold: its value, how it was chosen, and why it is optimistic. */
function thresholdLines(summary: ExportSummary): string[] {
  if (summary.classes?.validation?.threshold === undefined && !summary.threshold) return [];
  const choice = summary.threshold;
  if (!choice) return [`decision threshold: ${DEFAULT_THRESHOLD} (the default; the study gives no decisionThreshold rule)`, ''];
  const lines = [
    `decision threshold: ${formatThreshold(choice.threshold)} (${describeRule(choice.rule)}), chosen on the ${choice.rows} validation rows: precision ${figure(choice.precision)}, recall ${figure(choice.recall)}, F1 ${figure(choice.f1)}`,
  ];
  if (!choice.ruleMet) lines.push(`note: no threshold reaches ${describeRule(choice.rule)} on the validation rows; the most precise one was taken`);
  lines.push(
    summary.retrained
      ? 'These validation figures are optimistic (the threshold was fitted to those rows, which the retrained model was also trained on); the test split figures below, at this threshold, are the honest check.'
      : `These validation figures are optimistic (the threshold was fitted to those rows); \`rungwise export ${summary.dir} --rank ${summary.rank} --retrain\` scores the model once on the held-out test split at this threshold.`,
    '',
  );
  return lines;
}
