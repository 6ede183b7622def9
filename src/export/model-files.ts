/**
 * The exported network as a tfjs Layers model: `model.json` (topology and weights manifest) plus
 * one `weights.bin`, the layout `tf.loadLayersModel('.../model.json')` reads over HTTP in a browser.
 * `@tensorflow/tfjs` has no `file://` handler without tfjs-node, so files are written and read here.
 */
import * as tf from '@tensorflow/tfjs';
import { readFile, writeFile } from 'node:fs/promises';
import path from 'node:path';
import type { PreprocessingRecipe } from '../data/types.js';
import { POOLED_INPUT } from '../data/input-checks.js';
import { encodedWidth } from '../data/numeric-encodings.js';
import type { Activation, TrialConfiguration } from '../core/configuration.js';
import { hiddenWidths } from '../core/size.js';
import type { NamedWeights } from '../trainers/tfjs/checkpoint.js';
import { LEAKY_RELU_SLOPE } from '../trainers/tfjs/network.js';
import { buildResidualModel } from './residual-model.js';

export const MODEL_FILE = 'model.json';
export const WEIGHTS_FILE = 'weights.bin';

/** Activations tfjs layers accepts as a dense layer's `activation` string; leakyRelu is a separate layer instead. */
type DenseActivation = Exclude<Activation, 'leakyRelu'>;

/** One name per network input, in input order: a numeric column's name (`column:bin1`..., `column:sin1`, `column:cos1`... when encoded), or `column=category` per one-hot input. */
export function inputNames(recipe: PreprocessingRecipe): string[] {
  return recipe.features.flatMap((feature) => (feature.kind === 'numeric' ? encodedNames(feature) : oneHotNames(feature)));
}

/** One name per input before any numeric encoding (`model.onnx`'s inputs): a numeric column's name, or `column=category` per one-hot input. */
export function rawInputNames(recipe: PreprocessingRecipe): string[] {
  return recipe.features.flatMap((feature) => (feature.kind === 'numeric' ? [feature.name] : oneHotNames(feature)));
}

function oneHotNames(feature: Extract<PreprocessingRecipe['features'][number], { kind: 'categorical' }>): string[] {
  return [...feature.categories, ...(feature.pooled ? [POOLED_INPUT] : [])].map((category) => `${feature.name}=${category}`);
}

function encodedNames(feature: Extract<PreprocessingRecipe['features'][number], { kind: 'numeric' }>): string[] {
  const encoding = feature.encoding;
  if (encoding === undefined) return [feature.name];
  if (encoding.kind === 'periodic') return encoding.frequencies.flatMap((_, k) => [`${feature.name}:sin${k + 1}`, `${feature.name}:cos${k + 1}`]);
  return Array.from({ length: encodedWidth(encoding) }, (_, t) => `${feature.name}:bin${t + 1}`);
}

/** Network outputs: 1 for binary (P of the second class) and regression, one per class for multiclass. */
export function outputCount(recipe: PreprocessingRecipe): number {
  return recipe.task === 'multiclass' ? (recipe.classes?.length ?? 0) : 1;
}

function outputActivation(recipe: PreprocessingRecipe): 'sigmoid' | 'softmax' | 'linear' {
  return recipe.task === 'binary' ? 'sigmoid' : recipe.task === 'multiclass' ? 'softmax' : 'linear';
}

/**
 * A regression network learns the standardised target; folding the unscaling into the output layer
 * (kernel * std, bias * std + mean) makes the exported model answer in the target's own units.
 */
function unscaledOutput(recipe: PreprocessingRecipe, kernel: NamedWeights, bias: NamedWeights): [NamedWeights, NamedWeights] {
  const scaling = recipe.targetScaling;
  if (recipe.task !== 'regression' || scaling === undefined) return [kernel, bias];
  return [
    { ...kernel, values: Float32Array.from(kernel.values, (v) => v * scaling.std) },
    { ...bias, values: Float32Array.from(bias.values, (v) => v * scaling.std + scaling.mean) },
  ];
}

/**
 * Builds a `tf.sequential` with the trial's architecture and the given weights (checkpoint order:
 * kernel, bias per hidden layer, then the output layer); residual blocks give a functional model
 * (`export/residual-model.ts`). Layer names are fixed (`hidden_1`, ...,
 * `output`) so the weight names in model.json do not depend on tfjs's global layer counter.
 */
