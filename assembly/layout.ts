// The trial descriptor: 32-bit words at `net` that JavaScript writes once per trial
// (src/trainers/engine/layout.ts holds the same offsets). Pointers are byte addresses in this memory.

export const DEPTH = 0;
export const ACTIVATION = 1;
export const TASK = 2;
export const OPTIMIZER = 3;
export const OUTPUTS = 4;
export const DROPOUT = 5;
export const UPDATE = 6;
export const L2 = 7;
export const TRAIN_X = 8;
export const TRAIN_Y = 9;
export const ORDER = 10;
export const BATCH_X = 11;
export const BATCH_Y = 12;
export const SCRATCH = 13;
/** Per-class training-loss weights (one float32 per class, two for binary), 0 when rows weigh the same. */
export const CLASS_WEIGHTS = 14;

// float32 words
export const NEGATIVE_LEARNING_RATE = 16;
export const TWICE_L2 = 17;
export const MOMENTUM_FACTOR = 18;
export const BETA1 = 19;
export const ONE_MINUS_BETA1 = 20;
export const BETA2 = 21;
export const ONE_MINUS_BETA2 = 22;
export const EPSILON = 23;
export const POWER1 = 24;
export const POWER2 = 25;

// residual blocks (src/trainers/shared/layer-plan.ts): 1 when the layers are residual blocks, and
// the residual stream, its gradient and the gradient of a normalisation's output (rows x width each)
export const BLOCKS = 40;
export const RESIDUAL = 41;
export const RESIDUAL_DELTA = 42;
export const NORM_DELTA = 43;

// one record of LAYER_WORDS words per dense layer from word LAYERS on, the output layer last
export const LAYERS = 48;
export const LAYER_WORDS = 32;
export const FAN_IN = 0;
export const FAN_OUT = 1;
export const IN_STRIDE = 2;
export const OUT_STRIDE = 3;
export const KERNEL = 4;
export const BIAS = 5;
export const KERNEL_GRADIENT = 6;
export const BIAS_GRADIENT = 7;
export const KERNEL_SLOT1 = 8;
export const BIAS_SLOT1 = 9;
export const KERNEL_SLOT2 = 10;
export const BIAS_SLOT2 = 11;
export const PRE_ACTIVATION = 12;
export const ACTIVATED = 13;
export const OUTPUT = 14;
export const MASK = 15;
export const DELTA = 16;
// the layer normalisation a layer reads (residual blocks; 0 otherwise), over its fan-in
export const NORM_GAIN = 17;
export const NORM_BIAS = 18;
export const NORM_GAIN_GRADIENT = 19;
export const NORM_BIAS_GRADIENT = 20;
export const NORM_GAIN_SLOT1 = 21;
export const NORM_BIAS_SLOT1 = 22;
export const NORM_GAIN_SLOT2 = 23;
export const NORM_BIAS_SLOT2 = 24;
/** (x - mean) / sqrt(variance + epsilon), rows x fan-in. */
export const NORMALISED = 25;
/** gain x normalised + bias, rows x fan-in. */
export const NORM_OUTPUT = 26;
/** 1 / sqrt(variance + epsilon), one float per row. */
export const INVERSE_STD = 27;
/** The activation of NORM_OUTPUT, when the activation follows the normalisation (before the output layer). */
export const NORM_ACTIVATED = 28;

// @ts-ignore: decorator
@inline export function word(net: usize, index: i32): i32 {
  return load<i32>(net + (<usize>index << 2));
}

// @ts-ignore: decorator
@inline export function pointer(net: usize, index: i32): usize {
  return <usize>load<i32>(net + (<usize>index << 2));
}

// @ts-ignore: decorator
@inline export function constant(net: usize, index: i32): f32 {
  return load<f32>(net + (<usize>index << 2));
}

// @ts-ignore: decorator
@inline export function setConstant(net: usize, index: i32, value: f32): void {
  store<f32>(net + (<usize>index << 2), value);
}

// @ts-ignore: decorator
@inline export function layerField(net: usize, layer: i32, field: i32): i32 {
  return load<i32>(net + (<usize>(LAYERS + layer * LAYER_WORDS + field) << 2));
}

// Regularisers searched with the rest (assembly/regularisers.ts), taken from the top of the free
// words below LAYERS: 0 or absent means off, and an off regulariser leaves every step as before.
/** 1 when the optimizer updates wait until every layer's gradient is known (weight decay or clipping on). */
export const UPDATE_AFTER_BACKWARD = 31;
/** float32: this step's decoupled weight decay factor (lambda times the schedule's multiplier), 0 when off. */
export const WEIGHT_DECAY_STEP = 30;
/** float32: the largest gradient norm over all weights and biases, 0 when off. */
export const MAX_GRADIENT_NORM = 29;
/** float32: label smoothing's weight on the true label, 1 - epsilon (0 when off). */
export const SMOOTHING_KEEP = 28;
/** float32: label smoothing's share for every class, epsilon / classes (two for binary). */
export const SMOOTHING_SHARE = 27;
