/** Seeded initial kernels (plain JavaScript, shared by the tfjs path and the engine). */
import type { Activation } from '../../core/configuration.js';
import type { Rng } from '../../random/streams.js';

/** How a layer's initial kernel is drawn. Biases always start at zero. */
export type InitRule = 'heNormal' | 'lecunNormal' | 'glorotUniform';

/**
 * Initialisation per activation.
 * Source: He, Zhang, Ren, Sun, "Delving Deep into Rectifiers", ICCV 2015, section 2.2 (std sqrt(2/fan_in));
 * Klambauer et al., "Self-Normalizing Neural Networks", NeurIPS 2017 (LeCun normal for selu);
 * Glorot, Bengio, "Understanding the difficulty of training deep feedforward neural networks", AISTATS 2010.
 */
export function initRuleFor(activation: Activation): InitRule {
  if (activation === 'selu') return 'lecunNormal';
  if (activation === 'tanh' || activation === 'sigmoid') return 'glorotUniform';
  return 'heNormal';
}

/** One standard normal draw by Box-Muller (the cosine branch only, so each draw uses exactly two uniforms). */
function standardNormal(rng: Rng): number {
  const u1 = 1 - rng(); // in (0, 1]: keeps log finite
  const u2 = rng();
  return Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * u2);
}

/**
 * Row-major fanIn x fanOut kernel values. Normals are untruncated (a draw beyond two standard
 * deviations is kept, unlike the truncated variants some libraries use).
 */
export function initialKernel(rule: InitRule, fanIn: number, fanOut: number, rng: Rng): Float32Array {
  const values = new Float32Array(fanIn * fanOut);
  if (rule === 'glorotUniform') {
    const limit = Math.sqrt(6 / (fanIn + fanOut));
    for (let i = 0; i < values.length; i++) values[i] = (2 * rng() - 1) * limit;
    return values;
  }
  const std = Math.sqrt((rule === 'heNormal' ? 2 : 1) / fanIn);
  for (let i = 0; i < values.length; i++) values[i] = std * standardNormal(rng);
  return values;
}


/** The name prefix of layer `layer`'s variables (`<prefix>/kernel`, `<prefix>/bias`); layer `depth` is the output layer. */
export function layerPrefix(trialId: number, layer: number, depth: number): string {
  return layer < depth ? `t${trialId}/dense${layer}` : `t${trialId}/output`;
}
