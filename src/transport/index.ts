export type { TrialTransport } from './transport.js';
export type { EpochReport, SharedDataset, TrainJob, TrainResult } from './types.js';
export { ThreadTransport, type FaultInjector, type ThreadTransportOptions } from './threads.js';
export { FoldsTransport, meanAndStandardError } from './folds.js';
export { ClosedFormTransport, type ClosedFormEpoch, type ClosedFormTransportOptions } from './closed-form.js';
