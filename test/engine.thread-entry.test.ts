/** The trial worker trains on the engine by default and on the tfjs path when the request asks for it. */
import { describe, expect, it } from 'vitest';
import { trainSegmentOnEngine } from '../src/trainers/engine/segment.js';
import type { EpochReport } from '../src/core/job.js';
import { trainSegment } from '../src/trainers/tfjs/loop.js';
import trialThread from '../threads/trial-thread.js';
import { syntheticDataset, trainRequest } from './helpers/synthetic.js';

const figures = (reports: EpochReport[]) => reports.map(({ seconds: _, ...rest }) => rest);
const dataset = syntheticDataset({ task: 'binary', rows: 120 });

describe('trainer selection in the trial worker', () => {
  it('trains on the engine when the request names no trainer', async () => {
    const request = trainRequest(dataset, { toEpoch: 2, params: { dropout: 0.2 } });
    const viaThread = await trialThread(request);
    expect(figures(viaThread.epochs)).toStrictEqual(figures((await trainSegmentOnEngine(request)).epochs));
  });

  it("trains on the tfjs path when the request says trainer: 'tfjs'", async () => {
    const request = trainRequest(dataset, { toEpoch: 2, trainer: 'tfjs' });
    const viaThread = await trialThread(request);
    expect(figures(viaThread.epochs)).toStrictEqual(figures((await trainSegment(request)).epochs));
    expect(figures(viaThread.epochs)).not.toStrictEqual(figures((await trainSegmentOnEngine(request)).epochs));
  });

  it('times the network after the job when the request asks, on either trainer, and trains the same', async () => {
    for (const trainer of ['engine', 'tfjs'] as const) {
      const plain = await trialThread(trainRequest(dataset, { toEpoch: 2, trainer }));
      const timed = await trialThread({ ...trainRequest(dataset, { toEpoch: 2, trainer }), timeRows: true });
      expect(plain.rowMicroseconds).toBeUndefined();
      expect(Number.isFinite(timed.rowMicroseconds) && timed.rowMicroseconds! > 0).toBe(true);
      expect(figures(timed.epochs)).toStrictEqual(figures(plain.epochs));
    }
  });
});
