import type { StudyEvent, StudyObserver } from '../runner/events.js';
import type { Job } from '../samplers/sampler.js';
import type { TrialRecord } from '../core/trial.js';
import type { Goal } from '../core/configuration.js';
import type { PlannedWork } from './budget.js';
import { formatDuration, formatNumber } from './format.js';
import { fitLine, type LineSegment } from './progress-line.js';
import { scoreText } from './ranking-table.js';
import { plain, type Painter } from './style.js';

/** Redraw the live line at most this often (epoch events can come every millisecond). */
const REDRAW_MS = 100;
/** The live line never gets narrower than this, even on a narrower terminal. */
const MIN_COLUMNS = 40;

export interface ProgressOptions {
  goal: Goal;
  /** The sampler's plan: the counters show work done of this. */
  plan: PlannedWork;
  /** Where to write (the CLI passes stderr). */
  stream: NodeJS.WritableStream;
  /** A redrawn line on a terminal, else one line per ended job. @default whether `stream` is a terminal */
  live?: boolean;
  /** Width of the live line. @default the terminal's columns, else 80 */
  columns?: number;
  paint?: Painter;
  /** Milliseconds clock. @default Date.now */
  now?: () => number;
}

type TrialFinished = Extract<StudyEvent, { type: 'trial-finished' }>;

/** What came of one job, told from the job itself (the trial record may already have moved on). */
export function describeJob(event: Pick<TrialFinished, 'trial' | 'job'>, metric: string, withRung = true): string {
  const { trial, job } = event;
  const rung = withRung ? ` rung ${job.rung}` : '';
  const endedHere = trial.rung === job.rung && (trial.status === 'diverged' || trial.status === 'failed' || trial.status === 'timed-out');
  if (endedHere) {
    const why = trial.divergence ? ` at epoch ${trial.divergence.epoch} (${trial.divergence.reason})` : trial.error ? ` (${trial.error})` : '';
    return `trial ${trial.id}${rung} ${trial.status}${why}`;
  }
  const value = trial.rungScores[job.rung];
  const where = trial.jobs.find((j) => j.rung === job.rung && j.toEpoch === job.toEpoch)?.ranOn;
  // Early stopping: the epoch the score is from, and where the rule ended the trial.
  const stoppedHere = trial.stoppedAtEpoch !== undefined && trial.rung === job.rung;
  const diverged = stoppedHere && trial.divergedAfterBest ? ` (${trial.divergedAfterBest.reason})` : '';
  const ended = stoppedHere ? `stopped early after epoch ${trial.stoppedAtEpoch}${diverged}` : `done at epoch ${job.toEpoch}`;
  const best = trial.bestEpoch !== undefined ? ` (best epoch ${trial.bestEpoch})` : '';
  return `trial ${trial.id}${rung} ${ended}: ${metric} ${formatNumber(value)}${best}${where ? ` on ${where}` : ''}`;
}

function leaderText(leader: TrialRecord | undefined, metric: string): LineSegment {
  if (!leader) return { text: 'leader -', dropCost: 10 };
  const value = formatNumber(leader.score);
  const spread = leader.scoreStandardError !== undefined && leader.score !== null ? ` ± ${formatNumber(leader.scoreStandardError)}` : '';
  // The epochs say why a lower value can lead: the one ordering puts longer-trained trials first.
  return { text: `leader #${leader.id} ${metric} ${value}${spread} @${leader.epochsTrained}ep`, short: `#${leader.id} ${value}`, shortCost: 6, dropCost: 10 };
}

/** `rung 1/2` (the rung being trained, of the top rung), with the bracket for Hyperband, a span under asynchronous halving. */
function rungText(plan: PlannedWork, running: Iterable<Job>, last: Job | undefined): LineSegment | undefined {
  if (plan.rungs <= 1) return undefined;
  const jobs = [...running];
  if (jobs.length === 0 && last) jobs.push(last);
  if (jobs.length === 0) return undefined;
  const rungs = jobs.map((job) => job.rung);
  const low = Math.min(...rungs);
  const high = Math.max(...rungs);
  const top = plan.rungs - 1;
  const rung = low === high ? `${high}/${top}` : `${low}-${high}/${top}`;
  if (plan.brackets <= 1) return { text: `rung ${rung}`, short: `r${rung}`, shortCost: 3, dropCost: 8.5 };
  const bracket = Math.max(...jobs.map((job) => job.bracket));
  return { text: `bracket ${bracket}/${plan.brackets - 1} rung ${rung}`, short: `b${bracket} r${rung}`, shortCost: 3, dropCost: 8.5 };
}

/**
 * A study observer that shows where the study stands: jobs and epochs done of the plan, the rung (and
 * bracket) in training, the leader of the study's ranking (as the runner's events carry it), the
 * elapsed time and, once it can be estimated, the time left. On a terminal it redraws one line that
 * fits the width; elsewhere (a pipe, a file) it writes one line per ended job.
 */
