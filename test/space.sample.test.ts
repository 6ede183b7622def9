import { describe, expect, it } from 'vitest';
import { drawInteger, logUniform, configurationForTrial, sampleConfiguration } from '../src/space/sample.js';
import { configurationAt } from '../src/space/dimensions.js';
import { spaceSchema, type SearchSpace } from '../src/space/schema.js';
import { stream } from '../src/random/streams.js';

const space: SearchSpace = spaceSchema.parse({
  depth: { min: 1, max: 4 },
  width: { min: 8, max: 256, log: true },
  activation: ['relu', 'tanh', 'elu'],
  learningRate: { min: 1e-4, max: 1e-1 },
  batchSize: [16, 32, 64],
  optimizer: ['sgd', 'adam'],
  l2: { min: 1e-6, max: 1e-2 },
  dropout: { min: 0, max: 0.5 },
});

describe('configurationForTrial', () => {
  it('gives the same configuration for the same seed and trial id', () => {
    expect(configurationForTrial(space, 7, 3)).toEqual(configurationForTrial(space, 7, 3));
  });

  it('gives different configurations to different trial ids and different seeds', () => {
    expect(configurationForTrial(space, 7, 3)).not.toEqual(configurationForTrial(space, 7, 4));
    expect(configurationForTrial(space, 7, 3)).not.toEqual(configurationForTrial(space, 8, 3));
  });

  it('does not depend on which trials were drawn before', () => {
    const alone = configurationForTrial(space, 1, 9);
    for (let id = 0; id < 9; id++) configurationForTrial(space, 1, id);
    expect(configurationForTrial(space, 1, 9)).toEqual(alone);
  });
});

describe('sampleConfiguration', () => {
  const draws = Array.from({ length: 2000 }, (_, id) => configurationForTrial(space, 0, id));

  it('keeps every field inside its range or list', () => {
    for (const p of draws) {
      expect(Number.isInteger(p.depth) && p.depth >= 1 && p.depth <= 4).toBe(true);
      expect(Number.isInteger(p.width) && p.width >= 8 && p.width <= 256).toBe(true);
      expect(space.activation).toContain(p.activation);
      expect(space.batchSize).toContain(p.batchSize);
      expect(space.optimizer).toContain(p.optimizer);
      expect(p.learningRate >= 1e-4 && p.learningRate <= 1e-1).toBe(true);
      expect(p.l2 >= 1e-6 && p.l2 <= 1e-2).toBe(true);
      expect(p.dropout >= 0 && p.dropout <= 0.5).toBe(true);
    }
  });

  it('reaches both ends of integer ranges and every choice', () => {
    expect(new Set(draws.map((p) => p.depth))).toEqual(new Set([1, 2, 3, 4]));
    expect(Math.min(...draws.map((p) => p.width))).toBe(8);
    expect(Math.max(...draws.map((p) => p.width))).toBe(256);
    expect(new Set(draws.map((p) => p.activation)).size).toBe(3);
  });

  it('spreads log-uniform learning rates evenly over decades (about a third each of [1e-4, 1e-1])', () => {
    const perDecade = [0, 0, 0];
    for (const p of draws) perDecade[Math.min(2, Math.floor(Math.log10(p.learningRate) + 4))]!++;
    // Expected 666.7 each; binomial sd is about 21, so +-100 is a generous (about 5 sd) tolerance.
    for (const count of perDecade) expect(Math.abs(count - 2000 / 3)).toBeLessThan(100);
  });

  it('draws log-scaled widths as often below the geometric middle as above it', () => {
    // Geometric middle of [8, 256] is 45.25: a log-uniform draw is below it half the time, a uniform one 15% of the time.
    const below = draws.filter((p) => p.width <= 45).length;
    expect(Math.abs(below - 1000)).toBeLessThan(120);
  });

  it('sets l2 and dropout to 0 when the space leaves them out, without moving the other draws', () => {
    const { l2: _l2, dropout: _dropout, ...rest } = space;
    const bare: SearchSpace = rest;
    const withOptional = sampleConfiguration(space, stream(5, 'params', 0));
    const without = sampleConfiguration(bare, stream(5, 'params', 0));
    expect(without).toEqual({ ...withOptional, l2: 0, dropout: 0 });
  });
});

