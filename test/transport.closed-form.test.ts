import { describe, expect, it } from 'vitest';
import { ClosedFormTransport } from '../src/transports/closed-form.js';
import { transportContract } from './transport.contract.js';

const evaluate = (params: { learningRate: number; width: number }, epoch: number) => ({
  validationLoss: Math.abs(Math.log10(params.learningRate) + 2) + 1 / params.width + 1 / epoch,
});

transportContract('closed form', () => new ClosedFormTransport({ evaluate, capacity: 3 }));

describe('closed-form transport', () => {
  it('reports a non-finite loss as divergence at that epoch', async () => {
    const transport = new ClosedFormTransport({ evaluate: (_p, epoch) => ({ validationLoss: epoch === 2 ? Infinity : 1 }) });
    const params = { depth: 1, width: 4, activation: 'relu', learningRate: 0.01, batchSize: 8, optimizer: 'adam', l2: 0, dropout: 0 } as const;
    const result = await transport.run({ trialId: 1, seed: 1, configuration: params, datasetId: 'x', fromEpoch: 0, toEpoch: 3 }, () => undefined, new AbortController().signal);
    expect(result.status).toBe('diverged');
    expect(result.divergence?.epoch).toBe(2);
    expect(result.epochs.map((e) => e.epoch)).toEqual([1]);
  });
});
