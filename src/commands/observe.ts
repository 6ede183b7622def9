import type { DataObserver } from '../data/events.js';
import { plannedWork } from '../report/budget.js';
import { dataProgressObserver } from '../report/data-progress.js';
import { progressObserver } from '../report/progress.js';
import { painterFor } from '../report/style.js';
import type { StudyObserver } from '../runner/events.js';
import type { Goal } from '../core/configuration.js';
import type { StudyDefinition } from '../study/definition.js';

/** Where a study command shows progress: a stream (the CLI passes stderr) or nowhere. */
export interface ProgressTarget {
  /** Stream for the progress display (the CLI passes stderr), or `false` for none. @default false */
  progress?: NodeJS.WritableStream | false;
  /** Called with every event as well (a library user's own observer). */
  onEvent?: StudyObserver;
  /**
   * Where the data warnings (columns that should likely not be features) go when there is no
   * progress display: the CLI passes its `warning:` writer, so `--quiet` still shows them.
   */
  onDataWarning?: (message: string) => void;
  /** Where warnings about how the study will run go (more worker threads than cores); the CLI passes its `warning:` writer. */
  onWarning?: (message: string) => void;
}

/** The data observer a study command hands `prepareData`: the data progress display, or only the warnings. */
export function dataObserver(target: ProgressTarget): DataObserver | undefined {
  if (target.progress) return dataProgressObserver({ stream: target.progress });
  const warn = target.onDataWarning;
  if (!warn) return undefined;
  return (event) => {
    if (event.type === 'warning') warn(event.message);
  };
}

/** The observer a study command hands the runner: the progress display, then the caller's own. */
export function studyObserver(
  target: ProgressTarget,
  definition: Pick<StudyDefinition, 'budget' | 'sampler'>,
  goal: Goal,
): StudyObserver | undefined {
  const stream = target.progress ?? false;
  const observers: StudyObserver[] = [];
  if (stream !== false) {
    observers.push(
      progressObserver({
        goal,
        plan: plannedWork(definition),
        stream,
        paint: painterFor(stream),
      }),
    );
  }
  if (target.onEvent) observers.push(target.onEvent);
  if (observers.length === 0) return undefined;
  return (event) => {
    for (const observer of observers) observer(event);
  };
}
