import type { DataLoadOptions } from '../data/events.js';
import { rankTrials } from '../core/ranking.js';
import { studyStoppedError } from '../core/errors.js';
import { lockStudy } from '../store/lock.js';
import { checkOrWriteSplitRecord, splitRecordOf } from '../store/split-record.js';
import { studyData } from '../store/study-data.js';
import { StudyStore } from '../store/study-store.js';
import type { TrialRecord } from '../core/trial.js';
import { executeStudy, type ExecuteOptions, type StudyOutcome } from './execute-study.js';
import { rewindUnrecordedJob } from './trial-records.js';

export interface ResumeOutcome extends StudyOutcome {
  /** True when the study had already finished: nothing was run. */
  alreadyFinished: boolean;
}

/**
 * Continue the study saved in `dir`: finished trials are kept, trials that were running run again
 * (from their last rung checkpoint where there is one), and the sampler is rebuilt from the store.
 * For random search, successive halving and Hyperband the end result equals an uninterrupted run.
 */
export interface ResumeOptions extends ExecuteOptions, Pick<DataLoadOptions, 'onDataEvent'> {
  /** Go on although the CSV changed since the study started; the study file records it. @default false */
  allowChangedData?: boolean;
}

export async function resumeStudy(dir: string, options: ResumeOptions = {}): Promise<ResumeOutcome> {
  const lock = await lockStudy(dir).catch((error: unknown) => {
    throw studyStoppedError(error, dir) ?? error;
  });
  try {
    const store = await StudyStore.open(dir, options.onWriteStep);
    const doc = store.doc;
    const rerun = rewindUnrecordedJobs(doc.trials);
    if (rerun.length > 0 && doc.state === 'finished') doc.state = 'interrupted';
    if (doc.state === 'finished') {
      return { dir: store.dir, file: store.file, doc, ranking: rankTrials(doc.trials, doc.goal), alreadyFinished: true };
    }
    const data = await studyData(doc, store.file, {
      command: 'resume',
      allowChangedData: options.allowChangedData ?? false,
      ...(options.signal ? { signal: options.signal } : {}),
      ...(options.onDataEvent ? { onDataEvent: options.onDataEvent } : {}),
    });
    const record = splitRecordOf(data, doc.definition.data, { file: doc.definition.data.csv, sha256: data.csvSha256 });
    if ((await checkOrWriteSplitRecord(store.dir, record)) === 'written') {
      options.onEvent?.({ type: 'note', message: `${store.dir}: the study had no split record; wrote splits.json with the rows of each split` });
    }
    return { ...(await executeStudy(store, data, options, rerun)), alreadyFinished: false };
  } catch (error) {
    throw studyStoppedError(error, dir) ?? error;
  } finally {
    // A vanished or read-only folder may refuse even this; the lock then goes stale and the next run takes it over.
    await lock.release().catch(() => undefined);
  }
}

/** Trials whose last job's epochs were lost from the curve log run that job again: one note each. */
function rewindUnrecordedJobs(trials: TrialRecord[]): string[] {
  return trials.flatMap((trial) => {
    const job = rewindUnrecordedJob(trial);
    return job ? [`trial ${trial.id}: the curve log lost epochs ${job.fromEpoch + 1}-${job.toEpoch}; that job runs again`] : [];
  });
}
