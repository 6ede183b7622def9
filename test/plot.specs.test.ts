import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { epochSummaries, extent, robustDomain } from '../src/plot/data.js';
import { computeTimeline, rungShares } from '../src/plot/analysis/budget.js';
import { addHoverTitles } from '../src/plot/render.js';
import { agreementText, agreementWords, DRAWN_PATHS } from '../src/plot/charts/rung-agreement.js';
import { NOISE_BAND, PLACE_COLOURS, REFERENCE, rungColour, WINNER_SHAPE } from '../src/plot/palette.js';
import { budgetChart, hyperparametersChart, learningCurvesChart, rungAgreementChart, rungBudgetChart, studyCharts } from '../src/plot/specs.js';
import { studyImportance } from '../src/plot/analysis/study-importance.js';
import { winnerBand } from '../src/plot/charts/references.js';
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

type Stacked = { vconcat: (Layered & { data?: { values: Record<string, unknown>[] }; encoding?: Record<string, unknown> })[] };
const marksOf = (layered: Layered, type: string) => layered.layer.filter((l) => (l.mark as { type: string }).type === type);

describe('budget chart', () => {
  it('draws the leader against epochs spent, the planned budget as a rule and a star where the winner took the lead', () => {
    const [leader, strip] = (budgetChart([halvingNine])!.spec as unknown as Stacked).vconcat;
    const line = marksOf(leader!, 'line')[0]!;
    expect(line.mark).toMatchObject({ type: 'line', interpolate: 'step-after' });
    const steps = line.data!.values;
    expect(steps.at(-1)).toMatchObject({ epochsSpent: 21, leaderId: 5, score: 0.22 });
    expect(steps.filter((s) => s['winner']).map((s) => s['leaderId'])).toEqual([5]);
    expect(marksOf(leader!, 'rule')[0]!.data!.values).toEqual([{ study: 'halving-nine', epochs: 21, label: 'planned: 21 epochs' }]);
    expect(leader!.layer.some((l) => (l.mark as { shape?: string }).shape === WINNER_SHAPE)).toBe(true);
    // Under it, on the same epochs axis, the rungs the compute went to: 9 + 6 + 6 epochs at rungs 0, 1, 2.
    const stretches = strip!.data!.values as { rung: number; epochs: number }[];
    const byRung = [0, 1, 2].map((rung) => stretches.filter((r) => r.rung === rung).reduce((sum, r) => sum + r.epochs, 0));
    expect(byRung.map((e) => Math.round(e * 1e9) / 1e9)).toEqual([9, 6, 6]);
  });

  it('draws no strip for random search, whose compute all goes to one rung', () => {
    const spec = budgetChart([randomFive])!.spec as unknown as Layered & { vconcat?: unknown };
    expect(spec.vconcat).toBeUndefined();
    expect(marksOf(spec, 'line')).toHaveLength(1);
  });

  it("draws the baselines and the winner's noise band it is given, and nothing of them otherwise", () => {
    // Constructed references: the baselines and repeat-run errors come from elsewhere.
    const references = { baselines: [{ label: 'constant model', score: 0.5 }, { label: 'linear model', score: 0.4 }], band: { score: 0.22, standardError: 0.03, from: '3 repeat runs' } };
    const [leader] = (budgetChart([halvingNine], references)!.spec as unknown as Stacked).vconcat;
    const band = leader!.layer.find((l) => (l.mark as { color?: string }).color === NOISE_BAND)!;
    expect(band.data!.values[0]).toMatchObject({ low: 0.19, high: 0.25 });
    const rules = leader!.layer.filter((l) => (l.mark as { type: string; color?: string }).type === 'rule' && (l.mark as { color?: string }).color === REFERENCE);
    expect(rules[0]!.data!.values.map((v) => v['score'])).toEqual([0.5, 0.4]);
    const plain = JSON.stringify(budgetChart([halvingNine])!.spec);
    expect(plain).not.toContain(NOISE_BAND);
    expect(plain).not.toContain('constant model');
  });

  it("takes the winner's band from its standard error over folds when the study has folds", () => {
    const study = structuredClone(halvingNine);
    expect(winnerBand(study)).toBeUndefined();
    study.trials.find((t) => t.id === 5)!.scoreStandardError = 0.01;
    study.definition.data.folds = 5;
    expect(winnerBand(study)).toEqual({ score: 0.22, standardError: 0.01, from: '5 folds' });
    expect(JSON.stringify(studyCharts(study).find((c) => c.name === 'learning-curves')!.spec)).toContain(NOISE_BAND);
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

  it('says the agreement in numbers and words only where at least three configurations went on', () => {
    expect(agreementText(0.8, 5)).toBe('0.80: nearly the same order (5 configurations)');
    expect(agreementText(1, 2)).toBe('2 configurations went on: too few to say');
    expect(agreementText(Number.NaN, 4)).toBe('4 configurations went on: too few to say');
    // Common practice (no source): the verbal bands of a correlation, cut at 0.8, 0.5, 0.2 and -0.2.
    expect([1, 0.79, 0.5, 0.2, 0, -0.2, -1].map(agreementWords)).toEqual([
      'nearly the same order',
      'much the same order',
      'much the same order',
      'loosely the same order',
      'no real relation',
      'roughly the reverse order',
      'roughly the reverse order',
    ]);
  });

  it('draws the paths of at most a fixed number of configurations per bracket, however many there were', () => {
    // 600 configurations in one bracket: 600 at rung 0, 200 at rung 1, 66 at rung 2.
    const study = structuredClone(halvingNine);
    const template = study.trials[0]!;
    study.trials = Array.from({ length: 600 }, (_, i) => {
      const rung = i < 66 ? 2 : i < 200 ? 1 : 0;
      const scores = [0.5 + i / 1000, 0.4 + i / 1000, 0.3 + i / 1000].slice(0, rung + 1);
      const curve = [1, 2, 3, 4, 5, 6, 7, 8, 9].slice(0, [1, 3, 9][rung]).map((epoch) => ({ ...template.curve[0]!, epoch, metrics: { logLoss: scores[Math.min(rung, epoch >= 9 ? 2 : epoch >= 3 ? 1 : 0)]! } }));
      return { ...template, id: i + 1, rung, bracket: 0, status: rung === 2 ? 'trained' : 'dropped', epochsTrained: [1, 3, 9][rung]!, score: scores[rung]!, rungScores: scores, curve,
        jobs: [1, 3, 9].slice(0, rung + 1).map((toEpoch, r) => ({ rung: r, fromEpoch: [0, 1, 3][r]!, toEpoch, fromCheckpoint: r > 0, attempts: 1, status: 'done' as const })) };
    });
    const panel = (rungAgreementChart(study)!.spec as unknown as { concat: Layered[] }).concat[0]!;
    const drawn = new Set(panel.layer.flatMap((l) => (l.data?.values ?? []).map((v) => v['trialId'])).filter((id) => id !== undefined));
    expect(drawn.size).toBe(DRAWN_PATHS);
    // The best five at the last rung (lowest log loss: trials 1..5) are among them, in their colours.
    for (const id of [1, 2, 3, 4, 5]) expect(drawn.has(id)).toBe(true);
    expect(JSON.stringify(panel)).toContain(PLACE_COLOURS[1]);
  });
});

describe('learning curves', () => {
  type Curves = { vconcat: (Layered & { data?: { values: Record<string, unknown>[] } })[] };
  it('draws the top five of the ranking in five distinct colours and every trial as a band', () => {
    const [curves, reached] = (learningCurvesChart(hyperband)!.spec as unknown as Curves).vconcat;
    const top = marksOf(curves!, 'line').find((l) => l.data!.values.some((v) => 'place' in v))!;
    const byPlace = [1, 2, 3, 4, 5].map((place) => [...new Set(top.data!.values.filter((v) => v['place'] === place).map((v) => v['trial']))]);
    expect(byPlace).toEqual([['#1 trial 48'], ['#2 trial 15'], ['#3 trial 45'], ['#4 trial 47'], ['#5 trial 29']]);
    const colour = (top as unknown as { encoding: { color: { scale: { range: string[] } } } }).encoding.color.scale.range;
    expect(colour).toEqual([...PLACE_COLOURS]);
    expect(new Set(colour).size).toBe(5);
    // The band: one row per epoch (1..27), with how many trials reached it; 48 trials have a first epoch (trial 11 failed before it).
    const band = marksOf(curves!, 'area')[0]!.data!.values;
    expect(band.map((r) => r['epoch'])).toEqual(Array.from({ length: 27 }, (_, i) => i + 1));
    expect(band[0]!['count']).toBe(48);
    expect(reached!.data!.values).toHaveLength(27);
  });

  it('draws as many lines for a study of many trials as for one of few', () => {
    const many = structuredClone(hyperband);
    const copies = Array.from({ length: 20 }, (_, k) => many.trials.map((t) => ({ ...t, id: t.id + 1000 * (k + 1), score: t.score === null ? null : t.score - 0.5 })));
    many.trials.push(...copies.flat());
    const lines = (study: StudyDocument) => JSON.stringify(learningCurvesChart(study)!.spec).length;
    // 20 times the trials, less than twice the specification (the band has one row per epoch whatever the trials).
    expect(lines(many)).toBeLessThan(2 * lines(hyperband));
  });
});

describe('hyperparameters', () => {
  it('gives each varied hyperparameter a row, largest share first, all on one score scale, with the top five marked', () => {
    const importance = studyImportance(hyperband)!;
    const spec = hyperparametersChart(hyperband, importance)!.spec as unknown as { vconcat: { hconcat: [Layered, Layered & { layer: { encoding: { y?: { scale?: { domain: number[] } } } }[] }] }[] };
    expect(spec.vconcat).toHaveLength(importance.parameters.length);
    const shares = spec.vconcat.map((row) => row.hconcat[0].layer[0]!.data?.values?.[0]?.['share'] ?? (row.hconcat[0] as unknown as { data: { values: { share: number }[] } }).data.values[0]!.share);
    expect(shares).toEqual([...shares].sort((a, b) => (b as number) - (a as number)));
    const domains = spec.vconcat.map((row) => JSON.stringify(row.hconcat[1].layer[1]!.encoding.y!.scale!.domain));
    expect(new Set(domains).size).toBe(1);
    const marked = JSON.stringify(spec.vconcat[0]!.hconcat[1]);
    for (const colour of PLACE_COLOURS.slice(1)) expect(marked).toContain(colour);
    expect(marked).toContain(WINNER_SHAPE);
    expect(hyperparametersChart(hyperband, undefined)).toBeNull();
  });
});

describe('chart selection', () => {
  it('draws every chart that has data, in report order', () => {
    expect(studyCharts(randomFive).map((c) => c.name)).toEqual(['budget', 'learning-curves']);
    expect(studyCharts(halvingNine).map((c) => c.name)).toEqual(['budget', 'rung-agreement', 'hyperparameters', 'learning-curves']);
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

describe('summaries the charts draw instead of every trial', () => {
  it("takes the 10th, 50th and 90th percentiles of each epoch's values by definition 7", () => {
    // Source: Hyndman and Fan, "Sample quantiles in statistical packages", 1996, definition 7
    // (R's default): for 1..10, Q(0.1) = 1 + 0.9 = 1.9, Q(0.5) = 5.5, Q(0.9) = 9.1.
    const rows = [...Array.from({ length: 10 }, (_, i) => ({ epoch: 2, value: 10 - i })), { epoch: 1, value: 4 }];
    expect(epochSummaries(rows)).toEqual([
      { epoch: 1, count: 1, low: 4, median: 4, high: 4 },
      { epoch: 2, count: 10, low: expect.closeTo(1.9, 12), median: 5.5, high: expect.closeTo(9.1, 12) },
    ]);
  });

  it('splits the compute into stretches whose rung shares sum to one and add up to the rungs\' shares', () => {
    const stretches = computeTimeline(hyperband, 40);
    const byStretch = new Map<number, number>();
    for (const s of stretches) byStretch.set(s.from, (byStretch.get(s.from) ?? 0) + s.share);
    for (const total of byStretch.values()) expect(total).toBeCloseTo(1, 9);
    const perRung = new Map<number, number>();
    for (const s of stretches) perRung.set(s.rung, (perRung.get(s.rung) ?? 0) + s.epochs);
    const expected = new Map<number, number>();
    for (const s of rungShares(hyperband)) expected.set(s.rung, (expected.get(s.rung) ?? 0) + s.epochs);
    for (const [rung, epochs] of expected) expect(perRung.get(rung)).toBeCloseTo(epochs, 6);
  });
});

describe('the report\'s look', () => {
  it('gives the top five colours of the Okabe and Ito set, all different', () => {
    // Source: Okabe and Ito, "Color Universal Design (CUD)", 2008: black #000000 (here the report's ink),
    // vermillion #D55E00, blue #0072B2, bluish green #009E73, reddish purple #CC79A7.
    expect(PLACE_COLOURS.slice(1)).toEqual(['#d55e00', '#0072b2', '#009e73', '#cc79a7']);
    expect(new Set(PLACE_COLOURS).size).toBe(5);
  });

  it('turns the description of a hoverable mark item into a title the browser shows, and leaves lines and axes alone', () => {
    const svg =
      '<g aria-label="X-axis" role="graphics-symbol" aria-roledescription="axis"><path d="M0,0"/></g>' +
      '<path aria-label="trial: 3; score: 0.9" role="graphics-symbol" aria-roledescription="point" d="M1,1"/>' +
      '<path aria-label="epoch: 1" role="graphics-symbol" aria-roledescription="line mark" d="M2,2"/>';
    expect(addHoverTitles(svg)).toBe(
      '<g aria-label="X-axis" role="graphics-symbol" aria-roledescription="axis"><path d="M0,0"/></g>' +
        '<path aria-label="trial: 3; score: 0.9" role="graphics-symbol" aria-roledescription="point" d="M1,1"><title>trial: 3; score: 0.9</title></path>' +
        '<path aria-label="epoch: 1" role="graphics-symbol" aria-roledescription="line mark" d="M2,2"/>',
    );
  });
});
