/**
 * Closed-form test functions with known minima, and a driver that runs a sampler against one through
 * its next/report loop (a virtual clock in place of training).
 */
import { decode, type Dimension } from '../../src/space/dimensions.js';
import type { UnitDesign } from '../../src/samplers/design.js';
import type { Job, Sampler } from '../../src/samplers/sampler.js';
import { simulate, type SimulationLog } from '../../src/samplers/simulate.js';
import type { TrialConfiguration } from '../../src/core/configuration.js';

export interface TestFunction {
  name: string;
  dimensions: Dimension[];
  /** Known global minimum. */
  minimum: number;
  evaluate(values: Record<string, number>): number;
}

const real = (name: string, min: number, max: number): Dimension => ({ kind: 'numeric', name, min, max, log: false, integer: false });

/**
 * Branin. Source: Dixon, Szegő, "The global optimization problem: an introduction", 1978, as tabulated
 * in Surjanovic and Bingham's Virtual Library of Simulation Experiments (constants From memory; the
 * minimum 0.397887 derived by evaluating the formula at its three places, REFERENCES.md).
 */
export const BRANIN: TestFunction = {
  name: 'Branin',
  dimensions: [real('x1', -5, 10), real('x2', 0, 15)],
  minimum: 0.397887,
  evaluate: ({ x1, x2 }) => {
    const b = 5.1 / (4 * Math.PI ** 2);
    const c = 5 / Math.PI;
    const t = 1 / (8 * Math.PI);
    return (x2! - b * x1! ** 2 + c * x1! - 6) ** 2 + 10 * (1 - t) * Math.cos(x1!) + 10;
  },
};

const HARTMANN_ALPHA = [1, 1.2, 3, 3.2];
const HARTMANN_A = [
  [10, 3, 17, 3.5, 1.7, 8],
  [0.05, 10, 17, 0.1, 8, 14],
  [3, 3.5, 1.7, 10, 17, 8],
  [17, 8, 0.05, 10, 0.1, 14],
];
const HARTMANN_P = [
  [1312, 1696, 5569, 124, 8283, 5886],
  [2329, 4135, 8307, 3736, 1004, 9991],
  [2348, 1451, 3522, 2883, 3047, 6650],
  [4047, 8828, 8732, 5743, 1091, 381],
].map((row) => row.map((p) => p * 1e-4));

/**
 * Hartmann 6-D on [0, 1]^6. Source: as for Branin (constants From memory; minimum -3.32237 at
 * (0.20169, 0.150011, 0.476874, 0.275332, 0.311652, 0.6573), derived and confirmed numerically, REFERENCES.md).
 */
export const HARTMANN6: TestFunction = {
  name: 'Hartmann 6-D',
  dimensions: [0, 1, 2, 3, 4, 5].map((j) => real(`x${j + 1}`, 0, 1)),
  minimum: -3.32237,
  evaluate: (values) => {
    const x = [0, 1, 2, 3, 4, 5].map((j) => values[`x${j + 1}`]!);
    let sum = 0;
    for (let i = 0; i < 4; i++) {
      let inner = 0;
      for (let j = 0; j < 6; j++) inner += HARTMANN_A[i]![j]! * (x[j]! - HARTMANN_P[i]![j]!) ** 2;
      sum += HARTMANN_ALPHA[i]! * Math.exp(-inner);
    }
    return -sum;
  },
};

/** Every job trains the same placeholder configuration: the function reads the trial's point instead. */
export const PLACEHOLDER_PARAMS: TrialConfiguration = { depth: 1, width: 8, activation: 'relu', learningRate: 0.01, batchSize: 32, optimizer: 'adam', l2: 0, dropout: 0 };

export const designOf = (fn: TestFunction): UnitDesign => ({ dimensions: fn.dimensions, configurationAt: () => PLACEHOLDER_PARAMS });

/** Something that can tell which point of the unit cube a trial was given. */
export interface PointSource {
  pointOf(trialId: number): readonly number[] | undefined;
}

/** Runs `sampler` against `fn` with `threads` virtual threads; returns the log and the values in report order. */
export function runOnFunction(sampler: Sampler & PointSource, fn: TestFunction, threads = 1, duration?: (job: Job) => number): { log: SimulationLog; values: number[] } {
  const values: number[] = [];
  const log = simulate(sampler, {
    threads,
    ...(duration ? { duration } : {}),
    loss: (job) => {
      const value = fn.evaluate(decode(fn.dimensions, sampler.pointOf(job.trialId)!) as Record<string, number>);
      values.push(value);
      return value;
    },
  });
  return { log, values };
}

/** Virtual durations that differ by trial (epochs times 1 to 5), so several threads report out of hand-out order. */
export const unevenDuration = (job: Job): number => (job.toEpoch - job.fromEpoch) * (1 + ((job.trialId * 7) % 5));

export const median = (xs: readonly number[]): number => {
  const sorted = [...xs].sort((a, b) => a - b);
  const mid = Math.floor(sorted.length / 2);
  return sorted.length % 2 ? sorted[mid]! : (sorted[mid - 1]! + sorted[mid]!) / 2;
};
