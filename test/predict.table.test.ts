import { describe, expect, it } from 'vitest';
import type { CsvTable } from '../src/data/csv.js';
import type { PreprocessingRecipe } from '../src/data/types.js';
import { buildConfiguration, type ExportConfiguration } from '../src/export/configuration.js';
import { interpretOutputs } from '../src/export/hand-off.js';
import { predictionTable, predictionsCsv } from '../src/export/predictions.js';
import type { StudyDocument } from '../src/store/types.js';
import type { TrialRecord } from '../src/core/trial.js';

const input: CsvTable = { file: 'new.csv', columns: ['x'], rows: [{ x: '1' }, { x: '2' }, { x: '3' }], lines: [2, 3, 5] };

function configurationFor(recipe: PreprocessingRecipe, outputs: Partial<ExportConfiguration['outputs']> = {}): ExportConfiguration {
  return { recipe, outputs } as ExportConfiguration;
}

/** Prediction rows for raw network outputs, through the same reading of outputs the library's `predict` uses. */
function tableFor(configuration: ExportConfiguration, outputs: Float32Array, keep: string[] = []) {
  return predictionTable(configuration, input, interpretOutputs(configuration, outputs, input.rows.length), keep);
}

describe('prediction rows', () => {
  it('binary: predicts the second class when its probability is at least 0.5, with both probabilities', () => {
    const recipe: PreprocessingRecipe = { task: 'binary', target: 'fails', features: [], inputCount: 0, classes: ['no', 'yes'] };
    const table = tableFor(configurationFor(recipe), Float32Array.from([0.25, 0.5, 0.75]));
    expect(table.header).toEqual(['line', 'predicted', 'p_no', 'p_yes']);
    expect(table.rows).toEqual([
      ['2', 'no', '0.75', '0.25'],
      ['3', 'yes', '0.5', '0.5'],
      ['5', 'yes', '0.25', '0.75'],
    ]);
  });

  it('multiclass: the most probable class (the first on ties) and one column per class, quoted when a label holds a comma', () => {
    const recipe: PreprocessingRecipe = { task: 'multiclass', target: 'kind', features: [], inputCount: 0, classes: ['a', 'b,c', 'd'] };
    const outputs = Float32Array.from([0.5, 0.25, 0.25, 0.25, 0.5, 0.25, 0.375, 0.25, 0.375]);
    const text = predictionsCsv(tableFor(configurationFor(recipe), outputs));
    expect(text).toBe('line,predicted,p_a,"p_b,c",p_d\n2,a,0.5,0.25,0.25\n3,"b,c",0.25,0.5,0.25\n5,a,0.375,0.25,0.375\n');
  });

  it('regression: the model output as it is (already in the target units)', () => {
    const recipe: PreprocessingRecipe = { task: 'regression', target: 'flow', features: [], inputCount: 0, targetScaling: { mean: 10, std: 2 } };
    const table = tableFor(configurationFor(recipe), Float32Array.from([12.5, 8, 10]));
    expect(table).toEqual({ header: ['line', 'predicted'], rows: [['2', '12.5'], ['3', '8'], ['5', '10']] });
  });

  it('binary: a decision threshold chosen at export replaces 0.5', () => {
    const recipe: PreprocessingRecipe = { task: 'binary', target: 'fails', features: [], inputCount: 0, classes: ['no', 'yes'] };
    const table = tableFor(configurationFor(recipe, { threshold: 0.7 } as Partial<ExportConfiguration['outputs']>), Float32Array.from([0.25, 0.5, 0.75]));
    expect(table.rows.map((row) => row[1])).toEqual(['no', 'no', 'yes']);
  });

  it('kept columns follow the line number, copied as written', () => {
    const recipe: PreprocessingRecipe = { task: 'regression', target: 'flow', features: [], inputCount: 0 };
    const table = tableFor(configurationFor(recipe), Float32Array.from([1, 2, 3]), ['x']);
    expect(table.header).toEqual(['line', 'x', 'predicted']);
    expect(table.rows).toEqual([['2', '1', '1'], ['3', '2', '2'], ['5', '3', '3']]);
  });
});

describe('configuration of an export', () => {
  it('names every network input in order, one-hot inputs as column=category', () => {
    const recipe: PreprocessingRecipe = {
      task: 'binary',
      target: 'fails',
      features: [
        { kind: 'numeric', name: 'hours', mean: 10, std: 2 },
        { kind: 'categorical', name: 'site', categories: ['north', 'south'], fill: 'north' },
        { kind: 'numeric', name: 'temp', mean: 50, std: 5 },
      ],
      inputCount: 4,
      classes: ['no', 'yes'],
    };
    const trial = {
      id: 7,
      configuration: { depth: 1, width: 4, activation: 'relu', learningRate: 0.01, batchSize: 16, optimizer: 'adam', l2: 0, dropout: 0 },
      seed: 123,
      epochsTrained: 2,
      score: 0.8,
      curve: [{ epoch: 2, trainLoss: 0.5, validationLoss: 0.6, metrics: { auc: 0.8 }, seconds: 0.1 }],
    } as unknown as TrialRecord;
    const doc = { name: 'pumps', goal: { metric: 'auc', better: 'higher' }, recipe } as unknown as StudyDocument;
    const configuration = buildConfiguration(doc, trial, 2, undefined);
    expect(configuration.inputs).toEqual(['hours', 'site=north', 'site=south', 'temp']);
    expect(configuration).toMatchObject({ goal: { metric: 'auc', better: 'higher' }, score: 0.8 });
    expect(configuration.validation).toEqual({ epoch: 2, trainLoss: 0.5, validationLoss: 0.6, metrics: { auc: 0.8 } });
    expect(configuration.outputs).toMatchObject({ task: 'binary', classes: ['no', 'yes'] });
    expect(configuration.outputs.meaning).toContain("probability of class 'yes'");
  });
});
