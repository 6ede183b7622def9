import { describe, expect, it } from 'vitest';
import { stream } from '../src/random/streams.js';
import { decode, encode, configurationAt, pointOfConfiguration, snap, spaceDimensions, unitOf, valueAt, type Dimension } from '../src/space/dimensions.js';
import { drawInteger } from '../src/space/sample.js';
import { spaceSchema } from '../src/space/schema.js';

const space = spaceSchema.parse({
  depth: { min: 1, max: 4 },
  width: { min: 4, max: 256, log: true },
  activation: ['relu', 'tanh', 'elu'],
  learningRate: { min: 1e-4, max: 0.5 },
  batchSize: [32, 64, 128],
  optimizer: ['sgd', 'adam'],
  l2: { min: 1e-6, max: 1e-2 },
});

describe('search space dimensions', () => {
  it('lists the space in drawing order, leaving out absent l2 and dropout', () => {
    expect(spaceDimensions(space).map((d) => d.name)).toEqual(['depth', 'width', 'activation', 'learningRate', 'batchSize', 'optimizer', 'l2']);
    const { l2: _l2, ...withoutL2 } = space;
    expect(spaceDimensions({ ...withoutL2, dropout: { min: 0, max: 0.5 } }).map((d) => d.name).slice(-1)).toEqual(['dropout']);
  });

  it('maps the corners of the cube to the ends of every range', () => {
    expect(configurationAt(space, [0, 0, 0, 0, 0, 0, 0])).toEqual({
      depth: 1, width: 4, activation: 'relu', learningRate: expect.closeTo(1e-4, 15), batchSize: 32, optimizer: 'sgd', l2: expect.closeTo(1e-6, 15), dropout: 0,
    });
    expect(configurationAt(space, [1, 1, 1, 1, 1, 1, 1])).toMatchObject({ depth: 4, width: 256, activation: 'elu', batchSize: 128, optimizer: 'adam' });
    expect(configurationAt(space, [1, 1, 1, 1, 1, 1, 1]).learningRate).toBeCloseTo(0.5, 12);
  });

  it('puts a log scale\'s midpoint at the geometric mean: learning rate sqrt(1e-4 * 0.5)', () => {
    expect(configurationAt(space, [0, 0, 0, 0.5, 0, 0, 0]).learningRate).toBeCloseTo(Math.sqrt(1e-4 * 0.5), 12);
  });

  it('gives an integer the same value random drawing gives for the same uniform number', () => {
    const width = spaceDimensions(space)[1]!;
    const rng = stream(1, 'u');
    for (let i = 0; i < 200; i++) {
      const u = rng();
      expect(valueAt(width, u)).toBe(drawInteger(space.width, u));
    }
  });

  it('maps a configuration to the centre of its cells and back to the same configuration', () => {
    const rng = stream(2, 'points');
    for (let i = 0; i < 100; i++) {
      const params = configurationAt(space, spaceDimensions(space).map(() => rng()));
      const point = pointOfConfiguration(space, params);
      const again = configurationAt(space, point);
      expect({ ...again, learningRate: 0, l2: 0 }).toEqual({ ...params, learningRate: 0, l2: 0 });
      expect(again.learningRate).toBeCloseTo(params.learningRate, 12);
      expect(snap(spaceDimensions(space), point)).toEqual(point.map((u, d) => (d === 3 || d === 6 ? expect.closeTo(u, 12) : u)));
    }
  });

  it('centres category k of K at (k + 1/2) / K and integer k of a linear range in its cell', () => {
    const depth = spaceDimensions(space)[0]!;
    expect(unitOf(depth, 1)).toBe(0.125);
    expect(unitOf(depth, 4)).toBe(0.875);
    expect(unitOf(spaceDimensions(space)[2]!, 'tanh')).toBe(0.5);
  });

  it('serves any list of dimensions: Branin\'s two reals', () => {
    const branin: Dimension[] = [
      { kind: 'numeric', name: 'x1', min: -5, max: 10, log: false, integer: false },
      { kind: 'numeric', name: 'x2', min: 0, max: 15, log: false, integer: false },
    ];
    expect(decode(branin, [0.5, 0.2])).toEqual({ x1: 2.5, x2: 3 });
    expect(encode(branin, { x1: 2.5, x2: 3 })).toEqual([0.5, 0.2]);
  });

  it('names a value outside a category list', () => {
    expect(() => unitOf(spaceDimensions(space)[2]!, 'swish')).toThrow(/activation: swish is not one of relu, tanh, elu/);
  });
});
