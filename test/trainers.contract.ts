/**
 * The trainer contract (src/trainers/contract.ts), run by every trainer: the WebAssembly engine and
 * the tfjs reference. A new trainer is proven by the same specifications.
 */
import { describe, expect, it } from 'vitest';
import type { EpochReport } from '../src/core/job.js';
import type { Trainer } from '../src/trainers/contract.js';
import { syntheticDataset, trainRequest } from './helpers/synthetic.js';

const binary = syntheticDataset({ task: 'binary', rows: 120 });
const multiclass = syntheticDataset({ task: 'multiclass', rows: 150, classes: 3 });
const regression = syntheticDataset({ task: 'regression', rows: 120 });

export function trainerContract(trainer: Trainer): void {
  describe(`trainer contract: ${trainer.name}`, () => {
    it('trains epochs fromEpoch+1 .. toEpoch, calls onEpoch for each as it ends, and returns the checkpoint at toEpoch', async () => {
      const seen: EpochReport[] = [];
      const result = await trainer.train(trainRequest(binary, { toEpoch: 3 }), (report) => seen.push(report));
      expect(result.status).toBe('completed');
      expect(result.epochs.map((e) => e.epoch)).toEqual([1, 2, 3]);
      expect(seen).toEqual(result.epochs);
      expect(result.checkpoint).toBeInstanceOf(Uint8Array);
      expect(result.workerSeconds).toBeGreaterThan(0);
    });

    it('reports the metrics of each task: AUC for binary, accuracy for multiclass, RMSE in target units for regression', async () => {
      const b = await trainer.train(trainRequest(binary, { toEpoch: 1 }));
      const m = await trainer.train(trainRequest(multiclass, { toEpoch: 1 }));
      const r = await trainer.train(trainRequest(regression, { toEpoch: 1 }));
      expect(Object.keys(b.epochs[0]!.metrics).sort()).toEqual(['accuracy', 'auc', 'logLoss', 'macroF1']);
      expect(Object.keys(m.epochs[0]!.metrics).sort()).toEqual(['accuracy', 'logLoss', 'macroF1']);
      expect(Object.keys(r.epochs[0]!.metrics).sort()).toEqual(['mae', 'r2', 'rmse']);
      expect(b.classFigures?.confusion.flat().reduce((sum, n) => sum + n, 0)).toBe(binary.validation.rows);
      expect(r.classFigures).toBeUndefined();
    });

    it('continues from a checkpoint exactly where training straight through would be', async () => {
      const straight = await trainer.train(trainRequest(multiclass, { toEpoch: 4 }));
      const first = await trainer.train(trainRequest(multiclass, { toEpoch: 2 }));
      const rest = await trainer.train(trainRequest(multiclass, { fromEpoch: 2, toEpoch: 4, checkpoint: first.checkpoint! }));
      const figures = (reports: EpochReport[]) => reports.map(({ epoch, trainLoss, validationLoss, metrics }) => ({ epoch, trainLoss, validationLoss, metrics }));
      expect(figures([...first.epochs, ...rest.epochs])).toEqual(figures(straight.epochs));
    });

    it('gives the same figures for the same request, and different ones for another seed', async () => {
      const a = await trainer.train(trainRequest(binary, { toEpoch: 2, params: { dropout: 0.2, l2: 1e-3 } }));
      const b = await trainer.train(trainRequest(binary, { toEpoch: 2, params: { dropout: 0.2, l2: 1e-3 } }));
      const c = await trainer.train(trainRequest(binary, { toEpoch: 2, seed: 43, params: { dropout: 0.2, l2: 1e-3 } }));
      expect(b.epochs.map((e) => e.trainLoss)).toEqual(a.epochs.map((e) => e.trainLoss));
      expect(c.epochs.map((e) => e.trainLoss)).not.toEqual(a.epochs.map((e) => e.trainLoss));
    });

    it('rejects a continuation that brings no checkpoint', async () => {
      await expect(trainer.train(trainRequest(binary, { fromEpoch: 2, toEpoch: 3 }))).rejects.toThrow(/fromEpoch is 2 but no checkpoint was given/);
    });

    it('ends a run whose loss stops being finite as diverged, with no checkpoint and no report for that epoch', async () => {
      const result = await trainer.train(trainRequest(regression, { toEpoch: 5, params: { optimizer: 'sgd', learningRate: 1e6 } }));
      expect(result.status).toBe('diverged');
      expect(result.divergence?.epoch).toBeGreaterThanOrEqual(1);
      expect(result.checkpoint).toBeUndefined();
      expect(result.epochs.every((e) => e.epoch < result.divergence!.epoch)).toBe(true);
    });

    it('with early stopping by patience, stops after `patience` epochs without improvement and names its best epoch', async () => {
      // Common practice (no source): patience counts epochs in a row without an improvement of the goal.
      const result = await trainer.train(
        trainRequest(binary, { toEpoch: 40, earlyStopping: { rule: { rule: 'patience', patience: 2, minDelta: 0 }, goal: { metric: 'validationLoss', better: 'lower' } }, params: { learningRate: 0.3, optimizer: 'sgd' } }),
      );
      expect(result.status).toBe('completed');
      const losses = result.epochs.map((e) => e.validationLoss);
      const best = losses.indexOf(Math.min(...losses)) + 1;
      expect(result.bestEpoch).toBe(best);
      expect(result.stoppedAtEpoch).toBe(best + 2);
      expect(result.epochs.at(-1)!.epoch).toBe(best + 2);
    });
  });
}
