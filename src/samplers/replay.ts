import { isDeepStrictEqual } from 'node:util';
import { UserError } from '../core/errors.js';
import type { TrialConfiguration } from '../core/configuration.js';
import type { Job, JobOutcome, Sampler } from './sampler.js';

/** What a resumed study must do after {@link replay}. */
export interface ReplayResult {
  /** Jobs the sampler has handed out again for which no outcome was recorded: run these first and report them. */
  pending: Job[];
  /** Recorded outcomes the sampler never asked for (none for the deterministic samplers). */
  unused: JobOutcome[];
}

/**
 * Rebuild a fresh sampler's state from outcomes already recorded in the study file.
 *
 * It asks the sampler for jobs as the run loop would; a job whose (trial, rung) has a recorded outcome
 * is reported at once, one without is kept as pending. It stops when every recorded outcome has been
 * fed, or when the sampler says 'wait' or 'done'. The order of `outcomes` does not matter.
 * A job the sampler proposes again must carry the configuration recorded for its trial: a sampler that
 * learns from results and proposes otherwise would train other configurations under the old records,
 * so a mismatch with `history` (trial id to recorded configuration) is refused (the study definition or rungwise's sampler changed since the study ran).
 *
 * Exact for samplers whose decisions depend only on the set of outcomes (random, successive halving,
 * Hyperband): replaying then running the pending jobs and the rest gives the same jobs as an
 * uninterrupted run. Asynchronous halving depends on arrival order by design, so after a replay its
 * later promotions may differ from those the interrupted run would have made; recorded outcomes it no
 * longer asks for come back in `unused`.
 */
export function replay(sampler: Sampler, outcomes: readonly JobOutcome[], history: ReadonlyMap<number, TrialConfiguration> = new Map()): ReplayResult {
  const recorded = new Map<string, JobOutcome>();
  for (const outcome of outcomes) {
    const id = key(outcome.trialId, outcome.rung);
    if (recorded.has(id)) throw new Error(`replay: two outcomes recorded for trial ${outcome.trialId} at rung ${outcome.rung}`);
    recorded.set(id, outcome);
  }
  const pending: Job[] = [];
  while (recorded.size > 0) {
    const job = sampler.next();
    if (job === 'wait' || job === 'done') break;
    const id = key(job.trialId, job.rung);
    const known = history.get(job.trialId);
    if (known && !isDeepStrictEqual(known, job.configuration)) {
      throw new UserError(
        'E_REPLAY_MISMATCH',
        `study file: trial ${job.trialId} was trained with ${JSON.stringify(known)} but the sampler now proposes ${JSON.stringify(job.configuration)}; the study definition or the sampler changed since the study ran, so it cannot be resumed (start a new study)`,
      );
    }
    const outcome = recorded.get(id);
    if (outcome) {
      recorded.delete(id);
      sampler.report(outcome);
    } else {
      pending.push(job);
    }
  }
  return { pending, unused: [...recorded.values()] };
}

function key(trialId: number, rung: number): string {
  return `${trialId}/${rung}`;
}
