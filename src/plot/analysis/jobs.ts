import type { StudyDocument } from '../../store/types.js';
import type { TrialRecord, TrialStatus } from '../../core/trial.js';
import { scoreAt } from '../../core/ranking.js';
import { isUnsuccessful } from '../../core/trial-status.js';

/** One job of a trial as the report reads it: the epochs it trained and where it left the trial. */
export interface JobSpent {
  trialId: number;
  bracket: number;
  rung: number;
  /** Epochs this job trained (a job that failed before any epoch was recorded counts 0). */
  epochs: number;
  /** Worker seconds of the epochs it trained (the sum of the epochs' own times). */
  workerSeconds: number;
  /** Epochs the trial had trained when the job ended. */
  toEpoch: number;
  /** Score at the job's last epoch; null when it diverged or failed. */
  score: number | null;
  /** The trial's status once this job had ended: its final status after its last job, else waiting. */
  statusAfter: TrialStatus;
  /** When the job ended, in milliseconds since 1970, estimated as described in {@link studyJobs}. */
  endedAtMs: number;
}

/**
 * Epochs at the end of each rung, per bracket, read from the trials: the most epochs trained by a
 * trial that ended or waited at that rung. Only files without job records need it.
 */
export function rungEndEpochs(study: StudyDocument): Map<number, number[]> {
  const ends = new Map<number, number[]>();
  for (const trial of study.trials) {
    if (isUnsuccessful(trial.status) || trial.status === 'training') continue;
    const row = ends.get(trial.bracket) ?? [];
    row[trial.rung] = Math.max(row[trial.rung] ?? 0, trial.epochsTrained);
    ends.set(trial.bracket, row);
  }
  return ends;
}

interface JobSpan {
  rung: number;
  fromEpoch: number;
  toEpoch: number;
  result: 'done' | 'diverged' | 'failed' | 'timed-out';
}

/** A trial's jobs that ended: the recorded ones, or for files from before jobs were recorded, one per rung reached. */
function jobSpans(trial: TrialRecord, rungEnds: Map<number, number[]>): JobSpan[] {
  if (trial.jobs.length > 0) {
    return trial.jobs.flatMap((job): JobSpan[] =>
      job.status === 'training' || job.status === 'cut-off' ? [] : [{ rung: job.rung, fromEpoch: job.fromEpoch, toEpoch: job.toEpoch, result: job.status }],
    );
  }
  // A training trial's current rung has not ended yet.
  const top = trial.status === 'training' ? trial.rung - 1 : trial.rung;
  const ends = rungEnds.get(trial.bracket) ?? [];
  const spans: JobSpan[] = [];
  let from = 0;
  for (let rung = 0; rung <= top; rung++) {
    const last = rung === top;
    const to = last ? Math.max(trial.epochsTrained, from) : (ends[rung] ?? from);
    const result = last && isUnsuccessful(trial.status) ? (trial.status as JobSpan['result']) : 'done';
    spans.push({ rung, fromEpoch: from, toEpoch: to, result });
    from = to;
  }
  return spans;
}

/**
 * Every ended job of the study, in the order they ended. The study file times a trial's start and
 * its last job's end, so: a trial's last job ends at its recorded end; its first job at its start
 * plus the seconds of the epochs it trained; a job in between just before the next one began (its
 * end minus the seconds of the epochs after it). Trials without times follow in id order.
 */
export function studyJobs(study: StudyDocument): JobSpent[] {
  const rungEnds = rungEndEpochs(study);
  const jobs: JobSpent[] = [];
  for (const trial of study.trials) {
    const spans = jobSpans(trial, rungEnds);
    const points = new Map(trial.curve.map((point) => [point.epoch, point]));
    const secondsThrough = (epoch: number): number => trial.curve.reduce((sum, p) => (p.epoch <= epoch ? sum + p.seconds : sum), 0);
    const totalSeconds = secondsThrough(Number.POSITIVE_INFINITY);
    const start = trial.startedAt ? Date.parse(trial.startedAt) : Number.NaN;
    const end = trial.endedAt ? Date.parse(trial.endedAt) : Number.NaN;
    spans.forEach((span, index) => {
      const trained = trial.curve.filter((p) => p.epoch > span.fromEpoch && p.epoch <= span.toEpoch);
      const lastEpoch = span.result === 'done' ? span.toEpoch : Math.max(span.fromEpoch, ...trained.map((p) => p.epoch));
      const point = points.get(span.toEpoch);
      const last = index === spans.length - 1;
      let endedAtMs: number;
      if (last && Number.isFinite(end)) endedAtMs = end;
      else if (index === 0 && Number.isFinite(start)) endedAtMs = start + 1000 * secondsThrough(span.toEpoch);
      else if (Number.isFinite(end)) endedAtMs = end - 1000 * (totalSeconds - secondsThrough(span.toEpoch));
      else endedAtMs = Number.POSITIVE_INFINITY;
      jobs.push({
        trialId: trial.id,
        bracket: trial.bracket,
        rung: span.rung,
        epochs: lastEpoch - span.fromEpoch,
        workerSeconds: trained.reduce((sum, p) => sum + p.seconds, 0),
        toEpoch: lastEpoch,
        score: span.result === 'done' && point ? scoreAt(point, study.goal) : null,
        statusAfter: last ? trial.status : span.result === 'done' ? 'waiting' : span.result,
        endedAtMs,
      });
    });
  }
  return jobs.sort((a, b) => a.endedAtMs - b.endedAtMs || a.trialId - b.trialId || a.rung - b.rung);
}
