/**
 * The trial descriptor the engine reads: 32-bit words, the same offsets as assembly/layout.ts.
 * A trial is laid out once: descriptor, shuffle order, batch buffers, then per dense layer its
 * kernel, bias, gradients, optimizer slots and activation buffers, every buffer 16-byte aligned
 * and every row padded to whole SIMD lanes (padding stays zero).
 */
export const WORD = {
  depth: 0,
  activation: 1,
  task: 2,
  optimizer: 3,
  outputs: 4,
  dropout: 5,
  update: 6,
  l2: 7,
  trainX: 8,
  trainY: 9,
  order: 10,
  batchX: 11,
  batchY: 12,
  scratch: 13,
  /** Per-class training-loss weights, 0 when rows weigh the same. */
  classWeights: 14,
  /** 1 for residual blocks (then `depth` counts blocks), 0 for the plain stack. */
  blocks: 40,
  /** Residual blocks: the residual stream, its gradient, and the gradient of a normalisation's output. */
  residual: 41,
  residualDelta: 42,
  normDelta: 43,
} as const;

/** float32 words of the descriptor. */
export const CONSTANT = {
  negativeLearningRate: 16,
  twiceL2: 17,
  momentum: 18,
  beta1: 19,
  oneMinusBeta1: 20,
  beta2: 21,
  oneMinusBeta2: 22,
  epsilon: 23,
  power1: 24,
  power2: 25,
} as const;

export const LAYERS_WORD = 48;
export const LAYER_WORDS = 32;

/** Fields of one layer record. */
export const LAYER = {
  fanIn: 0,
  fanOut: 1,
  inStride: 2,
  outStride: 3,
  kernel: 4,
  bias: 5,
  kernelGradient: 6,
  biasGradient: 7,
  kernelSlot1: 8,
  biasSlot1: 9,
  kernelSlot2: 10,
  biasSlot2: 11,
  preActivation: 12,
  activated: 13,
  output: 14,
  mask: 15,
  delta: 16,
  /** The layer normalisation the layer reads (residual blocks), over its fan-in. */
  normGain: 17,
  normBias: 18,
  normGainGradient: 19,
  normBiasGradient: 20,
  normGainSlot1: 21,
  normBiasSlot1: 22,
  normGainSlot2: 23,
  normBiasSlot2: 24,
  normalised: 25,
  normOutput: 26,
  inverseStd: 27,
  normActivated: 28,
} as const;

export type LayerField = keyof typeof LAYER;

/** The word index of `field` of layer `layer` (the output layer is layer `depth`). */
export const layerWord = (layer: number, field: LayerField): number => LAYERS_WORD + layer * LAYER_WORDS + LAYER[field];

/** Bytes of the descriptor of a network of `layers` dense layers (the output layer included). */
export const descriptorBytes = (layers: number): number => (LAYERS_WORD + layers * LAYER_WORDS) * 4;

/**
 * Descriptor words of the regularisers (assembly/regularisers.ts), taken from the top of the free
 * words below the layer records; 0 means off.
 */
export const REGULARISER_WORD = {
  /** int: 1 when updates wait for the whole backward pass (weight decay or clipping on). */
  updateAfterBackward: 31,
  /** float32: this step's decoupled weight decay factor. */
  weightDecayStep: 30,
  /** float32: the largest gradient norm. */
  maxGradientNorm: 29,
  /** float32: label smoothing's 1 - epsilon (0: off). */
  smoothingKeep: 28,
  /** float32: label smoothing's epsilon / classes. */
  smoothingShare: 27,
} as const;
