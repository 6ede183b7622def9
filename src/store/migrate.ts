/**
 * The one place older study files are brought up to the current format, version by version, when
 * they are opened. Migration works on the document in memory; only a command that saves the study
 * (`resume`) writes the result, so read-only commands leave an old file as it was.
 */
import type { Goal, TrialConfiguration } from '../core/configuration.js';
import type { StudyDefinition } from '../study/definition.js';
import type { JobRecord, TrialRecord, TrialStatus } from '../core/trial.js';
import type { StudyDocument } from './types.js';

/** The study file format this rungwise writes. */
export const STUDY_FORMAT_VERSION = 3;
/** The versions this rungwise reads. */
export const READABLE_VERSIONS: readonly number[] = [1, 2, 3];

type VersionTwoTrialStatus = 'running' | 'paused' | 'completed' | 'stopped' | 'diverged' | 'failed' | 'timed-out';
type VersionTwoJob = Omit<JobRecord, 'status'> & { status: 'running' | 'completed' | 'diverged' | 'failed' | 'timed-out' | 'cut-off' };
type VersionTwoTrial = Omit<TrialRecord, 'configuration' | 'score' | 'rungScores' | 'status' | 'jobs'> & {
  params: TrialConfiguration;
  objective: number | null;
  rungObjectives: (number | null)[];
  status: VersionTwoTrialStatus;
  jobs: VersionTwoJob[];
};
type VersionTwoGoal = { metric: Goal['metric']; direction: 'maximize' | 'minimize' };
type VersionTwoDefinition = Omit<StudyDefinition, 'goal'> & { objective?: { metric: Goal['metric']; direction?: 'maximize' | 'minimize' } };
type VersionTwoDocument = Omit<StudyDocument, 'version' | 'goal' | 'definition' | 'trials'> & {
  version: 2;
  objective: VersionTwoGoal;
  definition: VersionTwoDefinition;
  trials: VersionTwoTrial[];
};
type VersionOneTrial = Omit<VersionTwoTrial, 'retries' | 'jobs'> & { attempts?: number };
type VersionOneDocument = Omit<VersionTwoDocument, 'version' | 'trials'> & { version: 1; trials: VersionOneTrial[] };

/** Format 3's name for each status word of format 2. */
export const RENAMED_TRIAL_STATUSES: Readonly<Record<VersionTwoTrialStatus, TrialStatus>> = {
  running: 'training',
  paused: 'waiting',
  completed: 'trained',
  stopped: 'dropped',
  diverged: 'diverged',
  failed: 'failed',
  'timed-out': 'timed-out',
};
const RENAMED_JOB_STATUSES: Readonly<Record<VersionTwoJob['status'], JobRecord['status']>> = {
  running: 'training',
  completed: 'done',
  diverged: 'diverged',
  failed: 'failed',
  'timed-out': 'timed-out',
  'cut-off': 'cut-off',
};

/** Format 3's `better` for format 2's `direction`. */
export function betterOf(direction: 'maximize' | 'minimize'): Goal['better'] {
  return direction === 'maximize' ? 'higher' : 'lower';
}

/**
 * Version 1 counted every job start in `attempts` (not retries) and recorded no jobs: a migrated trial
 * has 0 retries and an empty job list (what its jobs were is not known).
 */
function fromVersion1(doc: VersionOneDocument): VersionTwoDocument {
  const trials = doc.trials.map(({ attempts: _attempts, ...trial }): VersionTwoTrial => ({ ...trial, retries: 0, jobs: [] }));
  return { ...doc, version: 2, trials };
}

/** Version 3 renamed the vocabulary (see README, "Renamed in format 3"); nothing else changed. */
function fromVersion2(doc: VersionTwoDocument): StudyDocument {
  const { objective, definition, trials, ...rest } = doc;
  const { objective: definitionGoal, ...definitionRest } = definition;
  const goal: StudyDefinition['goal'] = definitionGoal && {
    metric: definitionGoal.metric,
    ...(definitionGoal.direction ? { better: betterOf(definitionGoal.direction) } : {}),
  };
  return {
    ...rest,
    version: 3,
    definition: { ...definitionRest, ...(goal ? { goal } : {}) },
    goal: { metric: objective.metric, better: betterOf(objective.direction) },
    trials: trials.map(({ params, objective: score, rungObjectives, status, jobs, ...trial }): TrialRecord => ({
      ...trial,
      configuration: params,
      score,
      rungScores: rungObjectives,
      status: RENAMED_TRIAL_STATUSES[status],
      jobs: jobs.map((job) => ({ ...job, status: RENAMED_JOB_STATUSES[job.status] })),
    })),
  };
}

/**
 * The document of a study file of any readable version, in the current format. `version` must be one
 * of {@link READABLE_VERSIONS}; the caller checks it.
 */
export function migrateStudyDocument(doc: { version: number }): StudyDocument {
  let current = doc as VersionOneDocument | VersionTwoDocument | StudyDocument;
  if (current.version === 1) current = fromVersion1(current);
  if (current.version === 2) current = fromVersion2(current);
  return withThreadTotals(current);
}

/** Totals written before `workers` was renamed `threads` (same version: the rename added no meaning). */
function withThreadTotals(doc: StudyDocument): StudyDocument {
  const totals = doc.totals as (Partial<StudyDocument['totals']> & { workers?: number; workerUtilisation?: number }) | undefined;
  if (!totals || totals.workers === undefined || totals.threads !== undefined) return doc;
  const { workers, workerUtilisation, ...rest } = totals;
  return { ...doc, totals: { ...rest, threads: workers, threadUtilisation: workerUtilisation ?? 0 } as StudyDocument['totals'] };
}
