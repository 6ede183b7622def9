/**
 * Child-process entry of the pace benchmark's loop figures: the engine's training loop alone
 * (`EngineTrial.trainEpoch`, no validation, metrics or checkpoints) on the networks of issue 25,
 * 20 inputs, 3 classes, Adam, relu, 4,096 rows. `--build <file.wasm>` loads another build of the
 * engine (the relaxed-SIMD comparison build; the process must then be started with the V8 flag
 * that lets it validate on Node 20). Posts a `LoopMeasurement` to the parent.
 */
import { EngineTrial } from '../src/trainers/engine/trial.js';
import { useEngineFile } from '../src/trainers/engine/module.js';
import { benchDataset } from './synthetic.js';

/** The networks and batch sizes of issue 25's table. */
export const PACE_NETWORKS = [
  { depth: 1, width: 16, batchSize: 32 },
  { depth: 2, width: 64, batchSize: 32 },
  { depth: 3, width: 128, batchSize: 32 },
  { depth: 3, width: 128, batchSize: 256 },
  { depth: 4, width: 256, batchSize: 256 },
] as const;

export const PACE_ROWS = 4096;

export interface LoopSample {
  network: string;
  batchSize: number;
  samplesPerSecond: number;
  /** Samples per second of this process's CPU time over the same stretch: steadier than wall time on a shared machine. */
  samplesPerCpuSecond: number;
  epochs: number;
}

export interface LoopMeasurement {
  build: string;
  samples: LoopSample[];
}

/** Best of three stretches of about `seconds / 3` each, after one untimed epoch. */
function samplesPerSecond(trial: EngineTrial, seconds: number): { perSecond: number; perCpuSecond: number; epochs: number } {
  let epoch = 1;
  trial.trainEpoch(epoch);
  let best = { perSecond: 0, perCpuSecond: 0, epochs: 0 };
  for (let stretch = 0; stretch < 3; stretch++) {
    const started = performance.now();
    const cpu = process.cpuUsage();
    let count = 0;
    while (count === 0 || performance.now() - started < (seconds * 1000) / 3) {
      trial.trainEpoch(++epoch);
      count++;
    }
    const used = process.cpuUsage(cpu);
    const perSecond = (count * PACE_ROWS) / ((performance.now() - started) / 1000);
    if (perSecond > best.perSecond) best = { perSecond, perCpuSecond: (count * PACE_ROWS) / ((used.user + used.system) / 1e6), epochs: count };
  }
  return best;
}

const args = process.argv.slice(2);
const buildAt = args.indexOf('--build');
if (buildAt >= 0) useEngineFile(args[buildAt + 1]!);
const seconds = args.includes('--quick') ? 0.6 : 2;
const dataset = benchDataset(PACE_ROWS, 256, 20, 3);
const samples: LoopSample[] = PACE_NETWORKS.map(({ depth, width, batchSize }, i) => {
  const params = { depth, width, activation: 'relu', learningRate: 1e-3, batchSize, optimizer: 'adam', l2: 0, dropout: 0 } as const;
  const trial = EngineTrial.create({ trialId: i + 1, seed: 7, configuration: params, dataset });
  const { perSecond, perCpuSecond, epochs } = samplesPerSecond(trial, seconds);
  return { network: `${depth}x${width}`, batchSize, samplesPerSecond: perSecond, samplesPerCpuSecond: perCpuSecond, epochs };
});
const result: LoopMeasurement = { build: buildAt >= 0 ? 'relaxed SIMD (fused multiply-add)' : 'SIMD', samples };
if (process.send) process.send(result, () => process.exit(0));
else console.log(JSON.stringify(result));