export function progressObserver(options: ProgressOptions): StudyObserver {
  const { goal, plan, stream } = options;
  const metric = goal.metric;
  const now = options.now ?? Date.now;
  const paint = options.paint ?? plain;
  const redrawn = options.live ?? (stream as Partial<NodeJS.WriteStream>).isTTY === true;
  const columns = (): number => Math.max(MIN_COLUMNS, (options.columns ?? (stream as Partial<NodeJS.WriteStream>).columns ?? 80) - 1);
  const approx = '';
  const planned = (): string => (plan.jobs === undefined ? '' : `/${plan.jobs}`);
  let plannedEpochs = plan.epochs;
  /** Jobs ended: the runner's count when the study started, then one per announced job (so each piped line has its own). */
  let jobs = 0;
  /**
   * Epochs trained: the runner's count when the study started, then one per epoch event, and never
   * less than the runner's count at a job's end (an epoch report can arrive after its job settled, or
   * not at all); it never goes back.
   */
  let trained = 0;
  let epochsAtStart = 0;
  let started = now();
  let firstEnded = false;
  let leader: TrialRecord | undefined;
  let lastJob: Job | undefined;
  let lastDraw = 0;
  let drawn = false;
  const running = new Map<number, Job>();
  const told = new Set<string>();

  const counters = (done: { jobsDone: number; epochsDone: number }): string =>
    `${done.jobsDone}${planned()} jobs, ${done.epochsDone}/${approx}${plannedEpochs} epochs`;
  const secondsLeft = (): number | undefined => {
    const sinceStart = trained - epochsAtStart;
    const elapsed = (now() - started) / 1000;
    if (!firstEnded || sinceStart <= 0 || elapsed <= 0 || trained >= plannedEpochs) return undefined;
    return ((plannedEpochs - trained) * elapsed) / sinceStart;
  };

  const line = (): string => {
    const left = secondsLeft();
    const elapsed = formatDuration((now() - started) / 1000);
    const segments: (LineSegment | undefined)[] = [
      { text: `${jobs}${planned()} jobs`, dropCost: 11 },
      { text: `${trained}/${approx}${plannedEpochs} epochs`, short: `${trained}/${approx}${plannedEpochs} ep`, shortCost: 4.5, dropCost: 8 },
      rungText(plan, running.values(), lastJob),
      leaderText(leader, metric),
      left === undefined ? undefined : { text: `${formatDuration(left)} left`, short: `~${formatDuration(left)}`, shortCost: 5, dropCost: 7 },
      { text: `${elapsed} elapsed`, short: elapsed, shortCost: 1, dropCost: 2 },
    ];
    const text = fitLine(segments.filter((s): s is LineSegment => s !== undefined), columns());
    return leader ? text.replace(/(leader )?#\d+ (\S+ )?\S+/, (match) => paint('leader', match)) : text;
  };

  const draw = (force: boolean): void => {
    if (!redrawn) return;
    const t = now();
    if (!force && t - lastDraw < REDRAW_MS) return;
    lastDraw = t;
    stream.write(`\r${line()}\x1b[K`);
    drawn = true;
  };
  const clear = (): void => {
    if (redrawn && drawn) stream.write('\r\x1b[K');
    drawn = false;
  };

  return (event) => {
    switch (event.type) {
      case 'study-started':
        started = now();
        plannedEpochs = event.plannedEpochs;
        jobs = event.progress.jobsDone;
        trained = event.progress.epochsDone;
        epochsAtStart = trained;
        stream.write(
          `${event.resumed ? 'resuming' : 'running'} study ${event.name} on ${event.workers} worker${event.workers === 1 ? '' : 's'}: ` +
            `${plan.limit ? 'at most ' : ''}${plan.jobs === undefined ? '' : `${plan.jobs} jobs, `}${plannedEpochs} epochs planned; study file in ${event.dir}\n`,
        );
        draw(true);
        break;
      case 'job-started':
        running.set(event.job.trialId, event.job);
        lastJob = event.job;
        draw(false);
        break;
      case 'epoch':
        trained += 1;
        draw(false);
        break;
      case 'trial-finished': {
        const { job } = event;
        const key = `${job.trialId}:${job.rung}`;
        if (told.has(key)) break;
        told.add(key);
        jobs += 1;
        trained = Math.max(trained, event.progress.epochsDone);
        firstEnded = true;
        const current = running.get(job.trialId);
        // The trial may already train its next rung: only the job that ended leaves.
        if (current && current.rung === job.rung && current.toEpoch === job.toEpoch) {
          running.delete(job.trialId);
        }
        leader = event.best;
        if (redrawn) draw(true);
        else {
          const lead = leader ? `; leader trial ${leader.id} ${metric} ${scoreText(leader.score, leader.scoreStandardError)} after ${leader.epochsTrained} epoch${leader.epochsTrained === 1 ? '' : 's'}` : '';
          stream.write(`[${counters({ jobsDone: jobs, epochsDone: trained })}] ${describeJob(event, metric, plan.rungs > 1)}${lead}\n`);
        }
        break;
      }
      case 'note':
        clear();
        stream.write(`note: ${event.message}\n`);
        draw(true);
        break;
      case 'stopping':
        clear();
        stream.write(`stopping (${event.reason}): no new jobs start; waiting for ${running.size} job${running.size === 1 ? "" : "s"} in training\n`);
        draw(true);
        break;
      case 'study-finished':
        clear();
        stream.write(`study ${event.doc.state}: ${counters({ jobsDone: jobs, epochsDone: trained })} in ${formatDuration((now() - started) / 1000)}\n`);
        break;
      default:
        break;
    }
  };
}
