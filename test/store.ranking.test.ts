import { describe, expect, it } from 'vitest';
import { rankTrials } from '../src/store/ranking.js';
import type { TrialRecord } from '../src/store/types.js';

function trial(id: number, objective: number | null, extra: Partial<TrialRecord> = {}): TrialRecord {
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
    attempts: 1,
    ...extra,
  };
}

const ids = (ranked: ReturnType<typeof rankTrials>): number[] => ranked.map((r) => r.trial.id);

describe('ranking', () => {
  it('orders by the objective, highest first when maximising', () => {
    const ranked = rankTrials([trial(0, 0.8), trial(1, 0.9), trial(2, 0.7)], { metric: 'accuracy', direction: 'maximize' });
    expect(ids(ranked)).toEqual([1, 0, 2]);
    expect(ranked.map((r) => r.rank)).toEqual([1, 2, 3]);
  });

  it('orders by the objective, lowest first when minimising', () => {
    const ranked = rankTrials([trial(0, 0.8), trial(1, 0.9), trial(2, 0.7)], { metric: 'rmse', direction: 'minimize' });
    expect(ids(ranked)).toEqual([2, 0, 1]);
  });

  it('breaks ties by fewer epochs, then by lower id', () => {
    const ranked = rankTrials(
      [trial(3, 0.9, { epochsTrained: 10 }), trial(1, 0.9, { epochsTrained: 10 }), trial(2, 0.9, { epochsTrained: 5 })],
      { metric: 'accuracy', direction: 'maximize' },
    );
    expect(ids(ranked)).toEqual([2, 1, 3]);
  });

  it('puts trials that reached a higher rung first, whatever their objective', () => {
    const ranked = rankTrials(
      [trial(0, 0.95, { rung: 0, status: 'stopped' }), trial(1, 0.7, { rung: 2 }), trial(2, 0.8, { rung: 1, status: 'stopped' })],
      { metric: 'accuracy', direction: 'maximize' },
    );
    expect(ids(ranked)).toEqual([1, 2, 0]);
  });

  it('leaves out diverged, failed, timed-out and running trials', () => {
    const ranked = rankTrials(
      [
        trial(0, 0.5),
        trial(1, null, { status: 'diverged' }),
        trial(2, null, { status: 'failed' }),
        trial(3, null, { status: 'timed-out' }),
        trial(4, 0.99, { status: 'running' }),
      ],
      { metric: 'accuracy', direction: 'maximize' },
    );
    expect(ids(ranked)).toEqual([0]);
  });
});
