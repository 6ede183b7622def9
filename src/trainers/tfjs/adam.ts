import * as tf from '@tensorflow/tfjs';

/** The fields of tfjs 4.22's AdamOptimizer this subclass reads (private in its typings). */
interface AdamState {
  accBeta1: tf.Variable;
  accBeta2: tf.Variable;
  accumulatedFirstMoment: ({ originalName: string; variable: tf.Variable } | undefined)[];
  accumulatedSecondMoment: ({ originalName: string; variable: tf.Variable } | undefined)[];
}

/**
 * tfjs's Adam with its constants held as tensors made once. The stock `applyGradients` turns
 * beta1, 1 - beta1, beta2, 1 - beta2, epsilon and -learningRate into new scalar tensors for every
 * variable at every step (about 28 uploads per step for a one-hidden-layer network), which costs
 * as much as the arithmetic on small networks. The operations, their order and the float32
 * constants are the same as tfjs 4.22's `AdamOptimizer.applyGradients`, so results are bitwise
 * identical; the slot variables are the inherited ones, so `getWeights`/`setWeights` (checkpoints)
 * work unchanged.
 */
export class ConstantCachingAdam extends tf.AdamOptimizer {
  private constants: Record<'one' | 'beta1' | 'oneMinusBeta1' | 'beta2' | 'oneMinusBeta2' | 'epsilon' | 'negativeLearningRate', tf.Scalar> | undefined;

  private scalars(): NonNullable<ConstantCachingAdam['constants']> {
    this.constants ??= tf.tidy(() => {
      const made = {
        one: tf.scalar(1),
        beta1: tf.scalar(this.beta1),
        oneMinusBeta1: tf.scalar(1 - this.beta1),
        beta2: tf.scalar(this.beta2),
        oneMinusBeta2: tf.scalar(1 - this.beta2),
        epsilon: tf.scalar(this.epsilon),
        negativeLearningRate: tf.scalar(-this.learningRate),
      };
      for (const tensor of Object.values(made)) tf.keep(tensor);
      return made;
    });
    return this.constants;
  }

  override applyGradients(variableGradients: tf.NamedTensorMap | { name: string; tensor: tf.Tensor }[]): void {
    const state = this as unknown as AdamState;
    const c = this.scalars();
    const names = Array.isArray(variableGradients) ? variableGradients.map((v) => v.name) : Object.keys(variableGradients);
    tf.tidy(() => {
      const oneMinusAccBeta1 = tf.sub(c.one, state.accBeta1);
      const oneMinusAccBeta2 = tf.sub(c.one, state.accBeta2);
      names.forEach((name, i) => {
        const value = tf.engine().registeredVariables[name]!;
        state.accumulatedFirstMoment[i] ??= { originalName: `${name}/m`, variable: tf.tidy(() => tf.zerosLike(value).variable(false)) };
        state.accumulatedSecondMoment[i] ??= { originalName: `${name}/v`, variable: tf.tidy(() => tf.zerosLike(value).variable(false)) };
        const gradient = Array.isArray(variableGradients) ? variableGradients[i]!.tensor : variableGradients[name];
        if (gradient == null) return;
        const firstMoment = state.accumulatedFirstMoment[i]!.variable;
        const secondMoment = state.accumulatedSecondMoment[i]!.variable;
        const newFirstMoment = tf.add(tf.mul(firstMoment, c.beta1), tf.mul(gradient, c.oneMinusBeta1));
        const newSecondMoment = tf.add(tf.mul(secondMoment, c.beta2), tf.mul(tf.square(gradient), c.oneMinusBeta2));
        const biasCorrectedFirstMoment = tf.div(newFirstMoment, oneMinusAccBeta1);
        const biasCorrectedSecondMoment = tf.div(newSecondMoment, oneMinusAccBeta2);
        firstMoment.assign(newFirstMoment);
        secondMoment.assign(newSecondMoment);
        const step = tf.mul(tf.div(biasCorrectedFirstMoment, tf.add(tf.sqrt(biasCorrectedSecondMoment), c.epsilon)), c.negativeLearningRate);
        value.assign(tf.add(step, value));
      });
      state.accBeta1.assign(tf.mul(state.accBeta1, c.beta1));
      state.accBeta2.assign(tf.mul(state.accBeta2, c.beta2));
    });
    this.incrementIterations();
  }

  /** Sets the learning rate of the next steps (a learning-rate schedule calls this once per epoch). */
  setLearningRate(learningRate: number): void {
    if (learningRate === this.learningRate) return;
    this.learningRate = learningRate;
    if (!this.constants) return;
    this.constants.negativeLearningRate.dispose();
    this.constants.negativeLearningRate = tf.keep(tf.scalar(-learningRate));
  }

  override dispose(): void {
    super.dispose();
    if (this.constants) tf.dispose(Object.values(this.constants));
    this.constants = undefined;
  }
}
