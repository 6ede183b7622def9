import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { parallelData, progressRows, robustDomain, rungRows, shortNumber } from '../src/plot/data.js';
import { variedParameterAxes } from '../src/plot/labels.js';
import { logAxisDomain } from '../src/plot/charts/parameters.js';
import { learningCurvesChart, parallelChart, parametersChart, progressChart, rungsChart, studyCharts } from '../src/plot/specs.js';
import type { StudyDocument } from '../src/store/types.js';

function fixture(name: string): StudyDocument {
  return JSON.parse(readFileSync(new URL(`./fixtures/studies/${name}.json`, import.meta.url), 'utf8')) as StudyDocument;
}

/** Random search, maximise AUC. Finish order: trial 2, 1, 4 (diverged, no score), 3, 5 (3 and 5 end at the same time). */
const randomFive = fixture('random-five');
/** Successive halving, eta 3, minimise log loss: 9 trials at rung 0 (1 epoch), 3 at rung 1 (3 epochs), 1 at rung 2 (9 epochs). */
const halvingNine = fixture('halving-nine');
/** Hyperband, 27 epochs at most, eta 3, 49 trials in brackets 0..3. */
const hyperband = fixture('hyperband-generated');

describe('progress chart', () => {
  it('numbers finished trials by end time then id, skips unscored ones, and keeps the best so far when maximising', () => {
    expect(progressRows(randomFive).map((r) => [r.order, r.trialId, r.objective, r.bestSoFar])).toEqual([
      [1, 2, 0.74, 0.74],
      [2, 1, 0.81, 0.81],
      // order 3 is trial 4, which diverged and has no score
      [4, 3, 0.79, 0.81],
      [5, 5, 0.86, 0.86],
    ]);
  });

  it('keeps the lowest so far when minimising', () => {
    // Finish order by endedAt (minute 10 + id + 5 * rung): 1, 3, 4, 6, 2, 8, 9, 7, 5.
    expect(progressRows(halvingNine).map((r) => [r.trialId, r.bestSoFar])).toEqual([
      [1, 0.62],
      [3, 0.62],
      [4, 0.62],
      [6, 0.59],
      [2, 0.37],
      [8, 0.37],
      [9, 0.37],
      [7, 0.37],
      [5, 0.22],
    ]);
  });

  it('draws points coloured by status under a step line of the best so far', () => {
    const chart = progressChart(randomFive)!;
    expect(chart.name).toBe('progress');
    expect(chart.spec).toMatchObject({
      layer: [
        { mark: { type: 'line', interpolate: 'step-after' }, encoding: { x: { field: 'order', title: 'trials finished (in order of finishing)' }, y: { field: 'bestSoFar' } } },
        {
          mark: { type: 'point' },
          encoding: {
            y: { field: 'objective', title: 'validation AUC, higher is better' },
            color: { field: 'status', scale: { domain: ['completed'] } },
          },
        },
      ],
    });
    expect(chart.spec).toMatchObject({ data: { values: progressRows(randomFive) } });
  });
});

describe('learning curves chart', () => {
  it('draws one line per trial of the objective metric against epoch, coloured by status under random search', () => {
    const chart = learningCurvesChart(randomFive)!;
    expect(chart.spec).toMatchObject({
      encoding: {
        x: { field: 'epoch', title: 'epoch' },
        y: { field: 'value', title: 'validation AUC' },
        color: { field: 'status' },
      },
      layer: [
        { mark: { type: 'line' }, encoding: { detail: { field: 'trialId' } } },
        // A dot on each trial's last epoch.
        { transform: [{ filter: 'datum.last' }], mark: { type: 'point' } },
      ],
    });
    // 3 epochs for trials 1, 2, 3 and 5; 1 recorded epoch for trial 4 before it diverged.
    const rows = (chart.spec as { data: { values: { trialId: number; epoch: number; last: boolean }[] } }).data.values;
    expect(rows).toHaveLength(13);
    expect(rows.filter((r) => r.last).map((r) => [r.trialId, r.epoch])).toEqual([
      [1, 3],
      [2, 3],
      [3, 3],
      [4, 1],
      [5, 3],
    ]);
  });

  it('colours by the highest rung reached under a halving sampler', () => {
    const chart = learningCurvesChart(halvingNine)!;
    expect(chart.spec).toMatchObject({ encoding: { color: { field: 'rung', type: 'ordinal', title: 'highest rung reached' }, y: { title: 'validation log loss' } } });
    // 6 trials x 1 epoch + 2 x 3 epochs + 1 x 9 epochs.
    expect((chart.spec as { data: { values: unknown[] } }).data.values).toHaveLength(21);
  });
});

