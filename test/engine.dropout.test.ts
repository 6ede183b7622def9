/** Inverted dropout in the engine: kept units scaled by 1/(1-rate), the mean activation preserved. */
import { describe, expect, it } from 'vitest';
import { EngineTrial } from '../src/trainers/engine/trial.js';
import { stream } from '../src/random/streams.js';
import { baseParams, syntheticDataset } from './helpers/synthetic.js';

const dataset = syntheticDataset({ task: 'binary', rows: 300, inputs: 6, seed: 8 });

describe('engine dropout', () => {
  it('keeps each unit with probability 1 - rate, scaled by 1/(1-rate), so the mean activation is preserved on a large layer', () => {
    // Source: Srivastava et al., "Dropout: A Simple Way to Prevent Neural Networks from Overfitting", JMLR 2014, section 10 (scaling at training time).
    const rate = 0.4;
    const rows = 128;
    const width = 2048;
    const trial = EngineTrial.create({ trialId: 1, seed: 5, configuration: { ...baseParams, depth: 1, width, dropout: rate, batchSize: rows, activation: 'sigmoid' }, dataset });
    trial.setUpdating(false);
    trial.setOrder(Int32Array.from({ length: dataset.train.rows }, (_, i) => i));
    trial.drawMasks(stream(5, 'dropout', 1, 0), rows);
    trial.step(0, rows);
    const layer = trial.layers[0]!;
    const unmasked = trial.readMatrix(layer.at.activated, layer.outStride, rows, width);
    const masked = trial.readMatrix(layer.at.output, layer.outStride, rows, width);
    const keep = Math.fround(1 / (1 - rate));
    let kept = 0;
    let sumUnmasked = 0;
    let sumMasked = 0;
    for (let i = 0; i < masked.length; i++) {
      if (masked[i] !== 0) {
        kept++;
        expect(masked[i]).toBe(Math.fround(unmasked[i]! * keep));
      }
      sumUnmasked += unmasked[i]!;
      sumMasked += masked[i]!;
    }
    const n = masked.length;
    // Binomial standard error of the kept share: sqrt(p(1-p)/n); 4 standard errors allowed.
    const standardError = Math.sqrt((rate * (1 - rate)) / n);
    expect(Math.abs(kept / n - (1 - rate))).toBeLessThan(4 * standardError);
    // The mean of H*mask/(1-p) around mean(H): relative error of the order of the same standard error times 1/(1-p).
    expect(Math.abs(sumMasked / sumUnmasked - 1)).toBeLessThan((4 * standardError) / (1 - rate));
  });

  it("draws its masks from the trial's seed: the same seed gives the same training, another seed another", async () => {
    const params = { ...baseParams, dropout: 0.3 };
    const run = (seed: number): number[] => {
      const trial = EngineTrial.create({ trialId: 1, seed, configuration: params, dataset });
      return [1, 2, 3].map((epoch) => trial.trainEpoch(epoch));
    };
    expect(run(9)).toStrictEqual(run(9));
    expect(run(10)).not.toStrictEqual(run(9));
  });
});
