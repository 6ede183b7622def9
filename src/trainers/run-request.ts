/** Runs a training request on the trainer it names: the engine by default, tfjs when asked. */
import type { EpochReport, TrainRequest, TrainResult } from '../transports/threads/messages.js';
import { trainSegmentOnEngine } from './engine/segment.js';
import { initBackend } from './tfjs/backend.js';
import { trainSegment } from './tfjs/loop.js';

/** Trains `request` with `request.trainer` ('engine' unless it says 'tfjs'). */
export async function runTrainRequest(request: TrainRequest, onEpoch?: (report: EpochReport) => void): Promise<TrainResult> {
  if (request.trainer === 'tfjs') {
    await initBackend();
    return trainSegment(request, onEpoch);
  }
  return trainSegmentOnEngine(request, onEpoch);
}
