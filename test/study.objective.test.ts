import { describe, expect, it } from 'vitest';
import { rankTrials } from '../src/core/ranking.js';
import { trialRecord } from './helpers/trials.js';

const trial = trialRecord;

const ids = (ranked: ReturnType<typeof rankTrials>): number[] => ranked.map((r) => r.trial.id);

describe('ranking', () => {
  it('orders by the objective, highest first when maximising', () => {
    const ranked = rankTrials([trial(0, 0.8), trial(1, 0.9), trial(2, 0.7)], { metric: 'accuracy', better: 'higher' });
    expect(ids(ranked)).toEqual([1, 0, 2]);
    expect(ranked.map((r) => r.rank)).toEqual([1, 2, 3]);
  });

  it('orders by the objective, lowest first when minimising', () => {
    const ranked = rankTrials([trial(0, 0.8), trial(1, 0.9), trial(2, 0.7)], { metric: 'rmse', better: 'lower' });
    expect(ids(ranked)).toEqual([2, 0, 1]);
  });

  it('breaks ties by lower id', () => {
    const ranked = rankTrials([trial(3, 0.9), trial(1, 0.9), trial(2, 0.9)], { metric: 'accuracy', better: 'higher' });
    expect(ids(ranked)).toEqual([1, 2, 3]);
  });

  it('puts finished trials first, then trials cut by a halving sampler by the epochs they reached', () => {
    const ranked = rankTrials(
      [trial(0, 0.95, { epochsTrained: 1, status: 'dropped' }), trial(1, 0.7, { epochsTrained: 9 }), trial(2, 0.8, { epochsTrained: 3, status: 'dropped' })],
      { metric: 'accuracy', better: 'higher' },
    );
    expect(ids(ranked)).toEqual([1, 2, 0]);
  });

  it('ranks a trial its early-stopping rule ended by its best epoch\'s score, not below trials that trained longer', () => {
    const ranked = rankTrials(
      [trial(0, 0.85, { epochsTrained: 27 }), trial(1, 0.9, { epochsTrained: 4, stoppedEarly: true, stoppedAtEpoch: 4, bestEpoch: 1, status: 'dropped' }), trial(2, 0.95, { epochsTrained: 9, status: 'dropped' })],
      { metric: 'auc', better: 'higher' },
    );
    expect(ids(ranked)).toEqual([1, 0, 2]);
  });

  it('compares epochs, not rung indices, across Hyperband brackets', () => {
    // Bracket 1 starts at 27 epochs (its rung 0); bracket 2 reaches 27 epochs at its rung 1, bracket 3 at its rung 2.
    const ranked = rankTrials(
      [
        trial(0, 0.8569, { bracket: 2, rung: 1, epochsTrained: 27, status: 'dropped' }),
        trial(1, 0.872, { bracket: 1, rung: 0, epochsTrained: 27, status: 'dropped' }),
        trial(2, 0.9, { bracket: 3, rung: 1, epochsTrained: 3, status: 'dropped' }),
        trial(3, 0.85, { bracket: 3, rung: 3, epochsTrained: 81 }),
      ],
      { metric: 'auc', better: 'higher' },
    );
    expect(ids(ranked)).toEqual([3, 1, 0, 2]);
  });

  it('leaves out diverged, failed, timed-out trials and running ones not scored yet', () => {
    const ranked = rankTrials(
      [
        trial(0, 0.5),
        trial(1, null, { status: 'diverged' }),
        trial(2, null, { status: 'failed' }),
        trial(3, null, { status: 'timed-out' }),
        trial(4, null, { status: 'training', epochsTrained: 0 }),
      ],
      { metric: 'accuracy', better: 'higher' },
    );
    expect(ids(ranked)).toEqual([0]);
  });

  it('keeps a trial being continued at the point it was last scored, so the leader does not drop out while its next rung trains', () => {
    const ranked = rankTrials(
      [trial(0, 0.8, { epochsTrained: 9, status: 'dropped' }), trial(1, 0.85, { epochsTrained: 9, status: 'training' })],
      { metric: 'accuracy', better: 'higher' },
    );
    expect(ids(ranked)).toEqual([1, 0]);
  });
});
