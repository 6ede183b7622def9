import type { StudyEvent, StudyObserver } from '../runner/events.js';
import type { Job } from '../samplers/sampler.js';
import type { TrialRecord } from '../core/trial.js';
import type { Goal } from '../core/configuration.js';
import type { PlannedWork } from './budget.js';
import { formatDuration, formatNumber } from './format.js';
import { fitLine, type LineSegment } from './progress-line.js';
import { scoreText } from './ranking-table.js';
import { flagsText } from '../core/health.js';
import { plain, type Painter } from './style.js';
import { TimeLeftEstimator } from './time-left.js';
import type { StudyDocument } from '../store/types.js';

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
  const flags = trial.flags && trial.flags.length > 0 ? ` [${flagsText(trial.flags)}]` : '';
  return `trial ${trial.id}${rung} ${ended}: ${metric} ${formatNumber(value)}${best}${flags}${where ? ` on ${where}` : ''}`;
}

function leaderText(leader: TrialRecord | undefined, metric: string): LineSegment {
  if (!leader) return { text: 'leader - (none finished)', short: 'leader -', shortCost: 6, dropCost: 10 };
  const value = formatNumber(leader.score);
  const spread = leader.scoreStandardError !== undefined && leader.score !== null ? ` ± ${formatNumber(leader.scoreStandardError)}` : '';
  // The leader is the best finished trial (core/ranking.ts `leaderOf`): it never gets worse as work is added.
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

/** What the display knows of the study, from the runner's events only. */
interface ProgressState {
  /** Jobs ended: the runner's count at the job's end (never less than one more per announced job); never goes back. */
  jobs: number;
  /**
   * Epochs trained: the runner's count when the study started, then one per epoch event, and never
   * less than the runner's count at a job's end (an epoch report can arrive after its job settled, or
   * not at all); it never goes back.
   */
  trained: number;
  plannedEpochs: number;
  started: number;
  leader: TrialRecord | undefined;
  /** Trials whose latest result carries a health flag. */
  flagged: Set<number>;
  lastJob: Job | undefined;
  running: Map<number, Job>;
  /** Jobs already told, by trial and rung (a batch may hold one twice). */
  told: Set<string>;
  timeLeft: TimeLeftEstimator;
}

/** How the display writes: to a redrawn terminal line or one line per ended job. */
interface Display {
  options: ProgressOptions;
  state: ProgressState;
  now: () => number;
  redrawn: boolean;
  draw: (force: boolean) => void;
  clear: () => void;
}

/** The words of a study's end state. */
export function stateText(state: StudyDocument['state']): string {
  return state === 'time-limit' ? 'stopped by its time limit' : state;
}

function counterText(plan: PlannedWork, state: Pick<ProgressState, 'jobs' | 'trained' | 'plannedEpochs'>): string {
  return `${state.jobs}/${plan.jobs} jobs, ${state.trained}/${state.plannedEpochs} epochs`;
}

/** The live line's pieces, fitted to the width. */
function liveLine(display: Display): string {
  const { state, options, now } = display;
  const { plan, paint = plain } = options;
  const left = state.timeLeft.secondsLeft(state.plannedEpochs - state.trained, now());
  const elapsed = formatDuration((now() - state.started) / 1000);
  const segments: (LineSegment | undefined)[] = [
    { text: `${state.jobs}/${plan.jobs} jobs`, dropCost: 11 },
    { text: `${state.trained}/${state.plannedEpochs} epochs`, short: `${state.trained}/${state.plannedEpochs} ep`, shortCost: 4.5, dropCost: 8 },
    rungText(plan, state.running.values(), state.lastJob),
    leaderText(state.leader, options.goal.metric),
    state.flagged.size > 0 ? { text: `${state.flagged.size} flagged`, short: `!${state.flagged.size}`, shortCost: 3, dropCost: 6 } : undefined,
    left === undefined ? undefined : { text: `${formatDuration(left)} left`, short: `~${formatDuration(left)}`, shortCost: 5, dropCost: 7 },
    { text: `${elapsed} elapsed`, short: elapsed, shortCost: 1, dropCost: 2 },
  ];
  const text = fitLine(segments.filter((s): s is LineSegment => s !== undefined), liveColumns(options));
  return state.leader ? text.replace(/(leader )?#\d+ (\S+ )?\S+/, (match) => paint('leader', match)) : text;
}

function liveColumns(options: ProgressOptions): number {
  return Math.max(MIN_COLUMNS, (options.columns ?? (options.stream as Partial<NodeJS.WriteStream>).columns ?? 80) - 1);
}

/** The piped line of an ended job: the counters at its end, what came of it, the leader. */
function pipedLine(display: Display, event: TrialFinished): string {
  const { state, options } = display;
  const metric = options.goal.metric;
  const leader = state.leader;
  const lead = leader ? `; leader trial ${leader.id} ${metric} ${scoreText(leader.score, leader.scoreStandardError)} after ${leader.epochsTrained} epoch${leader.epochsTrained === 1 ? '' : 's'}` : '';
  return `[${counterText(options.plan, state)}] ${describeJob(event, metric, options.plan.rungs > 1)}${lead}\n`;
}

function onStudyStarted(display: Display, event: Extract<StudyEvent, { type: 'study-started' }>): void {
  const { state, options, now } = display;
  const { plan } = options;
  state.started = now();
  state.plannedEpochs = event.plannedEpochs;
  state.jobs = event.progress.jobsDone;
  state.trained = event.progress.epochsDone;
  state.timeLeft = new TimeLeftEstimator(event.threads, event.shape);
  const threads = `${event.threads} thread${event.threads === 1 ? '' : 's'}`;
  const planned = `${plan.limit ? 'at most ' : ''}${plan.jobs} jobs, ${state.plannedEpochs} epochs planned`;
  options.stream.write(`${event.resumed ? 'resuming' : 'running'} study ${event.name} on ${threads}: ${planned}; study file in ${event.dir}\n`);
  display.draw(true);
}

function onJobStarted(display: Display, job: Job): void {
  display.state.running.set(job.trialId, job);
  display.state.lastJob = job;
  display.state.timeLeft.started(job, display.now());
  display.draw(false);
}

function onEpoch(display: Display, trialId: number, seconds: number): void {
  // A report that arrives after its job was announced is already in the runner's count at the job's end.
  if (!display.state.running.has(trialId)) return;
  display.state.trained += 1;
  display.state.timeLeft.epoch(trialId, seconds);
  display.draw(false);
}

function onTrialFinished(display: Display, event: TrialFinished): void {
  const { state } = display;
  const { job } = event;
  const key = `${job.trialId}:${job.rung}`;
  if (state.told.has(key)) return;
  state.told.add(key);
  state.jobs = Math.max(state.jobs + 1, event.progress.jobsDone);
  state.trained = Math.max(state.trained, event.progress.epochsDone);
  const current = state.running.get(job.trialId);
  // The trial may already train its next rung: only the job that ended leaves.
  if (current && current.rung === job.rung && current.toEpoch === job.toEpoch) state.running.delete(job.trialId);
  state.timeLeft.jobEnded(job);
  // The leader is the runner's rank 1 (the study's one ranking); the display never ranks itself.
  state.leader = event.best;
  if ((event.trial.flags?.length ?? 0) > 0) state.flagged.add(event.trial.id);
  else state.flagged.delete(event.trial.id);
  if (display.redrawn) display.draw(true);
  else display.options.stream.write(pipedLine(display, event));
}

type RepeatFinished = Extract<StudyEvent, { type: 'repeat-finished' }>;

/** What came of a repeat run after the search. */
export function describeRepeat(run: RepeatFinished['run'], metric: string): string {
  const what = `repeat ${run.index} of trial ${run.trialId}`;
  if (run.status === 'failed') return `${what} failed${run.error ? ` (${run.error})` : ''}`;
  if (run.status === 'diverged') return `${what} diverged`;
  return `${what} done at epoch ${run.epochs}: ${metric} ${formatNumber(run.score)}`;
}

function onRepeatFinished(display: Display, event: RepeatFinished): void {
  const { state, options } = display;
  state.jobs = Math.max(state.jobs + 1, event.progress.jobsDone);
  state.trained = Math.max(state.trained, event.progress.epochsDone);
  if (display.redrawn) display.draw(true);
  else options.stream.write(`[${counterText(options.plan, state)}] ${describeRepeat(event.run, options.goal.metric)}\n`);
}

/** A line said between redraws of the live line. */
function say(display: Display, text: string): void {
  display.clear();
  display.options.stream.write(text);
  display.draw(true);
}

function handle(display: Display, event: StudyEvent): void {
  const { state, options } = display;
  switch (event.type) {
    case 'study-started':
      return onStudyStarted(display, event);
    case 'job-started':
      return onJobStarted(display, event.job);
    case 'epoch':
      return onEpoch(display, event.report.trialId, event.report.seconds);
    case 'trial-finished':
      return onTrialFinished(display, event);
    case 'repeat-finished':
      return onRepeatFinished(display, event);
    case 'note':
      return say(display, `note: ${event.message}\n`);
    case 'stopping':
      return say(display, `stopping (${event.reason}): no new jobs start; waiting for ${state.running.size} job${state.running.size === 1 ? '' : 's'} in training\n`);
    case 'study-finished':
      display.clear();
      options.stream.write(`study ${stateText(event.doc.state)}: ${counterText(options.plan, state)} in ${formatDuration((display.now() - state.started) / 1000)}\n`);
      return;
    default:
      return;
  }
}

/** The display's drawing of the live line, at most every {@link REDRAW_MS} unless forced. */
function display(options: ProgressOptions, state: ProgressState): Display {
  const now = options.now ?? Date.now;
  const redrawn = options.live ?? (options.stream as Partial<NodeJS.WriteStream>).isTTY === true;
  let lastDraw = 0;
  let drawn = false;
  const view: Display = {
    options,
    state,
    now,
    redrawn,
    draw: (force) => {
      if (!redrawn) return;
      const t = now();
      if (!force && t - lastDraw < REDRAW_MS) return;
      lastDraw = t;
      options.stream.write(`\r${liveLine(view)}\x1b[K`);
      drawn = true;
    },
    clear: () => {
      if (redrawn && drawn) options.stream.write('\r\x1b[K');
      drawn = false;
    },
  };
  return view;
}

/**
 * A study observer that shows where the study stands: jobs and epochs done of the plan (counted as
 * they end, never going back), the rung (and bracket) in training, the leader of the study's ranking
 * (as the runner's events carry it), the elapsed time and, once this study's measured pace gives a
 * basis, the time left. On a terminal it redraws one line that fits the width; elsewhere (a pipe, a
 * file) it writes one line per ended job.
 */
export function progressObserver(options: ProgressOptions): StudyObserver {
  const state: ProgressState = {
    jobs: 0,
    trained: 0,
    plannedEpochs: options.plan.epochs,
    started: (options.now ?? Date.now)(),
    leader: undefined,
    flagged: new Set(),
    lastJob: undefined,
    running: new Map(),
    told: new Set(),
    timeLeft: new TimeLeftEstimator(1),
  };
  const view = display(options, state);
  return (event) => handle(view, event);
}
