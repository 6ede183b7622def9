import { describe, expect, it } from 'vitest';
import { plannedWork } from '../src/report/budget.js';
import { progressObserver } from '../src/report/progress.js';
import { fitLine } from '../src/report/progress-line.js';
import { painterFor } from '../src/report/style.js';
import type { StudyEvent, StudyProgress } from '../src/runner/events.js';
import type { Job } from '../src/samplers/sampler.js';
import type { StudyDocument } from '../src/store/types.js';
import type { TrialRecord } from '../src/core/trial.js';
import type { Goal, TrialConfiguration } from '../src/core/configuration.js';
import { trialRecord } from './helpers/trials.js';
import { sink } from './helpers/sink.js';

const goal: Goal = { metric: 'accuracy', better: 'higher' };
const params = { depth: 1, width: 8, activation: 'relu', learningRate: 0.01, batchSize: 16, optimizer: 'adam', l2: 0, dropout: 0 } as TrialConfiguration;


function job(trialId: number, rung: number, fromEpoch: number, toEpoch: number, bracket = 0): Job {
  return { trialId, configuration: params, rung, bracket, fromEpoch, toEpoch };
}

/** A trial waiting (or in `status`) after the rungs whose scores are given. */
function record(id: number, rungScores: (number | null)[], status: TrialRecord['status'] = 'waiting'): TrialRecord {
  // Rungs of the halving plan below end at 1, 3 and 9 epochs.
  return trialRecord(id, rungScores.at(-1) ?? null, { status, rung: rungScores.length - 1, rungScores, epochsTrained: [1, 3, 9][rungScores.length - 1]! });
}

const halving = plannedWork({ budget: { trials: 9, maxEpochs: 9 }, sampler: { kind: 'successive-halving', seed: 1, eta: 3, minEpochs: 1 } } as never);

/** The runner's own counts, as its events carry them. */
function progressOf(jobsDone: number, epochsDone: number): StudyProgress {
  return { jobsDone, epochsDone, endedTrials: 0, plannedTrials: 9, plannedEpochs: 21 };
}

/** What the runner counted so far in a test: each played job adds one job and its epochs. */
const counted = { jobs: 0, epochs: 0 };

/** Plays a job through: started, its epochs, finished (with the leader the runner's ranking named). */
function playJob(observe: (event: StudyEvent) => void, j: Job, trial: TrialRecord, best: TrialRecord, clock?: { t: number }): void {
  observe({ type: 'job-started', job: j, fromCheckpoint: j.fromEpoch > 0 });
  for (let e = j.fromEpoch + 1; e <= j.toEpoch; e++) {
    if (clock) clock.t += 1000;
    observe({ type: 'epoch', report: { trialId: j.trialId, epoch: e, trainLoss: 1, validationLoss: 1, metrics: {}, seconds: 1 } });
  }
  counted.jobs += 1;
  counted.epochs += j.toEpoch - j.fromEpoch;
  observe({ type: 'trial-finished', trial, job: j, best, finishedTrials: 0, progress: progressOf(counted.jobs, counted.epochs) });
}

function started(): StudyEvent {
  counted.jobs = 0;
  counted.epochs = 0;
  return { type: 'study-started', name: 'pumps', dir: '/runs/pumps', threads: 2, plannedTrials: 9, plannedEpochs: 21, resumed: false, progress: progressOf(0, 0) };
}

