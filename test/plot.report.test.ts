import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { bestTrial, buildReport } from '../src/plot/report.js';
import type { StudyDocument } from '../src/store/types.js';
import { studyFixture } from './helpers/study-fixtures.js';

const fixture = studyFixture;

describe('report', () => {
  it('names as best the trial trained longest, even when a trial stopped at rung 0 scored better', () => {
    const study = fixture('halving-nine');
    // Trial 1 stopped after 1 epoch; give it a log loss better than trial 5's 0.22 after 9 epochs.
    study.trials[0]!.score = 0.1;
    expect(bestTrial(study)?.id).toBe(5);
  });

  it('names the best score among trials trained equally long, the way the goal says is better', () => {
    expect(bestTrial(fixture('random-five'))?.id).toBe(5); // AUC 0.86, maximised
    const minimised = fixture('random-five');
    minimised.goal = { metric: 'auc', better: 'lower' };
    expect(bestTrial(minimised)?.id).toBe(2); // AUC 0.74
  });

  it('escapes text from the study file', () => {
    const study = fixture('random-five');
    study.data.file = '<b>data & more</b>.csv';
    const html = buildReport(study, []);
    expect(html).toContain('&#60;b&#62;data &#38; more&#60;/b&#62;.csv');
    expect(html).not.toContain('<b>data');
  });
});

describe('report: per-class section', () => {
  it('shows the winner\'s per-class figures and confusion matrix, rows shaded by their share, for a classification study', () => {
    const study = fixture('random-five');
    for (const trial of study.trials) trial.classFigures = { epoch: trial.epochsTrained, confusion: [[8, 2], [1, 3]], averagePrecision: [0.9, 0.6], threshold: 0.5 };
    const html = buildReport(study, []);
    expect(html).toContain('How does it do on each class?');
    // Worked by hand: class 'yes' (second row) precision 3 / 5, recall 3 / 4, F1 2 x 0.6 x 0.75 / 1.35 = 0.6667.
    expect(html).toMatch(/<th scope="row">yes<\/th><td class="number">4<\/td><td class="number">0\.6<\/td><td class="number">0\.75<\/td><td class="number">0\.6667<\/td><td class="number">0\.6<\/td>/);
    expect(html).toContain('>8 (80%)</td>');
    expect(html).toContain('>3 (75%)</td>');
  });

  it('is left out when no trial has per-class figures (a study file from before they were kept)', () => {
    expect(buildReport(fixture('random-five'), [])).not.toContain('How does it do on each class?');
  });
});

describe('answer tables', () => {
  it("gives each rung's share of the epochs with how many configurations trained to how many epochs", async () => {
    const { rungShareTable } = await import('../src/plot/answer-tables.js');
    // halving-nine: 9 configurations x 1 epoch, 3 x 2 more, 1 x 6 more: 9, 6 and 6 of 21 epochs.
    const html = rungShareTable(fixture('halving-nine'));
    expect(html.match(/<b>\d+%<\/b>/g)).toEqual(['<b>43%</b>', '<b>29%</b>', '<b>29%</b>']);
    expect(html).toContain('9 to 1 epoch<');
    expect(html).toContain('1 to 9 epochs');
    expect(rungShareTable(fixture('random-five'))).toBe('');
  });

  it('says the agreement of every pair of rungs in words, with the winner\'s place at the shorter look', async () => {
    const { rungAgreementTable } = await import('../src/plot/answer-tables.js');
    const html = rungAgreementTable(fixture('halving-nine'));
    expect(html).toContain('rung 0 (1 epoch) to rung 1 (3 epochs)');
    expect(html).toMatch(/<td>[-0-9.]+: [a-z ]+ \(3 configurations\)<\/td>/);
    expect(html).toContain('1 configuration went on: too few to say');
    // The winner, trial 5, led both rungs it was scored at before the last.
    expect(html.match(/<td>1 of \d+<\/td>/g)).toEqual(['<td>1 of 9</td>', '<td>1 of 3</td>']);
    expect(rungAgreementTable(fixture('random-five'))).toBe('');
  });
});