export function buildLayersModel(configuration: TrialConfiguration, recipe: PreprocessingRecipe, weights: readonly NamedWeights[]): tf.LayersModel {
  if (configuration.block === 'residual') {
    return buildResidualModel(configuration, recipe, weights, { units: outputCount(recipe), activation: outputActivation(recipe), unscale: (kernel, bias) => unscaledOutput(recipe, kernel, bias) });
  }
  const expected = 2 * (configuration.depth + 1);
  if (weights.length !== expected) throw new Error(`the checkpoint holds ${weights.length} weights, a network of depth ${configuration.depth} has ${expected}`);
  const model = tf.sequential({ name: 'rungwise_mlp' });
  const dense: { layer: tf.layers.Layer; kernel: NamedWeights; bias: NamedWeights }[] = [];
  const widths = hiddenWidths(configuration);
  for (let i = 0; i < configuration.depth; i++) {
    const activation: DenseActivation | 'linear' = configuration.activation === 'leakyRelu' ? 'linear' : configuration.activation;
    const layer = tf.layers.dense({
      name: `hidden_${i + 1}`,
      units: widths[i]!,
      activation,
      // Initial weights are overwritten at once; zeros keeps construction free of unseeded draws.
      kernelInitializer: 'zeros',
      ...(i === 0 ? { inputShape: [recipe.inputCount] } : {}),
    });
    model.add(layer);
    dense.push({ layer, kernel: weights[2 * i]!, bias: weights[2 * i + 1]! });
    if (configuration.activation === 'leakyRelu') model.add(tf.layers.leakyReLU({ name: `leaky_relu_${i + 1}`, alpha: LEAKY_RELU_SLOPE }));
  }
  const output = tf.layers.dense({
    name: 'output',
    units: outputCount(recipe),
    activation: outputActivation(recipe),
    kernelInitializer: 'zeros',
    ...(configuration.depth === 0 ? { inputShape: [recipe.inputCount] } : {}),
  });
  model.add(output);
  const [kernel, bias] = unscaledOutput(recipe, weights[2 * configuration.depth]!, weights[2 * configuration.depth + 1]!);
  dense.push({ layer: output, kernel, bias });
  for (const { layer, kernel: k, bias: b } of dense) {
    const tensors = [tf.tensor(k.values, k.shape), tf.tensor(b.values, b.shape)];
    try {
      layer.setWeights(tensors);
    } finally {
      tf.dispose(tensors);
    }
  }
  return model;
}

/** Writes `model.json` and `weights.bin` into `dir` (which must exist). */
export async function saveLayersModel(model: tf.LayersModel, dir: string): Promise<void> {
  await model.save(
    tf.io.withSaveHandler(async (artifacts) => {
      const weightData = artifacts.weightData === undefined ? new ArrayBuffer(0) : tf.io.CompositeArrayBuffer.join(artifacts.weightData);
      const modelJson: tf.io.ModelJSON = {
        modelTopology: artifacts.modelTopology ?? {},
        format: artifacts.format ?? 'layers-model',
        generatedBy: artifacts.generatedBy ?? `TensorFlow.js tfjs-layers v${tf.version.tfjs}`,
        convertedBy: null,
        weightsManifest: [{ paths: [`./${WEIGHTS_FILE}`], weights: artifacts.weightSpecs ?? [] }],
      };
      await writeFile(path.join(dir, WEIGHTS_FILE), Buffer.from(weightData));
      await writeFile(path.join(dir, MODEL_FILE), `${JSON.stringify(modelJson)}\n`);
      return { modelArtifactsInfo: { dateSaved: new Date(), modelTopologyType: 'JSON', weightDataBytes: weightData.byteLength } };
    }),
  );
}

/**
 * Loads `dir/model.json` and the weight files its manifest names (paths relative to model.json),
 * through a load handler that reads them from disk.
 */
export async function loadLayersModelFromDir(dir: string): Promise<tf.LayersModel> {
  const modelJson = JSON.parse(await readFile(path.join(dir, MODEL_FILE), 'utf8')) as tf.io.ModelJSON;
  const handler: tf.io.IOHandler = {
    load: () =>
      tf.io.getModelArtifactsForJSON(modelJson, async (manifest) => {
        const specs = manifest.flatMap((group) => group.weights);
        const buffers = await Promise.all(manifest.flatMap((group) => group.paths).map((file) => readFile(path.join(dir, file))));
        const joined = Buffer.concat(buffers);
        return [specs, joined.buffer.slice(joined.byteOffset, joined.byteOffset + joined.byteLength)];
      }),
  };
  return tf.loadLayersModel(handler);
}

/** Runs the model on row-major `rows x inputCount` inputs; returns its outputs row-major. */
export function predictRows(model: tf.LayersModel, x: Float32Array, rows: number, inputCount: number): Float32Array {
  if (rows === 0) return new Float32Array(0);
  return tf.tidy(() => {
    const output = model.predict(tf.tensor2d(x, [rows, inputCount])) as tf.Tensor;
    return Float32Array.from(output.dataSync());
  });
}