describe('planned work of each sampler', () => {
  it('Hyperband with R = 81, eta = 3: 206 jobs (one per configuration and round) and 1581 epochs when promoted trials continue', () => {
    // Source: Li et al., "Hyperband", JMLR 18(185), 2018, Algorithm 1: the (n_i, r_i) of brackets s = 4 .. 0
    // (81,1)(27,3)(9,9)(3,27)(1,81); (34,3)(11,9)(3,27)(1,81); (15,9)(5,27)(1,81); (8,27)(2,81); (5,81).
    // Jobs: 121 + 49 + 21 + 10 + 5. Epochs, each round adding r_i - r_(i-1): 297 + 276 + 279 + 324 + 405 (derived).
    // Configurations: 81 + 34 + 15 + 8 + 5 = 143, so budget.trials 143 is one whole pass.
    const plan = plannedWork({ budget: { trials: 143, maxEpochs: 81 }, sampler: { kind: 'hyperband', seed: 1, eta: 3, minEpochs: 1 } } as never);
    // Trained to R = 81 (the last round of each bracket): 1 + 1 + 1 + 2 + 5.
    expect(plan).toEqual({ trials: 143, jobs: 206, epochs: 1581, rungs: 5, brackets: 5, limit: false, finishing: 10 });
    // With repeat runs (top 5, 3 seeds): 15 more jobs of at most 81 epochs.
    const repeated = plannedWork({ budget: { trials: 143, maxEpochs: 81 }, sampler: { kind: 'hyperband', seed: 1, eta: 3, minEpochs: 1 }, repeats: { top: 5, seeds: 3 } } as never);
    expect(repeated).toMatchObject({ jobs: 206 + 15, epochs: 1581 + 15 * 81, repeats: { configurations: 5, seeds: 3, jobs: 15, epochs: 1215 } });
  });

  it('successive halving of 9 configurations, eta 3, 1 to 9 epochs: 9 + 3 + 1 jobs, 9 + 3*2 + 1*6 epochs (asynchronous halving the same, as a hard limit); random search: trials x maxEpochs', () => {
    // Source: Jamieson, Talwalkar, AISTATS 2016, as restated in Li et al., JMLR 2018 (keep floor(n / eta) per rung).
    expect(halving).toEqual({ trials: 9, jobs: 13, epochs: 21, rungs: 3, brackets: 1, limit: false, finishing: 1 });
    expect(plannedWork({ budget: { trials: 4, maxEpochs: 5 }, sampler: { kind: 'random', seed: 1 } } as never)).toMatchObject({ jobs: 4, epochs: 20 });
    const tpeHyperband = plannedWork({ budget: { trials: 143, maxEpochs: 81 }, sampler: { kind: 'tpe-hyperband', seed: 1, eta: 3, minEpochs: 1, iterations: 1 } } as never);
    expect(tpeHyperband).toMatchObject({ jobs: 206, rungs: 5, brackets: 5 });
    expect(plannedWork({ budget: { trials: 9, maxEpochs: 9 }, sampler: { kind: 'async-halving', seed: 1, eta: 3, minEpochs: 1 } } as never)).toMatchObject({ jobs: 13, epochs: 21, limit: true });
  });
});

describe('progress written to a pipe', () => {
  it('writes one line per ended job with jobs and epochs of the plan, never repeating a job, telling each job from its own rung', () => {
    const out = sink();
    const observe = progressObserver({ goal, plan: halving, stream: out.stream, live: false });
    observe(started());
    const t0 = record(0, [0.5]);
    const t1 = record(1, [0.7]);
    playJob(observe, job(0, 0, 0, 1), t0, t0);
    playJob(observe, job(1, 0, 0, 1), t1, t1);
    // The same announcement again (a batch holding it twice) is not told twice.
    observe({ type: 'trial-finished', trial: t1, job: job(1, 0, 0, 1), best: t1, finishedTrials: 0, progress: progressOf(2, 2) });
    // Trial 1 promoted: by the time rung 1 is announced its record already says rung 1.
    const promoted = record(1, [0.7, 0.8], 'trained');
    playJob(observe, job(1, 1, 1, 3), promoted, promoted);
    const lines = out.text().trim().split('\n');
    expect(lines[0]).toBe('running study pumps on 2 threads: 13 jobs, 21 epochs planned; study file in /runs/pumps');
    expect(lines.slice(1)).toEqual([
      '[1/13 jobs, 1/21 epochs] trial 0 rung 0 done at epoch 1: accuracy 0.5; leader trial 0 accuracy 0.5 after 1 epoch',
      '[2/13 jobs, 2/21 epochs] trial 1 rung 0 done at epoch 1: accuracy 0.7; leader trial 1 accuracy 0.7 after 1 epoch',
      '[3/13 jobs, 4/21 epochs] trial 1 rung 1 done at epoch 3: accuracy 0.8; leader trial 1 accuracy 0.8 after 3 epochs',
    ]);
  });

  it('names the leader the runner sent, even when another trial has a better objective (the ranking orders by epochs first)', () => {
    const out = sink();
    const observe = progressObserver({ goal, plan: halving, stream: out.stream, live: false });
    observe(started());
    const low = record(3, [0.9, 0.6]);
    const high = record(4, [0.95]);
    playJob(observe, job(4, 0, 0, 1), high, low);
    expect(out.text()).toContain('leader trial 3 accuracy 0.6 after 3 epochs');
  });

  it('marks a diverged job with its epoch and reason', () => {
    const out = sink();
    const observe = progressObserver({ goal, plan: halving, stream: out.stream, live: false });
    observe(started());
    const diverged = { ...record(2, [null], 'diverged'), divergence: { epoch: 1, reason: 'loss is NaN' } };
    playJob(observe, job(2, 0, 0, 1), diverged, record(0, [0.5]));
    expect(out.text()).toContain('trial 2 rung 0 diverged at epoch 1 (loss is NaN)');
  });
});