describe('drawing helpers', () => {
  it('covers an integer range inclusively at u = 0 and u just below 1', () => {
    expect(drawInteger({ min: 2, max: 5, log: false }, 0)).toBe(2);
    expect(drawInteger({ min: 2, max: 5, log: false }, 0.999999)).toBe(5);
    expect(drawInteger({ min: 8, max: 256, log: true }, 0)).toBe(8);
    expect(drawInteger({ min: 8, max: 256, log: true }, 0.999999)).toBe(256);
  });

  it('maps u = 0.5 of a log range to its geometric middle', () => {
    expect(logUniform(1e-4, 1e-2, 0.5)).toBeCloseTo(1e-3, 12);
    expect(logUniform(0.01, 0.01, 0.3)).toBe(0.01);
  });
});

describe('the scale of real ranges (log key)', () => {
  const base = { depth: { min: 1, max: 2 }, width: { min: 8, max: 8 }, activation: ['relu'] };
  const uniformRates = spaceSchema.parse({ ...base, learningRate: { min: 1e-4, max: 1e-1, log: false }, l2: { min: 1e-6, max: 1e-2, log: false }, dropout: { min: 0.01, max: 0.5, log: true } });
  const defaults = spaceSchema.parse({ ...base, learningRate: { min: 1e-4, max: 1e-1 }, l2: { min: 1e-6, max: 1e-2 }, dropout: { min: 0.01, max: 0.5 } });
  const explicit = spaceSchema.parse({ ...base, learningRate: { min: 1e-4, max: 1e-1, log: true }, l2: { min: 1e-6, max: 1e-2, log: true }, dropout: { min: 0.01, max: 0.5, log: false } });

  it('draws exactly as before when log is left out, and the same as the explicit default', () => {
    for (let id = 0; id < 50; id++) {
      const rng = stream(3, 'params', id);
      const before = [rng(), rng(), rng(), rng(), rng(), rng(), rng(), rng()];
      const drawn = configurationForTrial(defaults, 3, id);
      // The formulas random drawing used before the log key: log-uniform learning rate and L2, uniform dropout.
      expect(drawn.learningRate).toBe(logUniform(1e-4, 1e-1, before[3]!));
      expect(drawn.l2).toBe(logUniform(1e-6, 1e-2, before[6]!));
      expect(drawn.dropout).toBe(0.01 + before[7]! * (0.5 - 0.01));
      expect(configurationForTrial(explicit, 3, id)).toEqual(drawn);
    }
  });

  it('maps u = 0.5 to the arithmetic middle with log: false and to the geometric middle with log: true', () => {
    // Source: definition of the uniform and log-uniform distributions (middle of [a, b]: (a + b) / 2, sqrt(a b)).
    const point = [0.5, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5];
    const uniformAt = configurationAt(uniformRates, point);
    expect(uniformAt.learningRate).toBeCloseTo((1e-4 + 1e-1) / 2, 12);
    expect(uniformAt.l2).toBeCloseTo((1e-6 + 1e-2) / 2, 12);
    expect(uniformAt.dropout).toBeCloseTo(Math.sqrt(0.01 * 0.5), 12);
    const defaultAt = configurationAt(defaults, point);
    expect(defaultAt.learningRate).toBeCloseTo(Math.sqrt(1e-4 * 1e-1), 12);
    expect(defaultAt.dropout).toBeCloseTo((0.01 + 0.5) / 2, 12);
  });

  it('puts about half of uniform learning-rate draws above the middle of the range (a log scale puts 1/3 per decade)', () => {
    const rates = Array.from({ length: 2000 }, (_, id) => configurationForTrial(uniformRates, 0, id).learningRate);
    const above = rates.filter((rate) => rate > (1e-4 + 1e-1) / 2).length / rates.length;
    expect(above).toBeGreaterThan(0.45);
    expect(above).toBeLessThan(0.55);
  });

  it('refuses log: true on a dropout range that starts at 0', () => {
    const parsed = spaceSchema.safeParse({ ...base, learningRate: { min: 1e-4, max: 1e-1 }, dropout: { min: 0, max: 0.5, log: true } });
    expect(parsed.success).toBe(false);
    expect(parsed.error?.issues[0]?.message).toBe('found 0, expected above 0 with log: true');
  });
});
