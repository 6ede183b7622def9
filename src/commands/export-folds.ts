import { existsSync } from 'node:fs';
import path from 'node:path';
import type { Goal } from '../core/configuration.js';
import { isDefaultPreprocessing, preprocessingOf } from '../core/configuration.js';
import { UserError } from '../core/errors.js';
import type { RankedTrial } from '../core/ranking.js';
import type { PreparedData } from '../data/types.js';
import { writeFolderAtomically } from '../files/atomic-folder.js';
import { CONFIGURATION_FILE, buildConfiguration, type ExportConfiguration } from '../export/configuration.js';
import type { EnsembleDescription } from '../export/ensemble-description.js';
import { memberFolder } from '../export/ensemble-files.js';
import { metricsOfOutputs } from '../export/ensemble.js';
import { columnLaidOutOtherwise } from '../export/ensemble-onnx.js';
import { buildLayersModel, predictRows } from '../export/model-files.js';
import { averageOnTest, foldNetworks, outOfFoldSplit, type FoldNetwork } from '../export/fold-networks.js';
import { ONNX_FILE } from '../export/onnx-schema.js';
import { retrainTrial } from '../export/retrain.js';
import { keptFoldWeights, trialAtRank } from '../export/select.js';
import { DEFAULT_THRESHOLD, chooseThreshold, type ThresholdChoice } from '../export/threshold.js';
import type { Metrics } from '../metrics/metrics.js';
import { OPTIMISM_CAUTION } from '../report/caution.js';
import { textTable } from '../report/format.js';
import { SPLIT_RECORD_NAME, runPaths } from '../store/run-dir.js';
import { studyData } from '../store/study-data.js';
import { StudyStore, studyFilePath } from '../store/study-store.js';
import type { StudyDocument } from '../store/types.js';
import { resolveThresholdRule } from '../study/definition.js';
import { initBackend } from '../trainers/tfjs/backend.js';
import { chosenRank, exportCosts, parseExportFormat, type ExportCommandOptions, type ExportFormat } from './export.js';
import { writeEnsemble, type MemberToWrite } from './export-ensemble.js';

export interface FoldAverageExportOptions extends Pick<ExportCommandOptions, 'dir' | 'rank' | 'front' | 'maxWeights' | 'oneSePick' | 'allowChangedData'> {
  /** Export folder. @default `<dir>/export/rank-<rank>-folds` */
  out?: string;
  /** 'onnx' writes `model.onnx` (one graph holding every fold network) as well. @default 'tfjs' */
  format?: ExportFormat;
}

export interface FoldAverageExportSummary {
  dir: string;
  out: string;
  study: string;
  goal: Goal;
  /** The trial whose fold networks were exported, its rank and why it was taken. */
  trialId: number;
  rank: number;
  choice: string;
  folds: number;
  /** The fold networks (equal weights), the average's out-of-fold and test figures, and the retrained single network's test figures. */
  ensemble: EnsembleDescription;
  /** Binary: the average's decision threshold, chosen by the study's rule on the out-of-fold outputs. */
  threshold?: ThresholdChoice;
  format: ExportFormat;
  files: string[];
  caution: string;
}

/** What is said of the fold networks' figures: out-of-fold, not of the average itself. */
export const FOLD_AVERAGE_CAUTION =
  "The out-of-fold figures score each row with the one fold network that did not train on it, not with the average (every row but the test rows trained some of its networks); the study's choice of this trial makes them optimistic too. Compare the average with the retrained single network on the test split.";

const METHOD =
  'the fold networks of one trial, averaged with equal weights: each trained on other rows, so no common validation split is left to weigh them on; the usual cross-validation ensemble (common practice, no source)';

