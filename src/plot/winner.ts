import type { StudyDocument } from '../store/types.js';
import type { TrialRecord } from '../core/trial.js';
import { rankTrials } from '../core/ranking.js';

/** The trial to recommend: the leader of the study's one ranking (rank 1 of {@link rankTrials}). */
export function bestTrial(study: StudyDocument): TrialRecord | undefined {
  return rankTrials(study.trials, study.goal)[0]?.trial;
}
