/**
 * Learning-rate schedules: the learning rate of an epoch, from the trial's configuration, the epoch
 * and the study's maximum epochs only. It never depends on rungs or job boundaries, so a job that
 * continues a trial from its checkpoint at epoch k trains exactly as a job that trained straight
 * through.
 *
 * Epochs are 1-based, as in epoch reports: epoch e is the e-th pass over the training rows, and
 * t = e - 1 - warmupEpochs is the number of epochs the schedule itself has run before it.
 * - warm-up (optional, any kind): epochs 1 .. w train at eta0 * e / w (linear, reaching eta0 at epoch w);
 * - `constant`: eta0;
 * - `step`: eta0 * gamma^floor(t / stepEpochs) (common practice, no source);
 * - `cosine`: SGDR eq. 5 without restarts (Loshchilov and Hutter, ICLR 2017):
 *   eta_min + (eta0 - eta_min) (1 + cos(pi T_cur / T_i)) / 2 with T_cur = t, T_i = maxEpochs - w,
 *   eta_min = minFactor * eta0. The last epoch has T_cur = T_i - 1, so eta_min itself is reached only
 *   past the budget (t is clamped to T_i there).
 * The rate is set once per epoch (SGDR moves T_cur per batch; per epoch keeps both trainers simple).
 */
import type { ScheduleKind, TrialConfiguration } from './configuration.js';

/** What a schedule reads from a configuration (absent: the constant schedule without warm-up). */
export type ScheduleSettings = Pick<TrialConfiguration, 'learningRate' | 'schedule' | 'gamma' | 'stepEpochs' | 'warmupEpochs' | 'minFactor'>;

/** Defaults of the schedule's settings when the configuration leaves one out. */
export const SCHEDULE_DEFAULTS = { gamma: 0.1, stepEpochs: 10, warmupEpochs: 0, minFactor: 0 } as const;

/** Whether the configuration's learning rate changes from epoch to epoch. */
export function hasSchedule(configuration: ScheduleSettings): boolean {
  return (configuration.schedule !== undefined && configuration.schedule !== 'constant') || (configuration.warmupEpochs ?? 0) > 0;
}

/** The learning rate of 1-based `epoch` of a study whose trials train at most `maxEpochs` epochs. */
export function learningRateAt(configuration: ScheduleSettings, epoch: number, maxEpochs: number): number {
  const eta0 = configuration.learningRate;
  const kind: ScheduleKind = configuration.schedule ?? 'constant';
  const warmup = configuration.warmupEpochs ?? SCHEDULE_DEFAULTS.warmupEpochs;
  if (!Number.isInteger(epoch) || epoch < 1) throw new RangeError(`epoch must be a positive integer, got ${epoch}`);
  if (epoch <= warmup) return (eta0 * epoch) / warmup;
  const t = epoch - 1 - warmup;
  if (kind === 'constant') return eta0;
  if (kind === 'step') {
    const gamma = configuration.gamma ?? SCHEDULE_DEFAULTS.gamma;
    const stepEpochs = configuration.stepEpochs ?? SCHEDULE_DEFAULTS.stepEpochs;
    return eta0 * gamma ** Math.floor(t / stepEpochs);
  }
  const period = Math.max(1, maxEpochs - warmup);
  const etaMin = (configuration.minFactor ?? SCHEDULE_DEFAULTS.minFactor) * eta0;
  return etaMin + ((eta0 - etaMin) * (1 + Math.cos((Math.PI * Math.min(t, period)) / period))) / 2;
}

/** The schedule in words for tables ("cosine to 0.05x, warm-up 2"), or undefined for a configuration without one. */
export function scheduleInWords(configuration: ScheduleSettings): string | undefined {
  if (configuration.schedule === undefined) return undefined;
  const parts: string[] = [configuration.schedule];
  const round = (value: number): string => String(Number(value.toPrecision(3)));
  if (configuration.schedule === 'step') parts[0] = `step x${round(configuration.gamma ?? SCHEDULE_DEFAULTS.gamma)} every ${configuration.stepEpochs ?? SCHEDULE_DEFAULTS.stepEpochs}`;
  if (configuration.schedule === 'cosine') parts[0] = `cosine to ${round(configuration.minFactor ?? SCHEDULE_DEFAULTS.minFactor)}x`;
  if ((configuration.warmupEpochs ?? 0) > 0) parts.push(`warm-up ${configuration.warmupEpochs}`);
  return parts.join(', ');
}
