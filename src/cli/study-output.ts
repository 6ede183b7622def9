/** What the study commands (`run`, `resume`, `demo`, `ranking`) share: Ctrl-C handling and the result. */
import type { StudyDocument } from '../store/types.js';
import type { RankedTrial } from '../core/ranking.js';
import { type CliIo, json } from './io.js';
import { interruptSignal } from './interrupt.js';

/** Run a study command with Ctrl-C handling; an interrupted study says how to go on and exits 130. */
export async function untilInterrupted<T extends { dir: string; doc: { state: string } }>(io: CliIo, command: (signal: AbortSignal) => Promise<T>): Promise<T | undefined> {
  const interrupt = interruptSignal();
  try {
    let outcome: T;
    try {
      outcome = await command(interrupt.signal);
    } catch (error) {
      // Interrupted while the data loaded: nothing was written yet.
      if (!interrupt.signal.aborted || (error as Error).name !== 'AbortError') throw error;
      io.warn('interrupted before the first trial; nothing was written');
      process.exitCode = 130;
      return undefined;
    }
    if (outcome.doc.state === 'interrupted') {
      io.warn(`study interrupted; continue it with: rungwise resume ${outcome.dir}`);
      process.exitCode = 130;
    }
    if (outcome.doc.state === 'time-limit') io.note(`study stopped by its time limit; continue it with: rungwise resume ${outcome.dir} --minutes <m>`);
    return outcome;
  } finally {
    interrupt.dispose();
  }
}

/** A study with its ranking, as the study commands print it. */
export interface StudyToPrint {
  doc: StudyDocument;
  ranking: RankedTrial[];
  file: string;
}

/** The flags that shape a printed study result. */
export interface ResultFlags {
  top?: number;
  json?: boolean;
}

/** The study's result on stdout: the ranking table and summary, or JSON. */
export async function printStudy(io: CliIo, outcome: StudyToPrint, flags: ResultFlags): Promise<void> {
  const { studyResultJson, studyResultText } = await import('../report/study-result.js');
  io.out(flags.json ? json(studyResultJson(outcome.doc, outcome.ranking, outcome.file, flags.top)) : `${studyResultText(outcome.doc, outcome.ranking, outcome.file, flags.top)}\n`);
}

/** After a study ran: its result on stdout, then exit 1 when every trial ended without a score. */
export async function finishStudy(io: CliIo, outcome: StudyToPrint, flags: ResultFlags): Promise<void> {
  await printStudy(io, outcome, flags);
  const { noResultError } = await import('../core/trial-status.js');
  const noResult = outcome.doc.state === 'finished' ? noResultError(outcome.doc.trials, outcome.file) : undefined;
  if (noResult) throw noResult;
}
