import type { TrialRecord } from '../../src/core/trial.js';

/** A trial record for tests: a trained one-layer trial of 10 epochs with the given score, changed by `extra`. */
export function trialRecord(id: number, score: number | null, extra: Partial<TrialRecord> = {}): TrialRecord {
  return {
    id,
    configuration: { depth: 1, width: 8, activation: 'relu', learningRate: 0.01, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0 },
    seed: id,
    status: 'trained',
    rung: 0,
    bracket: 0,
    epochsTrained: 10,
    curve: [],
    score,
    rungScores: [score],
    workerSeconds: 1,
    retries: 0,
    jobs: [],
    ...extra,
  };
}
