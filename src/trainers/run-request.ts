/**
 * The trainers by name, and the one call that runs a request on the trainer it names. The tfjs path
 * is imported on its first request, so a thread that only trains on the engine never loads tfjs
 * (about 0.6 s and tens of MB per thread).
 */
import type { EpochReport, TrainResult } from '../core/job.js';
import type { Trainer, TrainerName, TrainRequest } from './contract.js';
import { trainSegmentOnEngine } from './engine/segment.js';
import { measureRowMicroseconds } from './engine/row-timing.js';
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

/**
 * Trains `request` with `request.trainer` ('engine' unless it says 'tfjs'), with the class weights its
 * configuration chooses; when the request asks (`timeRows`) and the job completed, then times the
 * network's prediction per row in this thread, after its last epoch (`engine/row-timing.ts`, on the
 * engine whichever trainer trained: the arithmetic of the exported network).
 */
export async function runTrainRequest(request: TrainRequest, onEpoch?: (report: EpochReport) => void): Promise<TrainResult> {
  const result = await TRAINERS[request.trainer ?? 'engine'].train(withConfiguredClassWeights(request), onEpoch);
  if (request.timeRows !== true || result.status !== 'completed') return result;
  const { task, inputCount, outputCount } = request.dataset;
  return { ...result, rowMicroseconds: measureRowMicroseconds(request.configuration, { task, inputCount, outputCount }) };
}
