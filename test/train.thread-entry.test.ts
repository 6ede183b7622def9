import { describe, expect, it } from 'vitest';
import trialThread from '../threads/trial-thread.js';
import { syntheticDataset, trainRequest } from './helpers/synthetic.js';

const dataset = syntheticDataset({ task: 'binary', rows: 100 });

describe('trial worker entry point', () => {
  it('initialises the backend and trains the requested epochs', async () => {
    const result = await trialThread(trainRequest(dataset, { toEpoch: 2 }));
    expect(result.status).toBe('completed');
    expect(result.epochs.map((e) => e.epoch)).toEqual([1, 2]);
  });

  it("rejects when asked to fault with 'throw'", async () => {
    await expect(trialThread(trainRequest(dataset, { fault: 'throw' }))).rejects.toThrow(/injected fault/);
  });

  it("never settles when asked to fault with 'hang'", async () => {
    let settled = false;
    trialThread(trainRequest(dataset, { trialId: 9, fault: 'hang' })).then(
      () => (settled = true),
      () => (settled = true),
    );
    // A whole training request runs (and yields to the event loop) meanwhile.
    await trialThread(trainRequest(dataset, { toEpoch: 2 }));
    await new Promise((resolve) => setImmediate(resolve));
    expect(settled).toBe(false);
  });
});