/**
 * `rungwise export --average-folds`: the fold networks of a k-fold trial (rank 1 by default) as one
 * model that averages them with equal weights, in the ensemble folder layout (and `model.onnx` with
 * format 'onnx'); the average and the trial retrained on training plus validation rows (what a plain
 * `export` hands over) are both scored on the held-out test split.
 * @throws UserError for a study without folds, a trial without its kept fold networks, or ONNX when the folds' one-hot layouts differ.
 * @example
 * import { exportFoldAverage } from 'rungwise';
 * const { ensemble } = await exportFoldAverage({ dir: 'runs/demo-folds' });
 * console.log(ensemble.test, ensemble.winnerTest);
 */
export async function exportFoldAverage(options: FoldAverageExportOptions): Promise<FoldAverageExportSummary> {
  const runDir = path.resolve(options.dir);
  const doc = await StudyStore.read(runDir);
  const studyFile = studyFilePath(runDir);
  const folds = doc.definition.data.folds;
  if (folds === undefined) {
    throw new UserError('E_USAGE', `${studyFile}: --average-folds needs a k-fold study (data.folds); this study trained one network per trial on one training split, so export it as it is, or use --ensemble <k>`);
  }
  const { rank, choice } = chosenRank(doc, studyFile, options);
  const chosen = trialAtRank(doc, rank, studyFile);
  const weights = await keptFoldWeights(runDir, doc, chosen, folds);
  const data = await foldStudyData(doc, studyFile, chosen, options.allowChangedData ?? false);
  const format = options.format ?? 'tfjs';
  if (format === 'onnx') checkOnnxLayout(data);
  await initBackend();
  const networks = foldNetworks(data, chosen, weights, doc.goal);
  const figures = await foldAverageFigures(doc, data, chosen, networks);
  const configuration = foldAverageConfiguration(doc, data, chosen, figures);
  const out = path.resolve(options.out ?? runPaths.foldsExportDir(runDir, rank));
  const splitRecord = existsSync(runPaths.splitRecord(runDir)) ? runPaths.splitRecord(runDir) : undefined;
  const members: MemberToWrite[] = networks.map((network) => ({ folder: memberFolder(chosen.trial.id, network.fold), count: 1, recipe: network.recipe, build: () => buildLayersModel(chosen.trial.configuration, network.recipe, network.weights) }));
  await writeFolderAtomically(out, (existing) => existsSync(path.join(existing, CONFIGURATION_FILE)), (partial) => writeEnsemble(partial, members, configuration, format, splitRecord));
  return {
    dir: runDir,
    out,
    study: doc.name,
    goal: doc.goal,
    trialId: chosen.trial.id,
    rank,
    choice,
    folds,
    ensemble: figures.description,
    ...(figures.threshold ? { threshold: figures.threshold } : {}),
    format,
    files: [CONFIGURATION_FILE, ...members.map((member) => `${member.folder}/`), ...(format === 'onnx' ? [ONNX_FILE] : []), ...(splitRecord ? [SPLIT_RECORD_NAME] : [])],
    caution: configuration.caution,
  };
}

/** The flags of `export` as `--average-folds` reads them. */
export interface FoldAverageFlags {
  rank?: number;
  front?: number;
  maxWeights?: number;
  oneSePick?: boolean;
  out?: string;
  retrain?: boolean;
  ensemble?: number;
  format: string;
  allowChangedData?: boolean;
}

/**
 * The CLI's `export --average-folds`: refuses --retrain and --ensemble, checks --format, exports.
 * @throws UserError (E_USAGE) for --retrain or --ensemble with --average-folds.
 */
export async function exportFoldAverageAction(dir: string, flags: FoldAverageFlags): Promise<FoldAverageExportSummary> {
  if (flags.retrain) throw new UserError('E_USAGE', "export: --average-folds exports the study's fold networks and retrains the single network itself to score beside them; it does not take --retrain");
  if (flags.ensemble !== undefined) throw new UserError('E_USAGE', 'export: --average-folds averages one trial\'s fold networks and --ensemble several trials\' networks; give one of them');
  return exportFoldAverage({
    dir,
    format: parseExportFormat(flags.format),
    ...(flags.rank !== undefined ? { rank: flags.rank } : {}),
    ...(flags.front !== undefined ? { front: flags.front } : {}),
    ...(flags.maxWeights !== undefined ? { maxWeights: flags.maxWeights } : {}),
    ...(flags.oneSePick ? { oneSePick: true } : {}),
    ...(flags.out !== undefined ? { out: flags.out } : {}),
    ...(flags.allowChangedData ? { allowChangedData: true } : {}),
  });
}

