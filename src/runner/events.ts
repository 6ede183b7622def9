import type { EpochReport } from '../pool/messages.js';
import type { RankedTrial } from '../store/ranking.js';
import type { StudyDocument, TrialRecord } from '../store/types.js';
import type { Job } from '../samplers/sampler.js';

/** What a running study tells its observer (the CLI's progress display, a test, a library user). */
export type StudyEvent =
  | { type: 'study-started'; name: string; dir: string; workers: number; plannedTrials: number; resumed: boolean }
  | { type: 'job-started'; job: Job }
  | { type: 'epoch'; report: EpochReport }
  | { type: 'trial-finished'; trial: TrialRecord; job: Job; best: TrialRecord | undefined; finishedTrials: number }
  | { type: 'stopping'; reason: string }
  | { type: 'study-finished'; doc: StudyDocument; ranking: RankedTrial[] };

export type StudyObserver = (event: StudyEvent) => void;
