export type { TrialTransport } from './transport.js';
export type { EpochReport, SharedDataset, TrainJob, TrainResult } from '../core/job.js';
export { ThreadTransport, type FaultInjector, type ThreadTransportOptions } from './threads/transport.js';
export { FoldsTransport, meanAndStandardError } from './folds.js';
export { ClosedFormTransport, type ClosedFormEpoch, type ClosedFormTransportOptions } from './closed-form.js';
