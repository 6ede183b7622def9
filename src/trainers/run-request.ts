/**
 * The trainers by name, and the one call that runs a request on the trainer it names. The tfjs path
 * is imported on its first request, so a thread that only trains on the engine never loads tfjs
 * (about 0.6 s and tens of MB per thread).
 */
import type { EpochReport, TrainResult } from '../core/job.js';
import type { Trainer, TrainerName, TrainRequest } from './contract.js';
import { trainSegmentOnEngine } from './engine/segment.js';
import { withConfiguredClassWeights } from './shared/class-weights.js';

/** The WebAssembly SIMD engine (src/trainers/engine/): the default. */
export const engineTrainer: Trainer = { name: 'engine', train: trainSegmentOnEngine };

/** The tfjs reference path (src/trainers/tfjs/): tfjs on its wasm backend, a custom loop. */
export const tfjsTrainer: Trainer = {
  name: 'tfjs',
  async train(request, onEpoch) {
    const [{ initBackend }, { trainSegment }] = await Promise.all([import('./tfjs/backend.js'), import('./tfjs/loop.js')]);
    await initBackend();
    return trainSegment(request, onEpoch);
  },
};

export const TRAINERS: Readonly<Record<TrainerName, Trainer>> = { engine: engineTrainer, tfjs: tfjsTrainer };

/** Trains `request` with `request.trainer` ('engine' unless it says 'tfjs'), with the class weights its configuration chooses. */
export function runTrainRequest(request: TrainRequest, onEpoch?: (report: EpochReport) => void): Promise<TrainResult> {
  return TRAINERS[request.trainer ?? 'engine'].train(withConfiguredClassWeights(request), onEpoch);
}
