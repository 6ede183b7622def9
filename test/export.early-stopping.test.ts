/**
 * Export with early stopping: the exported network is the best epoch's, not the last's (it
 * reproduces the best epoch's recorded validation figures), and configuration.json and the printed
 * summary say which epoch.
 */
import * as tf from '@tensorflow/tfjs';
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { exportModel, exportReport } from '../src/commands/export.js';
import { prepareData } from '../src/data/prepare.js';
import type { ExportConfiguration } from '../src/export/configuration.js';
import { runStudy } from '../src/runner/run-study.js';
import type { StudyDocument } from '../src/store/types.js';
import type { TrialRecord } from '../src/core/trial.js';
import { rankTrials } from '../src/core/ranking.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { computeMetrics } from '../src/metrics/metrics.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

beforeAll(() => initBackend());

async function validationLogLoss(doc: StudyDocument, dir: string): Promise<number> {
  const { data } = await prepareData(doc.definition.data, doc.definitionFile);
  const modelJson = JSON.parse(await readFile(path.join(dir, 'model.json'), 'utf8')) as tf.io.ModelJSON;
  const group = modelJson.weightsManifest[0]!;
  const bytes = await readFile(path.join(dir, group.paths[0]!));
  const model = await tf.loadLayersModel(
    tf.io.fromMemory({ modelTopology: modelJson.modelTopology, weightSpecs: group.weights, weightData: bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) }),
  );
  const outputs = tf.tidy(() => Float32Array.from((model.predict(tf.tensor2d(data.validation.x, [data.validation.rows, data.recipe.inputCount])) as tf.Tensor).dataSync()));
  model.dispose();
  return computeMetrics('binary', data.validation.y, outputs, 1).logLoss!;
}

describe('export with early stopping', () => {
  it('writes the best epoch\'s weights and says which epoch, in configuration.json (beside the drawn schedule) and the printed summary', async () => {
    const file = await writeTinyStudy(
      tinyStudy({
        budget: { trials: 4, maxEpochs: 40 },
        space: { ...tinyStudy().space, learningRate: { min: 0.05, max: 0.3 }, width: { min: 16, max: 32 }, schedule: { kind: ['step', 'cosine'], stepEpochs: 20 } },
        goal: { metric: 'logLoss' },
        earlyStopping: { rule: 'patience', patience: 2 },
      }),
    );
    const out = path.join(path.dirname(file), 'run');
    const { doc } = await runStudy(file, { out });
    const ranking = rankTrials(doc.trials, doc.goal);
    // A trial whose best epoch is not its last: exporting its last epoch would give other figures.
    const chosen = ranking.slice(0, 3).find(({ trial }) => trial.bestEpoch! < trial.epochsTrained);
    expect(chosen, 'a kept trial (top 3) whose best epoch is earlier than its last').toBeDefined();
    const trial: TrialRecord = chosen!.trial;
    const summary = await exportModel({ dir: out, rank: chosen!.rank });
    const configuration = JSON.parse(await readFile(path.join(summary.out, 'configuration.json'), 'utf8')) as ExportConfiguration;
    expect(configuration.bestEpoch).toBe(trial.bestEpoch);
    expect(configuration.weightsEpoch).toBe(trial.bestEpoch);
    expect(configuration.validation.epoch).toBe(trial.bestEpoch);
    expect(configuration.score).toBe(trial.score);
    // The schedule the trial drew is part of its configuration.
    expect(configuration.configuration).toEqual(trial.configuration);
    expect(Object.keys(configuration.configuration)).toEqual(expect.arrayContaining(['schedule', 'warmupEpochs', 'gamma', 'stepEpochs', 'minFactor']));
    const best = trial.curve.find((p) => p.epoch === trial.bestEpoch)!;
    const last = trial.curve.at(-1)!;
    // Far enough apart that the check below tells the best epoch's weights from the last one's.
    expect(Math.abs(best.metrics.logLoss! - last.metrics.logLoss!)).toBeGreaterThan(1e-3);
    // The exported network reproduces the best epoch's log loss (tfjs against the engine's figures: 1e-4).
    expect(Math.abs((await validationLogLoss(doc, summary.out)) - best.metrics.logLoss!)).toBeLessThan(1e-4);
    expect(exportReport(summary)).toContain(`weights: epoch ${trial.bestEpoch} (the trial's best epoch ${trial.bestEpoch}`);
  });
});
