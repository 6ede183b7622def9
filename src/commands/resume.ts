import { resumeStudy, type ResumeOutcome } from '../runner/resume-study.js';
import { StudyStore } from '../store/study-store.js';
import { studyObserver, type ProgressTarget } from './observe.js';

export interface ResumeCommandOptions extends ProgressTarget {
  /** Run directory holding `study.json`. */
  dir: string;
  /** Worker threads. @default the study's `workers`, else available cores */
  workers?: number;
  /** Go on although the CSV changed since the study started (the study file records it). @default false */
  allowChangedData?: boolean;
  signal?: AbortSignal;
}

/**
 * `rungwise resume`: continue an interrupted study (finished trials are kept). A finished study is
 * returned as it is, with `alreadyFinished` set.
 */
export async function resume(options: ResumeCommandOptions): Promise<ResumeOutcome> {
  const saved = await StudyStore.read(options.dir);
  const onEvent = studyObserver(options, saved.definition, saved.objective);
  return resumeStudy(options.dir, {
    ...(options.workers !== undefined ? { workers: options.workers } : {}),
    ...(options.signal ? { signal: options.signal } : {}),
    ...(options.allowChangedData ? { allowChangedData: true } : {}),
    ...(onEvent ? { onEvent } : {}),
  });
}
