import { describe, expect, it } from 'vitest';
import { buildRecipe, encodeFeatures, encodeTarget, meanAndStd, sortLabels, unscaleTarget } from '../src/data/recipe.js';

const features = [
  { name: 'size', kind: 'numeric' as const },
  { name: 'colour', kind: 'categorical' as const },
];

/** Training rows: size 1, 2, 3, 6 (mean 3, population std sqrt(3.5)); colour red x2, blue x1, green x1. */
const training = [
  { size: '1', colour: 'red', label: 'yes' },
  { size: '2', colour: 'blue', label: 'no' },
  { size: '3', colour: 'red', label: 'yes' },
  { size: '6', colour: 'green', label: 'no' },
];
/** Validation rows: a large size and an unseen colour, which must not move the statistics. */
const validation = [
  { size: '100', colour: 'purple', label: 'yes' },
  { size: '3', colour: 'blue', label: 'no' },
];

describe('preprocessing recipe', () => {
  const recipe = buildRecipe({ task: 'binary', target: 'label', features, trainingRows: training });

  it('takes mean and population std from the training rows only', () => {
    expect(recipe.features[0]).toEqual({ kind: 'numeric', name: 'size', mean: 3, std: Math.sqrt(3.5) });
    // The whole file (training + validation) would give a different mean: 115 / 6.
    const whole = meanAndStd([...training, ...validation].map((row) => Number(row.size)));
    expect(whole.mean).toBeCloseTo(115 / 6, 10);
    expect(recipe.features[0]).not.toMatchObject({ mean: whole.mean });
  });

  it('lists training categories in sorted order, one input each', () => {
    expect(recipe.features[1]).toEqual({ kind: 'categorical', name: 'colour', categories: ['blue', 'green', 'red'], fill: 'red' });
    expect(recipe.inputCount).toBe(4);
    expect(recipe.classes).toEqual(['no', 'yes']);
  });

  it('standardises numbers and one-hot encodes categories; an unseen category encodes as all zeros', () => {
    const x = encodeFeatures(recipe, validation, 'valid.csv');
    const std = Math.sqrt(3.5);
    expect(Array.from(x.subarray(0, 4))).toEqual([Math.fround((100 - 3) / std), 0, 0, 0]);
    expect(Array.from(x.subarray(4, 8))).toEqual([0, 1, 0, 0]);
  });

  it('fills a missing number with the training mean (encodes as 0) and a missing category with the training mode', () => {
    const x = encodeFeatures(recipe, [{ size: 'NA', colour: '' }], 'gaps.csv');
    expect(Array.from(x)).toEqual([0, 0, 0, 1]);
  });

  it('ignores missing training values when computing the mean and the mode', () => {
    const withGaps = buildRecipe({
      task: 'binary',
      target: 'label',
      features,
      trainingRows: [...training, { size: '?', colour: 'N/A', label: 'yes' }, { size: '', colour: 'blue', label: 'no' }, { size: 'null', colour: 'blue', label: 'no' }],
    });
    expect(withGaps.features[0]).toMatchObject({ mean: 3, std: Math.sqrt(3.5) });
    // blue now appears 3 times against red's 2.
    expect(withGaps.features[1]).toMatchObject({ fill: 'blue' });
  });

  it('uses std 1 for a constant column', () => {
    const constant = buildRecipe({ task: 'binary', target: 'label', features: [features[0]!], trainingRows: training.map((row) => ({ ...row, size: '5' })) });
    expect(constant.features[0]).toMatchObject({ mean: 5, std: 1 });
  });

  it('rejects rows lacking a recipe column, naming the column', () => {
    expect(() => encodeFeatures(recipe, [{ size: '1' }], 'new.csv')).toThrow("new.csv: column 'colour' missing; the model needs 'size', 'colour'");
  });

  it('rejects text in a numeric column, naming the line', () => {
    expect(() => encodeFeatures(recipe, [{ size: '1', colour: 'red' }, { size: 'big', colour: 'red' }], 'new.csv', [2, 9])).toThrow(
      "new.csv: line 9: column 'size' holds 'big', expected a number or a missing value",
    );
  });
});

describe('targets', () => {
  it('encodes class labels as their index in sorted order, numeric labels sorted numerically', () => {
    expect(sortLabels(['10', '9', '1', '9'])).toEqual(['1', '9', '10']);
    expect(sortLabels(['b', 'a', 'C'])).toEqual(['C', 'a', 'b']);
    const recipe = buildRecipe({ task: 'multiclass', target: 'k', features: [], trainingRows: [{ k: '10' }, { k: '9' }, { k: '1' }] });
    expect(recipe.classes).toEqual(['1', '9', '10']);
    expect(Array.from(encodeTarget(recipe, ['10', '1', '9'], 'f.csv'))).toEqual([2, 0, 1]);
  });

  it('rejects an unknown class and a missing target, naming the line', () => {
    const recipe = buildRecipe({ task: 'binary', target: 'label', features, trainingRows: training });
    expect(() => encodeTarget(recipe, ['yes', 'maybe'], 'f.csv', [2, 3])).toThrow("f.csv: line 3: target 'label' holds 'maybe', expected one of the classes no, yes");
    expect(() => encodeTarget(recipe, ['NA'], 'f.csv')).toThrow("f.csv: line 2: target 'label' is missing");
  });

  it('standardises a regression target with the training mean and std, and can undo it', () => {
    const recipe = buildRecipe({ task: 'regression', target: 'y', features: [], trainingRows: [{ y: '2' }, { y: '4' }, { y: '6' }, { y: '8' }] });
    // mean 5, population std sqrt(5)
    expect(recipe.targetScaling).toEqual({ mean: 5, std: Math.sqrt(5) });
    expect(recipe.classes).toBeUndefined();
    const y = encodeTarget(recipe, ['5', '10'], 'f.csv');
    expect(Array.from(y)).toEqual([0, Math.fround(5 / Math.sqrt(5))]);
    expect(unscaleTarget(recipe, y[1]!)).toBeCloseTo(10, 5);
    expect(() => encodeTarget(recipe, ['ten'], 'f.csv', [4])).toThrow("f.csv: line 4: target 'y' holds 'ten', expected a number for a regression task");
  });
});
