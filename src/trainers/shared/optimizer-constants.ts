/** The optimizers' fixed constants, shared by the tfjs path and the engine. */

/** Momentum of the 'momentum' optimizer (the study definition fixes it). */
export const MOMENTUM = 0.9;
/** Source: Kingma, Ba, "Adam: A Method for Stochastic Optimization", ICLR 2015, Algorithm 1 (defaults). */
export const ADAM = { beta1: 0.9, beta2: 0.999, epsilon: 1e-8 } as const;
