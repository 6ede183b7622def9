#!/usr/bin/env node
// Prints, as JSON, the engine's curves of the first trials of the demo study (studies/demo/study.json),
// trained straight from the compiled build in DIST (default: dist). A change that must leave existing
// studies as they were is checked by comparing this output with the same script run on the build
// from before the change (test/regularisers.unchanged.test.ts holds one such recording).
//
//   node scripts/demo-curves.mjs [DIST] [TRIALS] [EPOCHS] [STUDY]
//
// STUDY is a study file's path from the repository (default studies/demo/study.json).
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { pathToFileURL } from 'node:url';

const root = path.resolve(path.dirname(new URL(import.meta.url).pathname), '..');
const dist = path.resolve(process.argv[2] ?? path.join(root, 'dist'));
const trials = Number(process.argv[3] ?? 4);
const epochs = Number(process.argv[4] ?? 5);
const load = (file) => import(pathToFileURL(path.join(dist, file)).href);

const { studySchema } = await load('src/study/definition.js');
const { prepareData, toSharedDataset } = await load('src/data/index.js');
const { configurationForTrial } = await load('src/space/sample.js');
const { trialSeed } = await load('src/random/streams.js');
const { trainSegmentOnEngine } = await load('src/trainers/engine/segment.js');

const studyFile = path.join(root, process.argv[5] ?? 'studies/demo/study.json');
const definition = studySchema.parse(JSON.parse(readFileSync(studyFile, 'utf8')));
const { data } = await prepareData(definition.data, studyFile);
const dataset = toSharedDataset(data, 'demo');
const curves = [];
for (let trialId = 0; trialId < trials; trialId++) {
  const configuration = configurationForTrial(definition.space, definition.sampler.seed, trialId);
  const seed = trialSeed(definition.sampler.seed, trialId);
  const result = await trainSegmentOnEngine({ trialId, seed, configuration, dataset, datasetId: dataset.id, fromEpoch: 0, toEpoch: epochs });
  curves.push({ trialId, configuration, epochs: result.epochs.map((e) => ({ epoch: e.epoch, trainLoss: e.trainLoss, validationLoss: e.validationLoss, metrics: e.metrics })) });
}
process.stdout.write(JSON.stringify(curves, null, 1) + '\n');
