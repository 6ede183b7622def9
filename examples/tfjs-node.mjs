// Load an exported model with plain @tensorflow/tfjs in Node (no tfjs-node, no rungwise):
// tf.loadLayersModel gets a file-system IO handler, because tfjs's own file:// loader needs tfjs-node.
// node examples/tfjs-node.mjs [export folder] [rows.json]
import * as tf from '@tensorflow/tfjs';
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { encodeRow } from './encode-row.mjs';

const [dir = 'runs/demo/export/rank-1', rowsFile = 'examples/demo-rows.json'] = process.argv.slice(2);

/** An IO handler that reads model.json and the weight files its manifest names from a folder. */
function fileSystemHandler(folder) {
  return {
    async load() {
      const modelJson = JSON.parse(await readFile(path.join(folder, 'model.json'), 'utf8'));
      const groups = modelJson.weightsManifest;
      const weights = Buffer.concat(await Promise.all(groups.flatMap((g) => g.paths).map((p) => readFile(path.join(folder, p)))));
      return {
        modelTopology: modelJson.modelTopology,
        weightSpecs: groups.flatMap((g) => g.weights),
        weightData: weights.buffer.slice(weights.byteOffset, weights.byteOffset + weights.byteLength),
      };
    },
  };
}

const model = await tf.loadLayersModel(fileSystemHandler(dir));
const { recipe, outputs } = JSON.parse(await readFile(path.join(dir, 'configuration.json'), 'utf8'));
const rows = JSON.parse(await readFile(rowsFile, 'utf8'));
const x = tf.tensor2d(rows.map((row) => encodeRow(recipe, row)), [rows.length, recipe.inputCount]);
const y = model.predict(x);
// binary: P(second class); multiclass: one probability per class; regression: the target in its units.
console.log(JSON.stringify({ meaning: outputs.meaning, values: Array.from(await y.data()) }));