/** The study's data (under the trial's preprocessing choice), with its folds. */
async function foldStudyData(doc: StudyDocument, studyFile: string, chosen: RankedTrial, allowChangedData: boolean): Promise<PreparedData> {
  const loaded = await studyData(doc, studyFile, { command: 'export --average-folds', allowChangedData });
  const choice = preprocessingOf(chosen.trial.configuration);
  const data = isDefaultPreprocessing(choice) ? loaded : await loaded.prepareChoice!(choice);
  if (!data.folds || data.folds.length === 0) throw new Error('export --average-folds: the study data were prepared without folds');
  const classes = JSON.stringify(data.recipe.classes);
  const other = data.folds.findIndex((fold) => JSON.stringify(fold.recipe.classes) !== classes);
  if (other >= 0) {
    throw new UserError('E_EXPORT_ENSEMBLE', `${studyFile}: fold ${other + 1}'s training rows hold the classes ${(data.folds[other]!.recipe.classes ?? []).join(', ')}, the training split ${(data.recipe.classes ?? []).join(', ')}, so the fold networks' outputs cannot be averaged; export the retrained network with \`rungwise export\``);
  }
  return data;
}

/**
 * One `features` input feeds every fold network's ONNX graph only when each fold's recipe one-hot
 * encodes its categorical columns as the export's recipe does (numeric columns go in raw and each
 * graph scales them with its own fold's figures).
 */
function checkOnnxLayout(data: PreparedData): void {
  data.folds!.forEach((fold, i) => {
    const column = columnLaidOutOtherwise(data.recipe, fold.recipe);
    if (column !== undefined) {
      throw new UserError(
        'E_EXPORT_ENSEMBLE',
        `--format onnx: column '${column}' is one-hot encoded otherwise in fold ${i + 1}'s recipe than in the export's (a category seen or pooled in some folds' training rows only), so one ONNX input cannot feed every fold network; export with --format tfjs and use \`rungwise predict\`, which encodes rows for each fold network`,
      );
    }
  });
}

interface FoldAverageFigures {
  description: EnsembleDescription;
  threshold?: ThresholdChoice;
}

/** The members, the out-of-fold figures, the threshold (binary, on the out-of-fold outputs), and both test figures. */
async function foldAverageFigures(doc: StudyDocument, data: PreparedData, chosen: RankedTrial, networks: readonly FoldNetwork[]): Promise<FoldAverageFigures> {
  const { recipe } = data;
  const costs = data.costMatrix;
  const rule = recipe.task === 'binary' ? resolveThresholdRule(doc.definition) : undefined;
  const outOfFold = outOfFoldSplit(data, networks);
  const threshold = rule ? { ...chooseThreshold(rule, outOfFold.split.y, outOfFold.outputs, costs), chosenOn: 'out-of-fold outputs' as const } : undefined;
  const at = threshold?.threshold ?? DEFAULT_THRESHOLD;
  const { trial } = chosen;
  const description: EnsembleDescription = {
    method: METHOD,
    library: [chosen.rank],
    folds: networks.length,
    members: networks.map((network) => ({
      rank: chosen.rank,
      trialId: trial.id,
      count: 1,
      weight: 1 / networks.length,
      folder: memberFolder(trial.id, network.fold),
      configuration: { ...trial.configuration },
      score: network.score,
      fold: network.fold,
      recipe: network.recipe,
    })),
    validation: metricsOfOutputs(recipe, outOfFold.split, outOfFold.outputs, at, costs),
  };
  if (data.test.rows > 0) {
    description.test = metricsOfOutputs(recipe, data.test, await averageOnTest(doc, data, chosen, networks), at, costs);
    description.winnerTest = await retrainedOnTest(doc, data, chosen, rule !== undefined);
  }
  return { description, ...(threshold ? { threshold } : {}) };
}