describe('objective against each hyperparameter', () => {
  it('has one panel per varied hyperparameter, log axes for learning rate and L2, categories for activation and optimizer', () => {
    const chart = parametersChart(randomFive)!;
    const panels = (chart.spec as { concat: { mark: { type: string }; encoding: { x: Record<string, unknown>; y: { field: string } } }[] }).concat;
    const byField = Object.fromEntries(panels.map((p) => [p.encoding.x['field'], p.encoding.x]));
    expect(Object.keys(byField)).toEqual(['learningRate', 'l2', 'depth', 'width', 'batchSize', 'dropout', 'activation', 'optimizer']);
    expect(panels.every((p) => p.mark.type === 'point' && p.encoding.y.field === 'objective')).toBe(true);
    // Scored learning rates run from 3e-4 to 3e-2, so the axis spans the decades 1e-4 .. 1e-1.
    expect(byField['learningRate']).toMatchObject({
      title: 'learning rate (log scale)',
      scale: { type: 'log', domain: [1e-4, 0.1] },
      axis: { values: [1e-4, 1e-3, 1e-2, 0.1] },
    });
    expect(byField['l2']).toMatchObject({ title: 'L2 weight penalty (log scale)', scale: { type: 'log' } });
    expect(byField['activation']).toMatchObject({ type: 'nominal', sort: ['relu', 'tanh', 'elu'] });
    expect(byField['optimizer']).toMatchObject({ type: 'nominal', sort: ['sgd', 'adam'] });
    expect(byField['batchSize']).toMatchObject({ type: 'ordinal', sort: ['16', '32', '64'] });
    expect(byField['width']).toMatchObject({ title: 'units per hidden layer (log scale)', scale: { type: 'log', domain: [8, 64] } });
  });

  it('leaves out hyperparameters that took one value in every trial', () => {
    expect(variedParameterAxes(halvingNine).map((a) => a.key)).toEqual(['learningRate', 'activation']);
  });

  it('spans log axes from the power at or below the smallest value to the one at or above the largest', () => {
    expect(logAxisDomain([0.00012, 0.094], 10)).toEqual({ domain: [1e-4, 0.1], ticks: [1e-4, 1e-3, 1e-2, 0.1] });
    expect(logAxisDomain([8, 61], 2)).toEqual({ domain: [8, 64], ticks: [8, 16, 32, 64] });
    // A single value still gets an axis one power wide.
    expect(logAxisDomain([0.01], 10)).toEqual({ domain: [0.01, 0.1], ticks: [0.01, 0.1] });
  });
});