describe('progress on a terminal', () => {
  function liveLines(columns: number): { lines: string[]; observe: (e: StudyEvent) => void; clock: { t: number } } {
    const out = sink();
    const clock = { t: 0 };
    const observe = progressObserver({ goal, plan: halving, stream: out.stream, live: true, columns, now: () => clock.t });
    const result = {
      observe,
      clock,
      get lines() {
        return out.text().split('\r').map((l) => l.replace(/\u001b\[K/g, '')).filter((l) => l.length > 0 && !l.includes('\n'));
      },
    };
    return result;
  }

  it('shows no time left before a job has ended, then an estimate; every line fits a 60-column terminal', () => {
    const view = liveLines(60);
    view.observe(started());
    view.observe({ type: 'job-started', job: job(0, 0, 0, 1), fromCheckpoint: false });
    view.clock.t += 5000;
    view.observe({ type: 'epoch', report: { trialId: 0, epoch: 1, trainLoss: 1, validationLoss: 1, metrics: {}, seconds: 1 } });
    expect(view.lines.at(-1)).not.toMatch(/left|~/);
    const t0 = record(0, [0.123456]);
    counted.jobs = 1;
    counted.epochs = 1;
    view.observe({ type: 'trial-finished', trial: t0, job: job(0, 0, 0, 1), best: t0, finishedTrials: 0, progress: progressOf(1, 1) });
    // The epoch took 1 worker-second (the other 4 s before it were start-up, not training); 20 epochs to
    // go at that pace on the 1 worker the study kept busy: 20 s.
    expect(view.lines.at(-1)).toMatch(/00:20 left|~00:20/);
    for (let id = 1; id < 9; id++) playJob(view.observe, job(id, 0, 0, 1), record(id, [0.5]), t0, view.clock);
    playJob(view.observe, job(0, 1, 1, 3), record(0, [0.1234, 0.98765]), record(0, [0.1234, 0.98765]), view.clock);
    for (const line of view.lines) expect(line.length, line).toBeLessThanOrEqual(59);
    const epochCounts = view.lines.map((line) => Number(/ (\d+)\/21 ep/.exec(line)?.[1]));
    expect(epochCounts.every((n, i) => i === 0 || n >= epochCounts[i - 1]!), epochCounts.join(' ')).toBe(true);
    expect(view.lines.at(-1)).toMatch(/^10\/13 jobs {2}1[0-9]\/21 ep(ochs)? {2}(rung|r)/);
    expect(view.lines.at(-1)).toContain('0.9877');
  });

  it('clears its line before the study ends with a summary line', () => {
    const out = sink();
    const observe = progressObserver({ goal, plan: halving, stream: out.stream, live: true, columns: 60 });
    observe(started());
    observe({ type: 'study-finished', doc: { state: 'finished' } as StudyDocument, ranking: [] });
    expect(out.text()).toMatch(/\r\u001b\[Kstudy finished: 0\/13 jobs, 0\/21 epochs in 00:00\n$/);
  });
});

describe('fitting the line', () => {
  it('gives way cheapest step first and keeps the costliest piece', () => {
    const segments = [
      { text: 'AAAA', dropCost: 10 },
      { text: 'BBBBBB', short: 'BB', shortCost: 2, dropCost: 5 },
      { text: 'CCCC', dropCost: 1 },
    ];
    expect(fitLine(segments, 100)).toBe('AAAA  BBBBBB  CCCC');
    expect(fitLine(segments, 14)).toBe('AAAA  BBBBBB');
    expect(fitLine(segments, 8)).toBe('AAAA  BB');
    expect(fitLine(segments, 3)).toBe('AAA');
  });
});

describe('colour', () => {
  const terminal = { isTTY: true, hasColors: () => true } as unknown as NodeJS.WritableStream;
  it('colours on a terminal, never under NO_COLOR or into a pipe', () => {
    expect(painterFor(terminal, {})('leader', 'x')).not.toBe('x');
    expect(painterFor(terminal, { NO_COLOR: '1' })('leader', 'x')).toBe('x');
    expect(painterFor(sink().stream, {})('leader', 'x')).toBe('x');
  });
});
