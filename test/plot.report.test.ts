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
