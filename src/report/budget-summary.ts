/**
 * The closing account of a study's budget: work planned against work done, time training against time
 * waiting, and, for samplers that stop trials at rungs, the share of the epochs each rung took. One
 * short block at the end of `run` and `resume` (text), and `budget` in their `--json`.
 */
import type { JobRecord } from '../core/trial.js';
import type { StudyDocument } from '../store/types.js';
import { plannedWork } from './budget.js';
import { repeatProgress } from '../core/repeats.js';
import { formatDuration, formatNumber } from './format.js';

/** Below this utilisation the summary says why it is low. Common practice (no source). */
const LOW_UTILISATION = 0.7;
/** A session this short spends a visible share of its wall time starting threads. Common practice (no source). */
const SHORT_SESSION_SECONDS = 60;

export interface BudgetSummary {
  planned: { trials: number; jobs: number; epochs: number; limit: boolean };
  done: { trials: number; jobs: number; epochs: number };
  /** The repeat runs after the search (included in `planned` and `done`): jobs and epochs planned and done, and their training seconds. */
  repeats?: { planned: { jobs: number; epochs: number }; done: { jobs: number; epochs: number }; workerSeconds: number };
  /** This session (the last `run` or `resume`): wall seconds, threads, thread-seconds training and waiting. */
  session: { wallSeconds: number; threads: number; trainingSeconds: number; waitingSeconds: number; utilisation: number } | null;
  /** Epochs trained in each rung and their share of all epochs trained (samplers that stop trials at rungs). */
  rungs: { rung: number; epochs: number; share: number }[];
  /** Why utilisation is low, when it is. */
  lowUtilisation: string[];
}

const settled = (job: JobRecord): boolean => job.status !== 'training' && job.status !== 'cut-off';

/** The budget account of a study, from its study file. */
export function budgetSummary(doc: StudyDocument): BudgetSummary {
  const plan = plannedWork(doc.definition);
  const jobs = doc.trials.flatMap((trial) => trial.jobs.filter(settled));
  const repeats = repeatProgress(doc.repeats);
  const epochs = doc.trials.reduce((sum, trial) => sum + trial.epochsTrained, 0) + repeats.epochs;
  const summary: BudgetSummary = {
    planned: { trials: plan.trials, jobs: plan.jobs, epochs: plan.epochs, limit: plan.limit },
    done: { trials: doc.trials.length, jobs: jobs.length + repeats.jobs, epochs },
    ...(plan.repeats
      ? {
          repeats: {
            planned: { jobs: plan.repeats.jobs, epochs: plan.repeats.epochs },
            done: repeats,
            workerSeconds: (doc.repeats?.runs ?? []).reduce((sum, run) => sum + run.workerSeconds, 0),
          },
        }
      : {}),
    session: sessionTime(doc),
    rungs: plan.rungs > 1 ? rungShares(jobs) : [],
    lowUtilisation: [],
  };
  // Synchronous rungs wait for their last job; an asynchronous plan (a limit) does not wait.
  summary.lowUtilisation = lowUtilisationReasons(summary, plan.rungs > 1 && !plan.limit);
  return summary;
}

function sessionTime(doc: StudyDocument): BudgetSummary['session'] {
  const totals = doc.totals;
  if (!totals || totals.busySeconds === undefined) return null;
  const capacity = totals.threads * totals.wallSeconds;
  return {
    wallSeconds: totals.wallSeconds,
    threads: totals.threads,
    trainingSeconds: totals.busySeconds,
    waitingSeconds: Math.max(0, capacity - totals.busySeconds),
    utilisation: totals.threadUtilisation,
  };
}

function rungShares(jobs: readonly JobRecord[]): BudgetSummary['rungs'] {
  const byRung = new Map<number, number>();
  for (const job of jobs) byRung.set(job.rung, (byRung.get(job.rung) ?? 0) + job.toEpoch - job.fromEpoch);
  const total = [...byRung.values()].reduce((a, b) => a + b, 0);
  return [...byRung].sort(([a], [b]) => a - b).map(([rung, epochs]) => ({ rung, epochs, share: total > 0 ? epochs / total : 0 }));
}

function lowUtilisationReasons(summary: BudgetSummary, waitsAtRungs: boolean): string[] {
  const session = summary.session;
  if (!session || session.utilisation >= LOW_UTILISATION) return [];
  const reasons: string[] = [];
  if (session.wallSeconds < SHORT_SESSION_SECONDS) reasons.push('start-up: a short session spends a visible share of its time starting worker threads and sending them the data');
  if (waitsAtRungs) reasons.push('rung barriers: a rung is ranked only when its last job ends, so threads wait for the slowest job of each rung');
  if (summary.done.jobs < 2 * session.threads) reasons.push(`too few jobs: ${summary.done.jobs} jobs for ${session.threads} threads, so some threads had nothing to do`);
  if (reasons.length === 0) reasons.push('jobs of very different lengths: the last long jobs ran while the other threads had nothing left to start');
  return reasons;
}

/** A share as the summary prints it: two significant digits (0.012, 0.10, 1.0), 0 as 0: a noisy ratio shows no more than it knows. */
export function twoSignificantDigits(value: number): string {
  return value === 0 || !Number.isFinite(value) ? formatNumber(value) : value.toPrecision(2);
}

function percent(part: number, whole: number): string {
  return whole > 0 ? `${Math.round((100 * part) / whole)} %` : '-';
}

/** The block as text: a few short lines. */
export function budgetSummaryText(summary: BudgetSummary): string {
  const { planned, done, session } = summary;
  const bound = planned.limit ? 'at most ' : '';
  const lines = [
    `work: ${done.jobs} of ${bound}${planned.jobs} jobs planned, ${done.epochs} of ${bound}${planned.epochs} epochs (${percent(done.epochs, planned.epochs)}), ${done.trials} of ${planned.trials} configurations`,
  ];
  if (session) {
    lines.push(
      `time: ${formatDuration(session.wallSeconds)} on ${session.threads} thread${session.threads === 1 ? '' : 's'}: ${formatDuration(session.trainingSeconds)} training, ${formatDuration(session.waitingSeconds)} waiting (thread utilisation ${twoSignificantDigits(session.utilisation)})`,
    );
  }
  if (summary.repeats) {
    const r = summary.repeats;
    lines.push(`repeat runs: ${r.done.jobs} of ${r.planned.jobs} jobs, ${r.done.epochs} of at most ${r.planned.epochs} epochs, ${formatDuration(r.workerSeconds)} of training time (included above)`);
  }
  if (summary.rungs.length > 0) lines.push(`epochs by rung: ${summary.rungs.map((r) => `rung ${r.rung} ${r.epochs} (${Math.round(100 * r.share)} %)`).join(', ')}`);
  for (const reason of summary.lowUtilisation) lines.push(`utilisation is low: ${reason}`);
  return lines.join('\n');
}