describe('parallel coordinates', () => {
  it('scales each axis to [0, 1]: log axes by the logarithm, categories by index, the objective by value', () => {
    const axes = variedParameterAxes(randomFive);
    const { rows, labels } = parallelData(randomFive, axes, 'validation AUC');
    // 4 scored trials x (8 hyperparameters + the objective).
    expect(rows).toHaveLength(36);
    const at = (trialId: number, axis: string) => rows.find((r) => r.trialId === trialId && r.axis === axis)!.position;
    expect(at(2, 'learning rate (log)')).toBe(0); // 3e-4, the lowest
    expect(at(3, 'learning rate (log)')).toBe(1); // 3e-2, the highest
    expect(at(1, 'learning rate (log)')).toBeCloseTo((Math.log10(1e-3) - Math.log10(3e-4)) / 2, 12); // 0.2614...
    expect(at(2, 'activation')).toBe(0); // relu, first of relu, tanh, elu
    expect(at(1, 'activation')).toBe(0.5);
    expect(at(3, 'activation')).toBe(1);
    expect(at(1, 'validation AUC')).toBeCloseTo((0.81 - 0.74) / (0.86 - 0.74), 12);
    expect(labels.filter((l) => l.axis === 'learning rate (log)')).toEqual([
      { axis: 'learning rate (log)', position: 0, label: '3e-4' },
      { axis: 'learning rate (log)', position: 1, label: '0.03' },
    ]);
  });

  it('draws one line per trial across the axes, coloured by objective with the better end bright', () => {
    const spec = parallelChart(halvingNine)!.spec as { layer: { mark: { type: string }; encoding: Record<string, unknown> }[] };
    const lines = spec.layer.find((l) => l.mark.type === 'line')!;
    expect(lines.encoding).toMatchObject({
      x: { field: 'axis', scale: { domain: ['learning rate (log)', 'activation', 'validation log loss'] } },
      y: { field: 'position' },
      detail: { field: 'trialId' },
      // Log loss is minimised, so the scale is reversed to keep low losses bright.
      color: { field: 'objective', type: 'quantitative', scale: { reverse: true } },
    });
  });

  it('prints short numbers at the axis ends', () => {
    expect([0.00012, 0.25, 128, 0.0889, 1e-6].map(shortNumber)).toEqual(['1.2e-4', '0.25', '128', '0.0889', '1e-6']);
  });
});

describe('rung chart', () => {
  it('counts the configurations that reached each rung, naming the rung epochs', () => {
    expect(rungRows(halvingNine).map((r) => [r.rungLabel, r.trials])).toEqual([
      ['rung 0 (1 epoch)', 9],
      ['rung 1 (3 epochs)', 3],
      ['rung 2 (9 epochs)', 1],
    ]);
    expect(rungsChart(halvingNine)!.spec).toMatchObject({
      encoding: { x: { field: 'rungLabel' }, y: { field: 'trials', title: 'configurations' } },
      layer: [{ mark: { type: 'bar' } }, { mark: { type: 'text' } }],
    });
  });

  it('counts per bracket under Hyperband, one panel per bracket', () => {
    const counts = (bracket: number) => rungRows(hyperband).filter((r) => r.bracket === bracket).map((r) => r.trials);
    // Source: Li, Jamieson, DeSalvo, Rostamizadeh, Talwalkar, "Hyperband", JMLR 18(185), 2018, Algorithm 1
    // (derived for R = 27, eta = 3: n_i per bracket s = 3, 2, 1, 0).
    expect(counts(3)).toEqual([27, 9, 3, 1]);
    expect(counts(2)).toEqual([12, 4, 1]);
    expect(counts(1)).toEqual([6, 2]);
    expect(counts(0)).toEqual([4]);
    const spec = rungsChart(hyperband)!.spec as { concat: { title: { text: string } }[] };
    expect(spec.concat.map((panel) => panel.title.text)).toEqual(['bracket 0', 'bracket 1', 'bracket 2', 'bracket 3']);
  });

  it('is left out under random search', () => {
    expect(rungsChart(randomFive)).toBeNull();
  });
});

describe('chart selection', () => {
  it('draws every chart that has data, in report order', () => {
    expect(studyCharts(randomFive).map((c) => c.name)).toEqual(['progress', 'learning-curves', 'parameters', 'parallel']);
    expect(studyCharts(halvingNine).map((c) => c.name)).toEqual(['progress', 'learning-curves', 'parameters', 'parallel', 'rungs']);
  });

  it('draws nothing for a study with no trials yet', () => {
    expect(studyCharts({ ...halvingNine, trials: [] })).toEqual([]);
  });
});

describe('axes that a run-away trial does not flatten', () => {
  // Source: Tukey, "Exploratory Data Analysis", 1977: "far out" beyond 3 interquartile ranges from the quartiles.
  it('clips at the far-out fences when a value lies beyond them', () => {
    // Nine values: quartiles at positions 2 and 6 of the sorted list, 3 and 7; IQR 4; fences 3 - 12 and 7 + 12 = 19.
    expect(robustDomain([1, 2, 3, 4, 5, 6, 7, 8, 1.28e8])).toEqual([1, 19]);
  });

  it('leaves the axis alone when every value lies within the fences', () => {
    expect(robustDomain([0.81, 0.83, 0.84, 0.86, 0.9])).toBeUndefined();
  });
});
