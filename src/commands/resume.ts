import path from 'node:path';
import { resumeStudy, type ResumeOutcome } from '../runner/resume-study.js';
import { StudyStore } from '../store/study-store.js';
import { queueRun, settleQueued } from './queue.js';
import { sessionRunnerOptions, warnIfCrowded, type SessionOptions } from './session.js';

export interface ResumeCommandOptions extends SessionOptions {
  /** Run directory holding `study.json`. */
  dir: string;
  /** Go on although the CSV changed since the study started (the study file records it). @default false */
  allowChangedData?: boolean;
}

/**
 * `rungwise resume`: continue an interrupted study (finished trials are kept). A finished study is
 * returned as it is, with `alreadyFinished` set.
 */
export async function resume(options: ResumeCommandOptions): Promise<ResumeOutcome> {
  const saved = await StudyStore.read(options.dir);
  warnIfCrowded(options, saved.definition);
  const dir = path.resolve(options.dir);
  const queue = queueRun(options, { name: saved.name, dir, fresh: false }, options.stderr ?? process.stderr, options.signal);
  const session = sessionRunnerOptions(options, queue, saved.definition, saved.goal);
  return settleQueued(queue, dir, () => resumeStudy(options.dir, {
    ...(options.allowChangedData ? { allowChangedData: true } : {}),
    ...session,
  }));
}
