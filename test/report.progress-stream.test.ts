/**
 * The progress display driven by a recorded event stream of a successive-halving study (9
 * configurations, 1 to 9 epochs, eta 3): a failed trial, a trial early stopping ended, a leader change
 * to a trial with more epochs, and an epoch report that arrives after its job was announced. On the
 * terminal and in a pipe, the job and epoch counters never go back and never fall behind the jobs
 * ended, and the leader shown is always the one the runner's ranking named, so it never gets worse.
 */
import { describe, expect, it } from 'vitest';
import { plannedWork } from '../src/report/budget.js';
import { progressObserver } from '../src/report/progress.js';
import type { StudyEvent } from '../src/runner/events.js';
import type { Job } from '../src/samplers/sampler.js';
import type { StudyDocument } from '../src/store/types.js';
import type { TrialRecord } from '../src/core/trial.js';
import type { Goal, TrialConfiguration } from '../src/core/configuration.js';
import { trialRecord } from './helpers/trials.js';
import { sink } from './helpers/sink.js';

const goal: Goal = { metric: 'accuracy', better: 'higher' };
const plan = plannedWork({ budget: { trials: 9, maxEpochs: 9 }, sampler: { kind: 'successive-halving', seed: 1, eta: 3, minEpochs: 1 } } as never);
const configuration = (width: number) => ({ depth: 1, width, activation: 'relu', learningRate: 0.01, batchSize: 16, optimizer: 'adam', l2: 0, dropout: 0 }) as TrialConfiguration;

/** The recorded stream, with the clock (milliseconds) each event came at, and the leader the runner named at each job's end. */
function recordedStream(): { at: number; event: StudyEvent }[] {
  const events: { at: number; event: StudyEvent }[] = [];
  let t = 0;
  let jobs = 0;
  let epochs = 0;
  const push = (event: StudyEvent) => events.push({ at: t, event });
  const scores = [0.61, 0.72, 0.55, 0.8, 0.5, null, 0.66, 0.7, 0.58];
  const records = new Map<number, TrialRecord>();
  const play = (trialId: number, rung: number, fromEpoch: number, toEpoch: number, score: number | null, best: () => TrialRecord | undefined, extra: Partial<TrialRecord> = {}) => {
    const job: Job = { trialId, configuration: configuration(8 + trialId), rung, bracket: 0, fromEpoch, toEpoch };
    push({ type: 'job-started', job, fromCheckpoint: fromEpoch > 0 });
    const trained = score === null ? fromEpoch : toEpoch;
    for (let epoch = fromEpoch + 1; epoch <= trained; epoch++) {
      t += 700;
      push({ type: 'epoch', report: { trialId, epoch, trainLoss: 1, validationLoss: 1, metrics: {}, seconds: 0.7 } });
    }
    jobs += 1;
    epochs += trained - fromEpoch;
    const previous = records.get(trialId);
    const rungScores = [...(previous?.rungScores ?? []), score];
    const record = trialRecord(trialId, score, { status: score === null ? 'failed' : 'waiting', rung, rungScores, epochsTrained: trained, ...extra });
    records.set(trialId, record);
    push({ type: 'trial-finished', trial: record, job, best: best(), finishedTrials: 0, progress: { jobsDone: jobs, epochsDone: epochs, endedTrials: 0, plannedTrials: 9, plannedEpochs: 21 } });
  };
  push({ type: 'study-started', name: 'stream', dir: '/runs/stream', threads: 2, plannedTrials: 9, plannedEpochs: 21, resumed: false, progress: { jobsDone: 0, epochsDone: 0, endedTrials: 0, plannedTrials: 9, plannedEpochs: 21 } });
  // Rung 0: the leader is the best score so far among trials of 1 epoch (trial 5 fails, trial 2 is stopped early).
  let leader: TrialRecord | undefined;
  scores.forEach((score, id) => {
    play(id, 0, 0, 1, score, () => {
      const mine = records.get(id)!;
      if (mine.score !== null && (!leader || mine.score > leader.score!)) leader = mine;
      return leader;
    }, id === 2 ? { stoppedAtEpoch: 1, bestEpoch: 1 } : {});
  });
  // A late epoch report of trial 8's job, after its job was announced.
  push({ type: 'epoch', report: { trialId: 8, epoch: 1, trainLoss: 1, validationLoss: 1, metrics: {}, seconds: 0.7 } });
  // Rung 1: trials 3, 1, 7 to 3 epochs; the ranking puts 3 epochs first, so trial 1 at 0.71 leads after its rung-1 job.
  play(1, 1, 1, 3, 0.71, () => (leader = records.get(1)));
  play(3, 1, 1, 3, 0.82, () => (leader = records.get(3)));
  play(7, 1, 1, 3, 0.69, () => leader);
  // Rung 2: trial 3 to 9 epochs.
  play(3, 2, 3, 9, 0.85, () => (leader = records.get(3)));
  push({ type: 'study-finished', doc: { state: 'finished' } as StudyDocument, ranking: [] });
  return events;
}


