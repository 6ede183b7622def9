/**
 * The promises every transport keeps. Each implementation's test file calls {@link transportContract}
 * with a factory of its own; a new transport is proven by the same checks as the old ones.
 */
import { afterEach, describe, expect, it } from 'vitest';
import type { TrialConfiguration } from '../src/core/configuration.js';
import type { TrialTransport } from '../src/transports/transport.js';
import type { EpochReport, SharedDataset, TrainJob } from '../src/core/job.js';
import { syntheticDataset } from './helpers/synthetic.js';

export const contractDataset: SharedDataset = syntheticDataset({ task: 'binary', rows: 96, inputs: 3, seed: 5 });

const params: TrialConfiguration = { depth: 1, width: 6, activation: 'tanh', learningRate: 0.05, batchSize: 16, optimizer: 'adam', l2: 0, dropout: 0 };

const job = (overrides: Partial<TrainJob> = {}): TrainJob => ({
  trialId: 7,
  seed: 99,
  configuration: params,
  datasetId: contractDataset.id,
  fromEpoch: 0,
  toEpoch: 3,
  ...overrides,
});

const figures = (reports: readonly EpochReport[]) => reports.map(({ seconds: _seconds, ...rest }) => rest);

export function transportContract(name: string, create: () => TrialTransport | Promise<TrialTransport>): void {
  describe(`transport contract: ${name}`, () => {
    let transport: TrialTransport | undefined;
    const open = async (): Promise<TrialTransport> => {
      transport = await create();
      await transport.addDataset(contractDataset);
      return transport;
    };
    afterEach(async () => {
      await transport?.close();
      transport = undefined;
    });

    it('has room for at least one job', async () => {
      expect((await open()).capacity).toBeGreaterThanOrEqual(1);
    });

    it('trains epochs fromEpoch+1 .. toEpoch, reports each as it ends, and returns the checkpoint at toEpoch', async () => {
      const t = await open();
      const seen: EpochReport[] = [];
      const result = await t.run(job(), (report) => seen.push(report), new AbortController().signal);
      expect(result.status).toBe('completed');
      expect(result.trialId).toBe(7);
      expect(result.epochs.map((e) => e.epoch)).toEqual([1, 2, 3]);
      expect(figures(seen)).toEqual(figures(result.epochs));
      expect(result.checkpoint).toBeInstanceOf(Uint8Array);
    });

    it('continues from a checkpoint exactly where training straight through would be', async () => {
      const t = await open();
      const signal = new AbortController().signal;
      const straight = await t.run(job({ toEpoch: 4 }), () => undefined, signal);
      const first = await t.run(job({ toEpoch: 2 }), () => undefined, signal);
      const rest = await t.run(job({ fromEpoch: 2, toEpoch: 4, checkpoint: first.checkpoint! }), () => undefined, signal);
      expect(figures(rest.epochs)).toEqual(figures(straight.epochs.slice(2)));
    });

    it('rejects a continuation that brings no checkpoint', async () => {
      const t = await open();
      await expect(t.run(job({ fromEpoch: 2, toEpoch: 3 }), () => undefined, new AbortController().signal)).rejects.toThrow(/no checkpoint/);
    });

    it('rejects a job whose signal was aborted', async () => {
      const t = await open();
      const abort = new AbortController();
      abort.abort();
      await expect(t.run(job(), () => undefined, abort.signal)).rejects.toThrow();
    });

    it('runs as many jobs at once as its capacity and settles each', async () => {
      const t = await open();
      const signal = new AbortController().signal;
      const ids = Array.from({ length: t.capacity + 1 }, (_, i) => i + 1);
      const results = await Promise.all(ids.map((trialId) => t.run(job({ trialId, toEpoch: 1 }), () => undefined, signal)));
      expect(results.map((r) => r.trialId)).toEqual(ids);
    });
  });
}
