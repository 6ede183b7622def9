/** The trainers by name, and the one call that runs a request on the trainer it names. */
import type { EpochReport, TrainResult } from '../core/job.js';
import type { Trainer, TrainerName, TrainRequest } from './contract.js';
import { trainSegmentOnEngine } from './engine/segment.js';
import { initBackend } from './tfjs/backend.js';
import { trainSegment } from './tfjs/loop.js';

/** The WebAssembly SIMD engine (src/trainers/engine/): the default. */
export const engineTrainer: Trainer = { name: 'engine', train: trainSegmentOnEngine };

/** The tfjs reference path (src/trainers/tfjs/): tfjs on its wasm backend, a custom loop. */
export const tfjsTrainer: Trainer = {
  name: 'tfjs',
  async train(request, onEpoch) {
    await initBackend();
    return trainSegment(request, onEpoch);
  },
};

export const TRAINERS: Readonly<Record<TrainerName, Trainer>> = { engine: engineTrainer, tfjs: tfjsTrainer };

/** Trains `request` with `request.trainer` ('engine' unless it says 'tfjs'). */
export function runTrainRequest(request: TrainRequest, onEpoch?: (report: EpochReport) => void): Promise<TrainResult> {
  return TRAINERS[request.trainer ?? 'engine'].train(request, onEpoch);
}
