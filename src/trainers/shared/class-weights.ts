/**
 * A trial's own class weighting (the configuration's `classWeights`, from the search space) applied to
 * its data set: the weights are computed here, in the trainer, from the training rows the job trains
 * on (each fold's own), so a job carries one word and every transport needs nothing more.
 */
import { classCounts, weightsForCounts } from '../../core/class-weighting.js';
import type { SharedDataset } from '../../core/job.js';
import type { TrainRequest } from '../contract.js';

/** The number of classes of a classification data set (binary: 2). */
function classCountOf(dataset: SharedDataset): number {
  return dataset.task === 'binary' ? 2 : dataset.outputCount;
}

/**
 * `request` with its data set's class weights set by the configuration's weighting (none: no
 * weights); unchanged when the configuration has none. The data set keeps its id: the engine writes
 * the weights per trial, and the tfjs path keys its cached weights by them.
 */
export function withConfiguredClassWeights(request: TrainRequest): TrainRequest {
  const { classWeights: weighting, effectiveBeta } = request.configuration;
  if (weighting === undefined) return request;
  const { dataset } = request;
  if (dataset.task === 'regression') {
    if (weighting === 'none') return request;
    throw new Error(`trial ${request.trialId}: class weighting "${weighting}" on a regression data set`);
  }
  const weights = weightsForCounts(weighting, classCounts(dataset.train.y, classCountOf(dataset)), effectiveBeta);
  const { classWeights: _ignored, ...rest } = dataset;
  return { ...request, dataset: weights ? { ...rest, classWeights: weights } : rest };
}
