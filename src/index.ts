/**
 * rungwise's library API: everything the CLI does is callable from here.
 * The README's "API" section shows each part in use.
 */
export { UserError, isUserError } from './core/errors.js';
export * from './study/definition.js';
export { loadStudy, validateStudy, studyFromObject, type LoadedStudy } from './study/load.js';
export { studyJsonSchema } from './study/json-schema.js';
export { runStudy, type RunOptions, type StudyOutcome } from './runner/run-study.js';
export { resumeStudy, type ResumeOptions, type ResumeOutcome } from './runner/resume-study.js';
export { executeStudy, type ExecuteOptions } from './runner/execute-study.js';
export type { StudyEvent, StudyObserver, StudyProgress } from './runner/events.js';
export { rankTrials, type RankedTrial } from './core/ranking.js';
export { weightCount } from './core/size.js';
export { frontOf, nonDominatedFronts, type FrontMember, type SecondGoal } from './core/front.js';
export { StudyStore, STUDY_FILE_NAME, studyFilePath } from './store/study-store.js';
export { readSplitRecord, type SplitRecord } from './store/split-record.js';
export type { StudyDocument, StudyTotals } from './store/types.js';
export type { TrialRecord, TrialStatus, CurvePoint } from './core/trial.js';
export type { PreparedData, PreparedFold, PreprocessingRecipe, FeatureRecipe, DataSummary } from './data/types.js';
export { prepareData } from './data/prepare.js';
export type { NumericTransform } from './data/numeric-inputs.js';
export { NUMERIC_INPUTS, type NumericInputs, type PreprocessingChoice } from './core/configuration.js';
export type { DataEvent, DataObserver, DataLoadOptions } from './data/events.js';
export { checkCapacity, parameterCount, trainingBytes, type CapacityInput } from './study/capacity.js';
export type { Sampler, Job, JobOutcome } from './samplers/sampler.js';
export type { EpochReport, TrainResult, SharedDataset } from './core/job.js';
export type { TrainRequest } from './trainers/contract.js';
export { plannedWork, type PlannedWork } from './report/budget.js';
export { studyResultJson, type StudyResultJson, type TrialEntry } from './report/study-result.js';
export { run, type RunCommandOptions } from './commands/run.js';
export type { ProgressTarget } from './commands/observe.js';
export type { SessionOptions } from './commands/session.js';
export type { QueueFlags } from './commands/queue.js';
export { ranking, type RankingCommandOptions, type RankingResult } from './commands/ranking.js';
export { resume, type ResumeCommandOptions } from './commands/resume.js';
export { plot, type PlotOptions } from './commands/plot.js';
export type { Baseline, ChartReferences, NoiseBand } from './plot/charts/references.js';
export { exportModel, exportReport, type ExportCommandOptions, type ExportFormat, type ExportSummary } from './commands/export.js';
export { exportEnsemble, ensembleReport, type EnsembleExportOptions, type EnsembleExportSummary } from './commands/export-ensemble.js';
export { exportFoldAverage, foldAverageReport, type FoldAverageExportOptions, type FoldAverageExportSummary } from './commands/export-folds.js';
export { predictCsv, predictReport, predictWarnings, type PredictCommandOptions, type PredictSummary } from './commands/predict.js';
export type { InputIssue, InputIssueKind } from './data/input-checks.js';
export { runDemo, copyDemo, type DemoOptions } from './commands/demo.js';
export {
  loadModel,
  predict,
  predictWithChecks,
  decisionThreshold,
  modelOutputs,
  type EncodeUnder,
  type PredictOptions,
  type CheckedPredictions,
  type LoadedModel,
  type InputRow,
  type Prediction,
  type ClassPrediction,
  type ValuePrediction,
} from './export/hand-off.js';
export type { ExportConfiguration, ModelOutputs } from './export/configuration.js';
