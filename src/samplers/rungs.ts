import type { TrialConfiguration } from '../core/configuration.js';

/** Gives the configuration of a trial id; samplers never draw parameters themselves. */
export type ConfigurationForTrial = (trialId: number) => TrialConfiguration;

/** One result inside a rung. */
export interface RungResult {
  trialId: number;
  /** Oriented so smaller is better; null when the trial diverged or failed. */
  loss: number | null;
}

/** Whether a result can ever be promoted: a diverged or failed trial (null, NaN) cannot. */
export function isPromotable(loss: number | null): loss is number {
  return loss !== null && !Number.isNaN(loss);
}

/**
 * Order of merit: smaller loss first, null and NaN last (worst), ties broken by lower trial id.
 * A total order, so a ranking depends only on the set of results, never on their arrival order.
 */
export function compareResults(a: RungResult, b: RungResult): number {
  const aOk = isPromotable(a.loss);
  const bOk = isPromotable(b.loss);
  if (aOk !== bOk) return aOk ? -1 : 1;
  if (aOk && bOk && a.loss !== b.loss) return (a.loss as number) < (b.loss as number) ? -1 : 1;
  return a.trialId - b.trialId;
}

/** Results best first (a new array). */
export function rank(results: Iterable<RungResult>): RungResult[] {
  return [...results].sort(compareResults);
}

/** Map of trial id to loss, as rung results. */
export function resultsOf(losses: ReadonlyMap<number, number | null>): RungResult[] {
  return [...losses].map(([trialId, loss]) => ({ trialId, loss }));
}

/**
 * Epochs at the end of each rung: minEpochs * eta^k while below maxEpochs, then maxEpochs itself
 * (the top rung always trains to maxEpochs, even when the last step is shorter than a factor eta).
 */
export function rungEpochs(minEpochs: number, maxEpochs: number, eta: number): number[] {
  assertPositiveInteger('minEpochs', minEpochs);
  assertPositiveInteger('maxEpochs', maxEpochs);
  assertEta(eta);
  const epochs: number[] = [];
  for (let e = minEpochs; e < maxEpochs; e *= eta) epochs.push(e);
  epochs.push(maxEpochs);
  return epochs;
}

export function assertPositiveInteger(name: string, value: number): void {
  if (!Number.isInteger(value) || value < 1) throw new RangeError(`${name} must be a positive integer, got ${value}`);
}

export function assertEta(eta: number): void {
  if (!Number.isInteger(eta) || eta < 2) throw new RangeError(`eta must be an integer of at least 2, got ${eta}`);
}