function replay(live: boolean): { text: string; bests: (number | undefined)[] } {
  const out = sink();
  const clock = { t: 0 };
  const observe = progressObserver({ goal, plan, stream: out.stream, live, columns: 100, now: () => clock.t });
  const bests: (number | undefined)[] = [];
  for (const { at, event } of recordedStream()) {
    clock.t = at;
    observe(event);
    if (event.type === 'trial-finished') bests.push(event.best?.id);
  }
  return { text: out.text(), bests };
}

const nonDecreasing = (values: number[]): boolean => values.every((v, i) => i === 0 || v >= values[i - 1]!);

describe('the progress display on a recorded event stream', () => {
  it('in a pipe: one line per ended job, the job counter one up each line, epochs never back, the leader the runner named', () => {
    const { text, bests } = replay(false);
    const lines = text.split('\n').filter((line) => line.startsWith('['));
    expect(lines).toHaveLength(13);
    const jobs = lines.map((line) => Number(/^\[(\d+)\/13 jobs/.exec(line)![1]));
    expect(jobs).toEqual(Array.from({ length: 13 }, (_, i) => i + 1));
    const epochs = lines.map((line) => Number(/, (\d+)\/21 epochs\]/.exec(line)![1]));
    expect(nonDecreasing(epochs)).toBe(true);
    // 9 rung-0 jobs of 1 epoch (trial 5 failed before training one), 3 of 2, 1 of 6: 8 + 6 + 6.
    expect(epochs.at(-1)).toBe(20);
    expect(lines.map((line) => Number(/leader trial (\d+)/.exec(line)?.[1]))).toEqual(bests);
    expect(lines[5]).toContain('trial 5 rung 0 failed');
    expect(lines[2]).toContain('trial 2 rung 0 stopped early after epoch 1');
    expect(text).toMatch(/study finished: 13\/13 jobs, 20\/21 epochs/);
  });

  it('on a terminal: every redraw has counters that never go back and a leader that only changes when the runner names another', () => {
    const { text, bests } = replay(true);
    const lines = text.split('\r').map((line) => line.replace(/\u001b\[K/g, '')).filter((line) => /jobs/.test(line) && !line.includes('\n'));
    const jobs = lines.map((line) => Number(/^(\d+)\/13 jobs/.exec(line)![1]));
    const epochs = lines.map((line) => Number(/ (\d+)\/21 epochs/.exec(line)![1]));
    expect(nonDecreasing(jobs)).toBe(true);
    expect(nonDecreasing(epochs)).toBe(true);
    expect(jobs.at(-1)).toBe(13);
    const shown = lines.map((line) => /leader #(\d+)/.exec(line)?.[1]).filter((id): id is string => id !== undefined).map(Number);
    const changes = shown.filter((id, i) => i === 0 || id !== shown[i - 1]);
    const named = bests.filter((id, i) => id !== undefined && (i === 0 || id !== bests[i - 1]));
    expect(changes).toEqual(named);
  });

  it('shows no time left before a job has ended, then one from the measured pace', () => {
    const { text } = replay(true);
    const lines = text.split('\r').filter((line) => /jobs/.test(line));
    expect(lines[0]).not.toMatch(/left/);
    // Every epoch took 0.7 thread-seconds; after the first job, 20 epochs are left on at most 2 busy threads.
    expect(lines.find((line) => /left/.test(line))).toMatch(/00:(0[7-9]|1[0-4]) left/);
  });
});