/**
 * The single network a plain `export` of a k-fold study hands over: the trial retrained on training
 * plus validation rows, scored on the test split at the threshold that export chooses (the rule on
 * its validation outputs).
 */
async function retrainedOnTest(doc: StudyDocument, data: PreparedData, chosen: RankedTrial, withRule: boolean): Promise<Metrics> {
  const { recipe } = data;
  const weights = await retrainTrial(data, chosen.trial, doc.definition.budget.maxEpochs);
  const network = buildLayersModel(chosen.trial.configuration, recipe, weights);
  try {
    const rule = withRule ? resolveThresholdRule(doc.definition) : undefined;
    const threshold = rule ? chooseThreshold(rule, data.validation.y, predictRows(network, data.validation.x, data.validation.rows, recipe.inputCount), data.costMatrix).threshold : DEFAULT_THRESHOLD;
    return metricsOfOutputs(recipe, data.test, predictRows(network, data.test.x, data.test.rows, recipe.inputCount), threshold, data.costMatrix);
  } finally {
    network.dispose();
  }
}

/** `configuration.json` of the average: the trial's record under the export's recipe, the average's outputs (threshold, costs) and its `ensemble` section. */
function foldAverageConfiguration(doc: StudyDocument, data: PreparedData, chosen: RankedTrial, figures: FoldAverageFigures): ExportConfiguration {
  const costs = exportCosts(doc, data);
  const configuration = buildConfiguration({ ...doc, recipe: data.recipe }, chosen.trial, chosen.rank, { ...(figures.threshold ? { threshold: figures.threshold } : {}), ...(costs ? { costs } : {}) });
  configuration.trainedOn = 'each fold network on the other folds of the training and validation splits';
  configuration.ensemble = figures.description;
  configuration.caution = `${FOLD_AVERAGE_CAUTION} ${OPTIMISM_CAUTION}`;
  return configuration;
}

const figure = (value: number | undefined): string => (value === undefined || Number.isNaN(value) ? '-' : String(Number(value.toPrecision(4))));

/** What the CLI prints after `export --average-folds`: the fold networks, the average beside the retrained single network, the cautions. */
export function foldAverageReport(summary: FoldAverageExportSummary): string {
  const { ensemble } = summary;
  const lines = [
    `exported the ${summary.folds} fold networks of rank ${summary.rank} (trial ${summary.trialId}) of study ${summary.study}, averaged with equal weights`,
    `chosen: ${summary.choice}`,
    ...ensemble.members.map((m) => `  fold ${m.fold}: ${summary.goal.metric} ${figure(m.score)} on its own validation rows`),
    `folder: ${summary.out} (${summary.files.join(', ')})`,
    '',
  ];
  const names = Object.keys(ensemble.validation) as (keyof Metrics)[];
  const header = ['metric', 'out-of-fold (fold networks)', ...(ensemble.test ? ['test (average)', 'test (retrained single network)'] : [])];
  const rows = names.map((name) => [name, figure(ensemble.validation[name]), ...(ensemble.test ? [figure(ensemble.test[name]), figure(ensemble.winnerTest?.[name])] : [])]);
  lines.push(textTable(header, rows), '');
  if (summary.threshold) lines.push(`decision threshold: ${figure(summary.threshold.threshold)}, chosen on the ${summary.threshold.rows} out-of-fold outputs (the retrained network is scored at its own threshold)`, '');
  if (!ensemble.test) lines.push('No test figures: the study holds no test split (data.testFraction is 0).');
  lines.push(summary.caution);
  return lines.join('\n');
}
