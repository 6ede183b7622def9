/** rungwise's library API: everything the CLI does is callable from here. */
export { UserError, isUserError } from './errors.js';
export * from './study/definition.js';
export { loadStudy, validateStudy, type LoadedStudy } from './study/load.js';
export { studyJsonSchema } from './study/json-schema.js';
export { runStudy, type RunOptions, type StudyOutcome } from './runner/run-study.js';
export { resumeStudy, type ResumeOutcome } from './runner/resume-study.js';
export { executeStudy, type ExecuteOptions } from './runner/execute-study.js';
export type { StudyEvent, StudyObserver } from './runner/events.js';
export { rankTrials, type RankedTrial } from './store/ranking.js';
export { StudyStore, STUDY_FILE_NAME, studyFilePath } from './store/study-store.js';
export type { StudyDocument, TrialRecord, TrialStatus, CurvePoint, StudyTotals } from './store/types.js';
export type { PreparedData, PreprocessingRecipe, FeatureRecipe, DataSummary } from './data/types.js';
export type { Sampler, Job, JobOutcome } from './samplers/sampler.js';
export type { EpochReport, TrainRequest, TrainResult, SharedDataset } from './pool/messages.js';
export { run, type RunCommandOptions } from './commands/run.js';
export { ranking, type RankingCommandOptions } from './commands/ranking.js';
export { resume, type ResumeCommandOptions } from './commands/resume.js';
