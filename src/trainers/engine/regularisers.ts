/**
 * The regularisers' words of a trial's descriptor (assembly/regularisers.ts reads them): written
 * once when the trial is laid out, the weight decay factor again whenever the learning rate changes.
 */
import type { SharedDataset } from '../../core/job.js';
import type { TrialConfiguration } from '../../core/configuration.js';
import { smoothedTargets, updatesAfterBackward, weightDecayStep } from '../shared/regularisers.js';
import { REGULARISER_WORD } from './layout.js';
import { engine } from './module.js';

/** The descriptor words from 0 up to the last regulariser word. */
function descriptorWords(net: number): { words: Int32Array; floats: Float32Array } {
  const count = REGULARISER_WORD.updateAfterBackward + 1;
  return { words: new Int32Array(engine().memory.buffer, net, count), floats: new Float32Array(engine().memory.buffer, net, count) };
}

/** Writes the regularisers of `configuration` at the configuration's own learning rate (all 0 when none is on). */
export function writeRegularisers(net: number, configuration: TrialConfiguration, dataset: SharedDataset): void {
  const { words, floats } = descriptorWords(net);
  words[REGULARISER_WORD.updateAfterBackward] = updatesAfterBackward(configuration) ? 1 : 0;
  floats[REGULARISER_WORD.weightDecayStep] = weightDecayStep(configuration, configuration.learningRate);
  floats[REGULARISER_WORD.maxGradientNorm] = configuration.maxGradientNorm ?? 0;
  const smoothing = smoothedTargets(configuration, dataset.task, dataset.outputCount);
  floats[REGULARISER_WORD.smoothingKeep] = smoothing?.keep ?? 0;
  floats[REGULARISER_WORD.smoothingShare] = smoothing?.share ?? 0;
}

/** Sets the weight decay factor of the next steps for the epoch's learning rate. */
export function setWeightDecayStep(net: number, configuration: TrialConfiguration, learningRate: number): void {
  descriptorWords(net).floats[REGULARISER_WORD.weightDecayStep] = weightDecayStep(configuration, learningRate);
}
