import { existsSync } from 'node:fs';
import { copyFile, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { isDeepStrictEqual } from 'node:util';
import type * as tf from '@tensorflow/tfjs';
import { UserError } from '../core/errors.js';
import { isDefaultPreprocessing, preprocessingOf, type Goal } from '../core/configuration.js';
import { rankTrials, type RankedTrial } from '../core/ranking.js';
import type { PreparedData, PreprocessingRecipe } from '../data/types.js';
import { writeFolderAtomically } from '../files/atomic-folder.js';
import { packageVersion } from '../files/package-files.js';
import { CONFIGURATION_FILE, buildConfiguration, type ExportConfiguration } from '../export/configuration.js';
import type { EnsembleDescription } from '../export/ensemble-description.js';
import { chooseEnsemble, libraryNetwork, metricsOfOutputs, selectionMetric, type ChosenEnsemble, type LibraryNetwork } from '../export/ensemble.js';
import { memberFolder, saveMember } from '../export/ensemble-files.js';
import { buildLayersModel } from '../export/model-files.js';
import type { OnnxMember } from '../export/ensemble-onnx.js';
import { ONNX_FILE } from '../export/onnx-schema.js';
import { ranksWithCheckpoint, keptCheckpointWeights } from '../export/select.js';
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
import { exportCosts, parseExportFormat, type ExportFormat } from './export.js';

export interface EnsembleExportOptions {
  /** Run directory holding `study.json` and `checkpoints/`. */
  dir: string;
  /** The library: ranks 1 to `size`, each with its kept checkpoint (at least 2). */
  size: number;
  /** Export folder. @default `<dir>/export/ensemble-<size>` */
  out?: string;
  /** 'onnx' writes `model.onnx` (one graph holding every member) as well. @default 'tfjs' */
  format?: ExportFormat;
  /** Go on although the CSV changed since the study ran. @default false */
  allowChangedData?: boolean;
}

export interface EnsembleExportSummary {
  dir: string;
  out: string;
  study: string;
  goal: Goal;
  /** The members, their weights, and the ensemble's figures (validation and test) beside the single winner's test figures. */
  ensemble: EnsembleDescription;
  /** The single winner (rank 1): its trial and the study's validation score. */
  winner: { trialId: number; score: number };
  /** Binary: the ensemble's decision threshold, chosen on its validation outputs by the study's rule. */
  threshold?: ThresholdChoice;
  format: ExportFormat;
  files: string[];
  caution: string;
}

/** The extra caution of an ensemble: its validation figures are optimistic twice over. */
export const ENSEMBLE_CAUTION =
  "The ensemble's validation figures are even more optimistic than a single trial's: its members and their weights were chosen on those rows. Compare the ensemble with the single winner on the test split.";

/**
 * `rungwise export --ensemble <k>`: greedy ensemble selection with replacement (Caruana et al., ICML
 * 2004) over the networks of ranks 1 to k, scored by the study's goal on the validation split; writes
 * each chosen member's tfjs model in its own folder and `configuration.json` (and `model.onnx` with
 * format 'onnx'), and scores the ensemble and the single winner on the held-out test split.
 * @throws UserError for a size under 2, a k-fold study, or a rank in the library without its kept checkpoint.
 * @example
 * import { exportEnsemble } from 'rungwise';
 * const { ensemble } = await exportEnsemble({ dir: 'runs/demo', size: 3 });
 * console.log(ensemble.test, ensemble.winnerTest);
 */
export async function exportEnsemble(options: EnsembleExportOptions): Promise<EnsembleExportSummary> {
  const runDir = path.resolve(options.dir);
  const doc = await StudyStore.read(runDir);
  const studyFile = studyFilePath(runDir);
  const offered = await ensembleLibrary(runDir, doc, options.size, studyFile);
  const studyRows = await studyData(doc, studyFile, { command: 'export --ensemble', allowChangedData: options.allowChangedData ?? false });
  const { ranked, data, own } = await sharedPreprocessing(doc, offered, studyRows);
  await initBackend();
  const library: LibraryNetwork[] = [];
  for (const entry of ranked) library.push(libraryNetwork(entry, await keptCheckpointWeights(runDir, doc, entry), own.recipe, data.validation, data.test));
  const chosen = chooseEnsemble(library, own.recipe, data.validation, doc.goal, data.costMatrix);
  const figures = ensembleFigures(own, data, library, chosen);
  const out = path.resolve(options.out ?? runPaths.ensembleExportDir(runDir, options.size));
  const format = options.format ?? 'tfjs';
  const splitRecord = existsSync(runPaths.splitRecord(runDir)) ? runPaths.splitRecord(runDir) : undefined;
  const configuration = ensembleConfiguration(own, data, library[0]!.ranked, figures);
  await writeFolderAtomically(out, (existing) => existsSync(path.join(existing, CONFIGURATION_FILE)), (partial) => writeEnsemble(partial, libraryMembers(library, configuration), configuration, format, splitRecord));
  const members = figures.description.members.map((member) => `${member.folder}/`);
  return {
    dir: runDir,
    out,
    study: doc.name,
    goal: doc.goal,
    ensemble: figures.description,
    winner: { trialId: library[0]!.ranked.trial.id, score: library[0]!.ranked.trial.score! },
    ...(figures.threshold ? { threshold: figures.threshold } : {}),
    format,
    files: [CONFIGURATION_FILE, ...members, ...(format === 'onnx' ? [ONNX_FILE] : []), ...(splitRecord ? [SPLIT_RECORD_NAME] : [])],
    caution: `${ENSEMBLE_CAUTION} ${OPTIMISM_CAUTION}`,
  };
}

/**
 * The CLI's `export --ensemble <k>`: refuses the flags an ensemble does not take (--rank, --retrain), checks --format, exports.
 * @throws UserError (E_USAGE) for --rank other than 1 or --retrain with --ensemble.
 */
export async function exportEnsembleAction(dir: string, flags: { ensemble: number; rank?: number; front?: number; maxWeights?: number; out?: string; retrain?: boolean; format: string; allowChangedData?: boolean }): Promise<EnsembleExportSummary> {
  if (flags.retrain) throw new UserError('E_USAGE', 'export: --ensemble exports the study\'s own networks; it does not take --retrain');
  const chooser = flags.rank !== undefined ? '--rank' : flags.front !== undefined ? '--front' : flags.maxWeights !== undefined ? '--max-weights' : undefined;
  if (chooser) throw new UserError('E_USAGE', `export: --ensemble chooses from ranks 1 to k; it does not take ${chooser}`);
  return exportEnsemble({
    dir,
    size: flags.ensemble,
    format: parseExportFormat(flags.format),
    ...(flags.out !== undefined ? { out: flags.out } : {}),
    ...(flags.allowChangedData ? { allowChangedData: true } : {}),
  });
}

/**
 * Ranks 1 to `size` of the study, each with its kept checkpoint.
 * @throws UserError (E_USAGE) for a size under 2, (E_EXPORT_ENSEMBLE) for a k-fold study or a ranking too short, (E_EXPORT_NO_CHECKPOINT) for a rank without its checkpoint.
 */
async function ensembleLibrary(runDir: string, doc: StudyDocument, size: number, studyFile: string): Promise<RankedTrial[]> {
  if (!Number.isInteger(size) || size < 2) throw new UserError('E_USAGE', `export: --ensemble must be a whole number from 2 up (the ranks offered to the selection), got '${size}'`);
  if (doc.definition.data.folds !== undefined) {
    throw new UserError('E_EXPORT_ENSEMBLE', `${studyFile}: a k-fold study keeps no network trained on the training split alone, so --ensemble cannot choose on the validation split; use \`rungwise export ${runDir} --average-folds\` (rank 1's fold networks averaged) or \`rungwise export ${runDir}\` (it retrains)`);
  }
  const ranking = rankTrials(doc.trials, doc.goal);
  if (ranking.length < size) throw new UserError('E_EXPORT_ENSEMBLE', `${studyFile}: --ensemble ${size} needs ${size} ranked trials; the study ranks ${ranking.length}`);
  const library = ranking.slice(0, size);
  const kept = new Set(await ranksWithCheckpoint(runDir, library));
  const missing = library.find(({ rank }) => !kept.has(rank));
  if (missing) {
    const keptRanks = await ranksWithCheckpoint(runDir, ranking);
    throw new UserError(
      'E_EXPORT_NO_CHECKPOINT',
      `${runPaths.checkpoint(runDir, missing.trial.id)}: --ensemble ${size} needs the kept checkpoints of ranks 1 to ${size}, but rank ${missing.rank} (trial ${missing.trial.id}) has none; ranks with one: ${keptRanks.join(', ') || 'none'} (a study keeps the checkpoints of its best trials only)`,
    );
  }
  return library;
}

/**
 * The members of an ensemble share one preprocessing recipe (the exported model applies one): rank 1's
 * choice (`numericInputs`, `poolCategoriesBelow`, `numericEncoding`). Ranks trained under another choice are left out of
 * the library, and the data and the recorded recipe are those of rank 1's choice.
 */
async function sharedPreprocessing(doc: StudyDocument, offered: RankedTrial[], data: PreparedData): Promise<{ ranked: RankedTrial[]; data: PreparedData; own: StudyDocument }> {
  const choice = preprocessingOf(offered[0]!.trial.configuration);
  const ranked = offered.filter((entry) => isDeepStrictEqual(preprocessingOf(entry.trial.configuration), choice));
  if (isDefaultPreprocessing(choice)) return { ranked, data, own: doc };
  if (!data.prepareChoice) throw new Error(`export --ensemble: the study's data were prepared without its preprocessing choices`);
  const chosen = await data.prepareChoice(choice);
  return { ranked, data: chosen, own: { ...doc, recipe: chosen.recipe } };
}

interface EnsembleFigures {
  description: EnsembleDescription;
  threshold?: ThresholdChoice;
}

/** The ensemble's threshold (binary, by the study's rule on its validation outputs), members and metrics, and the single winner's test metrics. */
function ensembleFigures(doc: StudyDocument, data: PreparedData, library: readonly LibraryNetwork[], chosen: ChosenEnsemble): EnsembleFigures {
  const { recipe } = doc;
  const rule = recipe.task === 'binary' ? resolveThresholdRule(doc.definition) : undefined;
  const costs = data.costMatrix;
  const threshold = rule ? chooseThreshold(rule, data.validation.y, chosen.validation, costs) : undefined;
  const winnerThreshold = rule ? chooseThreshold(rule, data.validation.y, library[0]!.validation, costs).threshold : DEFAULT_THRESHOLD;
  const total = chosen.choice.counts.reduce((sum, count) => sum + count, 0);
  const metric = selectionMetric(recipe, doc.goal);
  const description: EnsembleDescription = {
    method: 'greedy forward selection with replacement on the validation split, from the empty ensemble; the best nested ensemble is kept (Caruana, Niculescu-Mizil, Crew and Ksikes, ICML 2004)',
    library: library.map((network) => network.ranked.rank),
    rounds: chosen.rounds,
    chosenAtRound: chosen.choice.round,
    members: library.flatMap((network, m) => {
      const count = chosen.choice.counts[m]!;
      if (count === 0) return [];
      const alone = metricsOfOutputs(recipe, data.validation, network.validation, DEFAULT_THRESHOLD, costs)[metric] ?? Number.NaN;
      const { trial, rank } = network.ranked;
      return [{ rank, trialId: trial.id, count, weight: count / total, folder: memberFolder(trial.id), configuration: { ...trial.configuration }, score: alone }];
    }),
    validation: metricsOfOutputs(recipe, data.validation, chosen.validation, threshold?.threshold ?? DEFAULT_THRESHOLD, costs),
  };
  if (data.test.rows > 0) {
    description.test = metricsOfOutputs(recipe, data.test, chosen.test, threshold?.threshold ?? DEFAULT_THRESHOLD, costs);
    description.winnerTest = metricsOfOutputs(recipe, data.test, library[0]!.test, winnerThreshold, costs);
  }
  return { description, ...(threshold ? { threshold } : {}) };
}

/** `configuration.json` of the ensemble: the winner's record, the ensemble's outputs (threshold, costs) and its `ensemble` section. */
function ensembleConfiguration(doc: StudyDocument, data: PreparedData, winner: RankedTrial, figures: EnsembleFigures): ExportConfiguration {
  const costs = exportCosts(doc, data);
  const configuration = buildConfiguration(doc, winner.trial, winner.rank, { ...(figures.threshold ? { threshold: figures.threshold } : {}), ...(costs ? { costs } : {}) });
  configuration.ensemble = figures.description;
  configuration.caution = `${ENSEMBLE_CAUTION} ${OPTIMISM_CAUTION}`;
  return configuration;
}

/** One member as the ensemble writer takes it: its folder, its count in the mean, how to build its network, and a fold network's own recipe. */
export interface MemberToWrite {
  folder: string;
  count: number;
  build: () => tf.LayersModel;
  recipe?: PreprocessingRecipe;
}

/**
 * The one writer of ensemble folders (`--ensemble`, `--average-folds`): each member's tfjs model in
 * its folder, `model.onnx` on request (one graph for every member), `configuration.json`, the split record.
 */
export async function writeEnsemble(partial: string, members: readonly MemberToWrite[], configuration: ExportConfiguration, format: ExportFormat, splitRecord: string | undefined): Promise<void> {
  const networks: OnnxMember[] = [];
  try {
    for (const member of members) {
      const network = member.build();
      networks.push({ network, count: member.count, ...(member.recipe ? { recipe: member.recipe } : {}) });
      await saveMember(network, partial, member.folder);
    }
    if (format === 'onnx') {
      const { describeOnnx } = await import('../export/onnx.js');
      const { writeEnsembleOnnx } = await import('../export/ensemble-onnx.js');
      configuration.onnx = describeOnnx(configuration);
      await writeEnsembleOnnx(networks, configuration, partial, packageVersion());
    }
    await writeFile(path.join(partial, CONFIGURATION_FILE), `${JSON.stringify(configuration, null, 2)}\n`);
    if (splitRecord) await copyFile(splitRecord, path.join(partial, SPLIT_RECORD_NAME));
  } finally {
    for (const { network } of networks) network.dispose();
  }
}

/** The chosen members of a top-k ensemble as the writer takes them. */
function libraryMembers(library: readonly LibraryNetwork[], configuration: ExportConfiguration): MemberToWrite[] {
  return configuration.ensemble!.members.map((member) => {
    const source = library.find((network) => network.ranked.trial.id === member.trialId)!;
    return { folder: member.folder, count: member.count, build: () => buildLayersModel(source.ranked.trial.configuration, configuration.recipe, source.weights) };
  });
}

const figure = (value: number | undefined): string => (value === undefined || Number.isNaN(value) ? '-' : String(Number(value.toPrecision(4))));

/** What the CLI prints after an ensemble export: members and weights, the ensemble beside the single winner, the cautions. */
export function ensembleReport(summary: EnsembleExportSummary): string {
  const { ensemble } = summary;
  const lines = [
    `exported an ensemble of study ${summary.study}: greedy selection over ranks ${ensemble.library.join(', ')} on the validation split, ${ensemble.rounds} rounds, the ensemble after round ${ensemble.chosenAtRound} kept`,
    ...ensemble.members.map((m) => `  rank ${m.rank} (trial ${m.trialId}): weight ${figure(m.weight)} (picked ${m.count} time${m.count === 1 ? '' : 's'}), ${summary.goal.metric} alone ${figure(m.score)}`),
    `folder: ${summary.out} (${summary.files.join(', ')})`,
    '',
  ];
  const names = Object.keys(ensemble.validation) as (keyof Metrics)[];
  const header = ['metric', 'validation (ensemble)', ...(ensemble.test ? ['test (ensemble)', `test (rank 1 alone, trial ${summary.winner.trialId})`] : [])];
  const rows = names.map((name) => [name, figure(ensemble.validation[name]), ...(ensemble.test ? [figure(ensemble.test[name]), figure(ensemble.winnerTest?.[name])] : [])]);
  lines.push(textTable(header, rows), '');
  if (summary.threshold) lines.push(`decision threshold: ${figure(summary.threshold.threshold)}, chosen on the ensemble's validation outputs (rank 1 alone is scored at its own threshold)`, '');
  if (!ensemble.test) lines.push('No test figures: the study holds no test split (data.testFraction is 0).');
  lines.push(summary.caution);
  return lines.join('\n');
}
