import type { TrialRecord } from '../../src/store/types.js';

/** A trial record for tests: a completed one-layer trial of 10 epochs with the given objective, changed by `extra`. */
export function trialRecord(id: number, objective: number | null, extra: Partial<TrialRecord> = {}): TrialRecord {
  return {
    id,
    params: { depth: 1, width: 8, activation: 'relu', learningRate: 0.01, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0 },
    seed: id,
    status: 'completed',
    rung: 0,
    bracket: 0,
    epochsTrained: 10,
    curve: [],
    objective,
    rungObjectives: [objective],
    workerSeconds: 1,
    retries: 0,
    jobs: [],
    ...extra,
  };
}
