/**
 * Runs a training request on the trainer it names: the engine by default, tfjs when asked. The tfjs
 * path is imported on its first request, so a thread that only trains on the engine never loads
 * tfjs (about 0.6 s and tens of MB per thread).
 */
import type { EpochReport, TrainRequest, TrainResult } from '../pool/messages.js';
import { trainSegmentOnEngine } from '../engine/segment.js';

/** Trains `request` with `request.trainer` ('engine' unless it says 'tfjs'). */
export async function runTrainRequest(request: TrainRequest, onEpoch?: (report: EpochReport) => void): Promise<TrainResult> {
  if (request.trainer === 'tfjs') {
    const [{ initBackend }, { trainSegment }] = await Promise.all([import('./backend.js'), import('./loop.js')]);
    await initBackend();
    return trainSegment(request, onEpoch);
  }
  return trainSegmentOnEngine(request, onEpoch);
}
