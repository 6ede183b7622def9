import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { extent, robustDomain } from '../src/plot/data.js';
import { endLabels } from '../src/plot/charts/curves.js';
import { agreementText } from '../src/plot/charts/rung-agreement.js';
import { rungColour, studyColour, WINNER_SHAPE } from '../src/plot/palette.js';
import { budgetChart, learningCurvesChart, rungAgreementChart, rungBudgetChart, studyCharts } from '../src/plot/specs.js';
import { topConfigurations } from '../src/plot/top-table.js';
import type { StudyDocument } from '../src/store/types.js';
import { studyFixture } from './helpers/study-fixtures.js';

const fixture = studyFixture;

/** Random search, maximise AUC, 5 trials (trial 4 diverged). */
const randomFive = fixture('random-five');
/** Successive halving, eta 3, minimise log loss: 9 trials at rung 0 (1 epoch), 3 at rung 1 (3 epochs), 1 at rung 2 (9 epochs). */
const halvingNine = fixture('halving-nine');
/** Hyperband, 27 epochs at most, eta 3, 49 trials in brackets 0..3. */
const hyperband = fixture('hyperband-generated');

type Layered = { layer: { mark: unknown; data?: { values: Record<string, unknown>[] }; transform?: unknown[] }[] };

describe('top configurations', () => {
  it('lists the ranking with the winner starred, the gap to it, epochs and the configuration', () => {
    const { header, rows } = topConfigurations(halvingNine);
    expect(header.slice(0, 6)).toEqual(['place', 'trial', 'logLoss', 'gap to #1', 'epochs', 'worker s']);
    expect(rows.map((r) => [r['place'], r['trial'], r['epochs']])).toEqual([
      ['★ 1', '5', '9'],
      ['2', '2', '3'],
      ['3', '7', '3'],
      ['4', '9', '1'],
      ['5', '6', '1'],
      ['6', '1', '1'],
      ['7', '4', '1'],
      ['8', '8', '1'],
    ]);
    // Log losses: 0.22 after 9 epochs; 0.37, 0.41 after 3; 0.51, 0.59, 0.62, 0.66, 0.68 (and trial 3's 0.7) after 1.
    expect(rows[1]!['gap to #1']).toBe('0.15');
    expect(rows[0]!['configuration']).toBe('2 x 32 tanh, adam at learning rate 0.0032, batch 32, L2 1.00e-4, dropout 0.1');
  });

  it('gives the spread of repeats of one configuration trained equally long', () => {
    const study = structuredClone(randomFive);
    // Trial 1 repeats trial 5's configuration and scores 0.8 at the same 3 epochs.
    study.trials[0]!.configuration = { ...study.trials[4]!.configuration };
    study.trials[0]!.score = 0.8;
    const { rows } = topConfigurations(study);
    expect(rows[0]!['repeats (range)']).toBe('2 (0.8 to 0.86)');
    expect(rows.find((r) => r['trial'] === '3')!['repeats (range)']).toBe('1');
  });
});

describe('budget chart', () => {
  it('draws the leader against epochs spent, the planned budget as a rule and a star where the winner took the lead', () => {
    const spec = budgetChart([halvingNine])!.spec as unknown as Layered & { layer: { encoding?: { x?: { field: string } } }[] };
    const steps = spec.layer[0]!.data!.values;
    expect(spec.layer[0]!.mark).toMatchObject({ type: 'line', interpolate: 'step-after' });
    expect(steps.at(-1)).toMatchObject({ epochsSpent: 21, leaderId: 5, score: 0.22 });
    expect(steps.filter((s) => s['winner']).map((s) => s['leaderId'])).toEqual([5]);
    const rule = spec.layer.find((l) => (l.mark as { type: string }).type === 'rule')!;
    expect(rule.data!.values).toEqual([{ study: 'halving-nine', epochs: 21, label: 'planned: 21 epochs' }]);
    expect(spec.layer.some((l) => (l.mark as { shape?: string }).shape === WINNER_SHAPE)).toBe(true);
  });
});

describe('rung charts', () => {
  it("splits the compute over rungs in the rungs' colours, for halving samplers only", () => {
    const spec = rungBudgetChart([halvingNine])!.spec as unknown as { data: { values: Record<string, unknown>[] } } & Layered;
    expect(spec.data.values.map((r) => [r['rung'], r['percent']])).toEqual([
      [0, '43%'],
      [1, '29%'],
      [2, '29%'],
    ]);
    expect(JSON.stringify(spec)).toContain(rungColour(2));
    expect(rungBudgetChart([randomFive])).toBeNull();
  });

  it('draws one panel per bracket with a rung past rung 0, the winner in ink with stars', () => {
    const spec = rungAgreementChart(hyperband)!.spec as unknown as { concat: { title: { text: string } }[] };
    // Bracket 0 of Hyperband (27 epochs, eta 3) has a single rung, so there is nothing to agree.
    expect(spec.concat.map((p) => p.title.text)).toEqual(['bracket 1', 'bracket 2', 'bracket 3']);
    const halving = rungAgreementChart(halvingNine)!.spec as unknown as { concat: Layered[] };
    const stars = halving.concat[0]!.layer.find((l) => (l.mark as { shape?: string }).shape === WINNER_SHAPE)!;
    expect(stars.data!.values.map((v) => [v['trialId'], v['rung'], v['place']])).toEqual([
      [5, 0, 1],
      [5, 1, 1],
      [5, 2, 1],
    ]);
    expect(rungAgreementChart(randomFive)).toBeNull();
  });

  it('says rho only where at least three configurations were scored at both rungs', () => {
    expect(agreementText(0.8, 5)).toBe('rho 0.80 (5)');
    expect(agreementText(1, 2)).toBe('2 scored at both');
  });
});

describe('learning curves', () => {
  it('highlights the top five of the ranking and fades the rest', () => {
    const chart = learningCurvesChart(hyperband)!;
    const rows = (chart.spec as unknown as { data: { values: { trialId: number; group: string }[] } }).data.values;
    const groups = (group: string) => [...new Set(rows.filter((r) => r.group === group).map((r) => r.trialId))].sort((a, b) => a - b);
    expect(groups('winner')).toEqual([48]);
    expect(groups('top')).toEqual([15, 29, 45, 47]);
    expect(groups('other')).toHaveLength(49 - 5 - 1); // trial 11 failed before its first epoch: no curve
    expect(JSON.stringify(chart.spec)).toContain(studyColour(0));
  });

  it('moves end labels at the same epoch apart so that none overlaps the next', () => {
    const labels = endLabels([{ value: 0.9, epoch: 9 }, { value: 0.899, epoch: 9 }, { value: 0.5, epoch: 9 }, { value: 0.898, epoch: 3 }], [0, 1.5]);
    expect(labels.map((l) => [l.epoch, l.labelAt])).toEqual([
      [3, 0.898],
      [9, 0.9],
      [9, 0.8],
      [9, 0.5],
    ]);
  });
});

describe('chart selection', () => {
  it('draws every chart that has data, in report order', () => {
    expect(studyCharts(randomFive).map((c) => c.name)).toEqual(['budget', 'learning-curves']);
    expect(studyCharts(halvingNine).map((c) => c.name)).toEqual(['budget', 'rung-budget', 'rung-agreement', 'importance', 'good-values', 'learning-curves']);
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

describe('long studies', () => {
  it('finds the range of more values than a call can take as arguments', () => {
    const values = Array.from({ length: 500_000 }, (_, i) => (i % 1000) / 10);
    expect(extent(values)).toEqual([0, 99.9]);
  });
});
