import { plannedBudget } from '../../samplers/index.js';
import type { StudyDocument } from '../../store/types.js';
import type { TrialRecord } from '../../core/trial.js';
import { leaderOf } from '../../core/ranking.js';
import { studyJobs, type JobSpent } from './jobs.js';

/** The study's leader once some amount of compute had been spent. */
export interface LeaderStep {
  /** Epochs trained by all jobs that had ended by then. */
  epochsSpent: number;
  workerSecondsSpent: number;
  leaderId: number;
  /** The leader's score at its scored point. */
  score: number;
  /** Epochs the leader had trained when scored. */
  leaderEpochs: number;
}

/** The trial as it stood once one of its jobs had ended. */
function standing(trial: TrialRecord, job: JobSpent): TrialRecord {
  const now: TrialRecord = { ...trial, status: job.statusAfter, epochsTrained: job.toEpoch, score: job.score };
  // Before its last job the trial had neither stopped nor been judged: it was waiting at a rung.
  if (job.statusAfter === 'waiting' && trial.status !== 'waiting') {
    delete now.stoppedEarly;
    delete now.flags;
  }
  return now;
}

/**
 * The leader of the one ranking ({@link leaderOf}: the best finished trial) after every ended job, replayed in the order
 * jobs ended. A step is recorded where the leader or its score changed, and one at the compute
 * spent in all; the last step's leader is the study's rank 1 when every job has ended.
 */
export function leaderSteps(study: StudyDocument): LeaderStep[] {
  const byId = new Map(study.trials.map((t) => [t.id, t]));
  const standings = new Map<number, TrialRecord>();
  const steps: LeaderStep[] = [];
  let leader: TrialRecord | undefined;
  let epochsSpent = 0;
  let workerSecondsSpent = 0;
  for (const job of studyJobs(study)) {
    epochsSpent += job.epochs;
    workerSecondsSpent += job.workerSeconds;
    const now = standing(byId.get(job.trialId)!, job);
    standings.set(job.trialId, now);
    // Only the changed trial can take the lead, unless the leader itself changed: then rank everyone.
    const candidates = leader === undefined || leader.id === job.trialId ? [...standings.values()] : [leader, now];
    leader = leaderOf(candidates, study.goal);
    if (!leader) continue;
    const previous = steps.at(-1);
    const step = { epochsSpent, workerSecondsSpent, leaderId: leader.id, score: leader.score!, leaderEpochs: leader.epochsTrained };
    if (previous && previous.leaderId === step.leaderId && previous.score === step.score && previous.leaderEpochs === step.leaderEpochs) {
      continue;
    }
    steps.push(step);
  }
  // The line runs on to the compute spent in all, even when the last jobs changed nothing.
  const last = steps.at(-1);
  if (last && last.epochsSpent < epochsSpent) steps.push({ ...last, epochsSpent, workerSecondsSpent });
  return steps;
}

/** Epochs the study's sampler plans, or undefined when the plan cannot be read (an unknown sampler kind). */
export function plannedEpochs(study: StudyDocument): number | undefined {
  try {
    const epochs = plannedBudget(study.definition).epochs;
    return epochs > 0 ? epochs : undefined;
  } catch {
    return undefined;
  }
}

/** Epochs spent at one rung of one bracket, and its share of all epochs spent. */
export interface RungShare {
  bracket: number;
  rung: number;
  /** Epochs of a configuration at the rung's end (the most trained by a job there). */
  rungEpochs: number;
  configurations: number;
  epochs: number;
  share: number;
}

/** How the epochs spent split over the rungs (per bracket), in bracket then rung order. */
export function rungShares(study: StudyDocument): RungShare[] {
  const jobs = studyJobs(study);
  const total = jobs.reduce((sum, job) => sum + job.epochs, 0);
  const groups = new Map<string, RungShare & { trials: Set<number> }>();
  for (const job of jobs) {
    const key = `${job.bracket}/${job.rung}`;
    const group = groups.get(key) ?? { bracket: job.bracket, rung: job.rung, rungEpochs: 0, configurations: 0, epochs: 0, share: 0, trials: new Set<number>() };
    group.epochs += job.epochs;
    group.rungEpochs = Math.max(group.rungEpochs, job.toEpoch);
    group.trials.add(job.trialId);
    groups.set(key, group);
  }
  return [...groups.values()]
    .map(({ trials, ...group }) => ({ ...group, configurations: trials.size, share: total > 0 ? group.epochs / total : 0 }))
    .sort((a, b) => a.bracket - b.bracket || a.rung - b.rung);
}

/** Epochs and worker seconds spent by every ended job. */
export function computeSpent(study: StudyDocument): { epochs: number; workerSeconds: number } {
  const jobs = studyJobs(study);
  return { epochs: jobs.reduce((s, j) => s + j.epochs, 0), workerSeconds: jobs.reduce((s, j) => s + j.workerSeconds, 0) };
}

/** The epochs spent within one stretch of the study's compute, by rung: where that stretch went. */
export interface ComputeStretch {
  /** Epochs spent before the stretch began and when it ended (all trials together). */
  from: number;
  to: number;
  rung: number;
  /** Epochs of the stretch trained at this rung, and their share of the stretch. */
  epochs: number;
  share: number;
}

/**
 * The study's compute, in the order jobs ended, cut into `stretches` equal stretches of epochs, and
 * how each stretch split over the rungs (a job's epochs spread evenly over the stretch it spans).
 * Empty when nothing was trained. The shares of one stretch sum to 1.
 */
export function computeTimeline(study: StudyDocument, stretches = 60): ComputeStretch[] {
  const jobs = studyJobs(study);
  const total = jobs.reduce((sum, job) => sum + job.epochs, 0);
  if (total === 0) return [];
  const count = Math.max(1, Math.min(stretches, total));
  const size = total / count;
  const byRung = Array.from({ length: count }, () => new Map<number, number>());
  let spent = 0;
  for (const job of jobs) {
    const start = spent;
    const end = spent + job.epochs;
    spent = end;
    for (let k = Math.floor(start / size); k < count && k * size < end; k++) {
      const overlap = Math.min(end, (k + 1) * size) - Math.max(start, k * size);
      if (overlap > 0) byRung[k]!.set(job.rung, (byRung[k]!.get(job.rung) ?? 0) + overlap);
    }
  }
  return byRung.flatMap((rungs, k) =>
    [...rungs].sort((a, b) => a[0] - b[0]).map(([rung, epochs]) => ({ from: k * size, to: (k + 1) * size, rung, epochs, share: epochs / size })),
  );
}
