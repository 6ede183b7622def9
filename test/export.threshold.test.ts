/**
 * The binary decision threshold: the rules worked by hand on a small validation split, and a study
 * with class weights and a rule run, exported and predicted end to end.
 */
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { exportModel, exportReport } from '../src/commands/export.js';
import { predictCsv } from '../src/commands/predict.js';
import { ranking } from '../src/commands/ranking.js';
import { run } from '../src/commands/run.js';
import { readConfiguration } from '../src/export/configuration.js';
import { chooseThreshold } from '../src/export/threshold.js';
import { studyResultJson } from '../src/report/study-result.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

// Worked by hand. Scores high to low with labels: 0.9+ 0.8+ 0.7- 0.6+ 0.5- 0.4- 0.3+ 0.2- (4 positives).
// Threshold: TP FP precision recall F1
//   0.9:  1 0  1     0.25 0.4
//   0.8:  2 0  1     0.5  0.6667
//   0.7:  2 1  0.667 0.5  0.5714
//   0.6:  3 1  0.75  0.75 0.75
//   0.5:  3 2  0.6   0.75 0.6667
//   0.4:  3 3  0.5   0.75 0.6
//   0.3:  4 3  0.571 1    0.7273
//   0.2:  4 4  0.5   1    0.6667
const labels = [1, 1, 0, 1, 0, 0, 1, 0];
const scores = [0.9, 0.8, 0.7, 0.6, 0.5, 0.4, 0.3, 0.2];

describe('choosing the decision threshold on the validation split', () => {
  it('largest F1 takes 0.6 (F1 0.75)', () => {
    const choice = chooseThreshold({ choose: 'largest-f1' }, labels, scores);
    expect(choice).toMatchObject({ threshold: 0.6, precision: 0.75, recall: 0.75, f1: 0.75, rows: 8, chosenOn: 'validation split', ruleMet: true });
  });

  it('a least precision takes the best recall that reaches it: 0.75 -> 0.6, 0.9 -> 0.8', () => {
    expect(chooseThreshold({ choose: 'min-precision', value: 0.75 }, labels, scores).threshold).toBe(0.6);
    expect(chooseThreshold({ choose: 'min-precision', value: 0.9 }, labels, scores)).toMatchObject({ threshold: 0.8, recall: 0.5 });
  });

  it('a least recall takes the best precision that reaches it: 0.7 -> 0.6, 1 -> 0.3', () => {
    expect(chooseThreshold({ choose: 'min-recall', value: 0.7 }, labels, scores).threshold).toBe(0.6);
    expect(chooseThreshold({ choose: 'min-recall', value: 1 }, labels, scores)).toMatchObject({ threshold: 0.3, precision: 4 / 7 });
  });

  it('a least precision no threshold reaches takes the most precise one and says so', () => {
    const choice = chooseThreshold({ choose: 'min-precision', value: 1 }, [0, 1, 0, 1], [0.9, 0.8, 0.7, 0.6]);
    expect(choice).toMatchObject({ threshold: 0.8, precision: 0.5, ruleMet: false });
  });
});

describe('a study with class weights and a decision threshold rule', () => {
  it('ranks with per-class figures, exports the chosen threshold with its caveat, and predict applies it', async () => {
    const definition = await writeTinyStudy(tinyStudy({ data: { ...tinyStudy().data, classWeights: 'balanced' }, decisionThreshold: { choose: 'largest-f1' } }));
    const out = path.join(path.dirname(definition), 'run');
    await run({ definition, out, progress: false });

    const { doc, ranking: ranked, file } = await ranking({ dir: out });
    const best = studyResultJson(doc, ranked, file).trials[0]!;
    expect(best.classes!.labels).toEqual(doc.recipe.classes);
    expect(best.classes!.confusion.flat().reduce((a, b) => a + b, 0)).toBe(doc.data.validationRows);
    expect(best.classes!.threshold).toBe(0.5);
    expect(best.classes!.perClass.map((row) => row.label)).toEqual(doc.recipe.classes);

    const summary = await exportModel({ dir: out });
    const configuration = await readConfiguration(summary.out);
    const outputs = configuration.outputs as { threshold: number; thresholdChoice: { rule: unknown; rows: number } };
    expect(outputs.thresholdChoice).toMatchObject({ rule: { choose: 'largest-f1' }, rows: doc.data.validationRows });
    expect(outputs.threshold).toBe(summary.threshold!.threshold);
    expect(configuration.classes!.validation!.threshold).toBe(outputs.threshold);
    const text = exportReport(summary);
    expect(text).toMatch(/decision threshold: [0-9.]+ \(largest F1\), chosen on the \d+ validation rows/);
    expect(text).toMatch(/optimistic .* --retrain` scores the model once on the held-out test split at this threshold/);

    // --retrain chooses again for the retrained network and counts the test split at that threshold.
    const retrained = await exportModel({ dir: out, retrain: true, out: path.join(out, 'retrained') });
    expect(retrained.classes!.test!.threshold).toBe(retrained.threshold!.threshold);
    expect(retrained.classes!.test!.confusion.flat().reduce((a, b) => a + b, 0)).toBe(doc.data.testRows);
    expect(exportReport(retrained)).toMatch(/which the retrained model was also trained on\); the test split figures below, at this threshold, are the honest check/);

    // predict: a row is the second class exactly when its probability reaches the exported threshold.
    const csv = path.join(path.dirname(definition), 'tiny.csv');
    const predictions = path.join(path.dirname(definition), 'predicted.csv');
    const predicted = await predictCsv({ model: summary.out, data: csv, output: predictions });
    expect(predicted.threshold).toBe(outputs.threshold);
    const [header, ...lines] = (await readFile(predictions, 'utf8')).trim().split('\n');
    const columns = header!.split(',');
    const second = configuration.recipe.classes![1]!;
    const at = columns.indexOf(`p_${second}`);
    expect(at).toBeGreaterThan(0);
    for (const line of lines) {
      const cells = line.split(',');
      expect(cells[1]).toBe(Number(cells[at]) >= outputs.threshold ? second : configuration.recipe.classes![0]);
    }
  });

  it('without a rule the export keeps 0.5 and says so', async () => {
    const definition = await writeTinyStudy(tinyStudy());
    const out = path.join(path.dirname(definition), 'run');
    await run({ definition, out, progress: false });
    const summary = await exportModel({ dir: out });
    const configuration = await readConfiguration(summary.out);
    expect(configuration.outputs).toMatchObject({ threshold: 0.5, thresholdChoice: { rule: 'none' } });
    expect(exportReport(summary)).toMatch(/decision threshold: 0\.5 \(the default; the study gives no decisionThreshold rule\)/);
    // Without a rule the validation report is the study's own record of the trial.
    const { doc, ranking: ranked, file } = await ranking({ dir: out });
    expect(summary.classes!.validation).toEqual(studyResultJson(doc, ranked, file).trials[0]!.classes);
  });
});
