/**
 * The time a network takes per row to predict: the engine's forward pass (the arithmetic the
 * exported network performs) over a fixed batch, timed several times, the median kept. The time
 * depends on the network's shape, not on its weights, so the network's initial weights serve.
 * Machine-dependent and noisy (other work on the machine slows it): never a deterministic result.
 */
import { performance } from 'node:perf_hooks';
import type { Task, TrialConfiguration } from '../../core/configuration.js';
import type { SharedDataset } from '../../core/job.js';
import { EVALUATION_CHUNK_ROWS, EngineTrial } from './trial.js';

/** Rows of the timed batch: one evaluation chunk of the engine. */
export const TIMED_ROWS = EVALUATION_CHUNK_ROWS;
/** Timed passes per measurement (after one untimed warm-up pass); the median is kept. */
export const TIMED_PASSES = 7;

/** The data's shape the timed network is built for. */
export interface TimedShape {
  task: Task;
  inputCount: number;
  /** 1 for binary and regression, the classes of a multiclass task. */
  outputCount: number;
}

/** A fixed batch of rows of the given shape: the same values every time (a smooth pattern, no zeros or denormals). */
function timingBatch(shape: TimedShape, rows: number): SharedDataset {
  const x = Float32Array.from({ length: rows * shape.inputCount }, (_, i) => Math.sin(i + 1));
  const y = Float32Array.from({ length: rows }, (_, r) => (shape.task === 'regression' ? Math.cos(r) : r % Math.max(2, shape.outputCount)));
  const part = { rows, x, y };
  return { id: `row-timing/${shape.task}/${shape.inputCount}/${shape.outputCount}/${rows}`, task: shape.task, inputCount: shape.inputCount, outputCount: shape.outputCount, train: part, validation: part };
}

/** The middle value (the mean of the two middle values for an even count). */
export function median(values: readonly number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  const middle = Math.floor(sorted.length / 2);
  return sorted.length % 2 === 1 ? sorted[middle]! : (sorted[middle - 1]! + sorted[middle]!) / 2;
}

/**
 * Microseconds per row of the forward pass of `configuration`'s network on a batch of `rows` rows:
 * one warm-up pass, then `passes` timed passes; the median pass time over the rows. Runs in the
 * calling thread's engine (it replaces the engine's resident trial there).
 */
export function measureRowMicroseconds(configuration: TrialConfiguration, shape: TimedShape, rows = TIMED_ROWS, passes = TIMED_PASSES): number {
  const trial = EngineTrial.create({ trialId: 0, seed: 0, configuration: { ...configuration, dropout: 0 }, dataset: timingBatch(shape, rows) });
  trial.evaluate();
  const times: number[] = [];
  for (let pass = 0; pass < passes; pass++) {
    const started = performance.now();
    trial.evaluate();
    times.push(performance.now() - started);
  }
  return (median(times) * 1000) / rows;
}
