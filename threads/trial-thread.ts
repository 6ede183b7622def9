/**
 * The entry point of a training thread (piscina): one ThreadTrainRequest in, one TrainResult out,
 * epoch reports posted on `request.progressPort` as they happen.
 */
import { threadId } from 'node:worker_threads';
import type { TrainResult } from '../src/core/job.js';
import { runTrainRequest } from '../src/trainers/run-request.js';
import type { ThreadTrainRequest } from '../src/transports/threads/messages.js';

export default async function trialThread(request: ThreadTrainRequest): Promise<TrainResult> {
  // Test-only faults, checked before any work so their effect does not depend on timing.
  if (request.fault === 'throw') throw new Error(`injected fault: trial ${request.trialId} throws`);
  if (request.fault === 'hang') await new Promise<never>(() => {}); // never settles; no timer, no busy loop
  if (request.fault === 'exit') process.exit(1); // in a worker thread this ends the thread only
  const { progressPort, fault: _fault, ...job } = request;
  const result = await runTrainRequest(job, progressPort ? (report) => progressPort.postMessage(report) : undefined);
  return { ...result, ranOn: `thread ${threadId}` };
}
