import { rankTrials } from '../../src/core/ranking.js';
import { StudyStore } from '../../src/store/study-store.js';
import type { StudyDocument } from '../../src/store/types.js';

/** What must not depend on where or how a study ran: each trial's configuration, status, epochs, objective and curve. */
export function trialsOf(doc: StudyDocument) {
  return doc.trials
    .map((t) => ({ id: t.id, status: t.status, epochs: t.epochsTrained, objective: t.score, params: t.configuration, curve: t.curve.map(({ seconds: _s, ...p }) => p) }))
    .sort((a, b) => a.id - b.id);
}

/** The repeat runs after the search: which configurations, and each run's seed, epochs, status and score (no timings). */
export function repeatsOf(doc: StudyDocument) {
  if (!doc.repeats) return null;
  return { trialIds: doc.repeats.trialIds, runs: doc.repeats.runs.map(({ workerSeconds: _s, ...run }) => run) };
}

/** The trials, ranking (trial ids in rank order) and repeat runs of the study saved in `dir`. */
export async function studyOutcome(dir: string): Promise<{ state: string; trials: ReturnType<typeof trialsOf>; ranking: number[]; repeats: ReturnType<typeof repeatsOf> }> {
  const doc = (await StudyStore.open(dir)).doc;
  return { state: doc.state, trials: trialsOf(doc), ranking: rankTrials(doc.trials, doc.goal).map((r) => r.trial.id), repeats: repeatsOf(doc) };
}
