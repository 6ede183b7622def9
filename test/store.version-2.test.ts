/**
 * A study written by rungwise in study file format version 2 (test/fixtures/version-2-study: an
 * interrupted successive-halving study of 9 configurations, eta 3, 1 to 9 epochs, on the tiny demo
 * CSV) still opens. The expected values are the ones that rungwise recorded and printed for it at
 * format 2 (its `ranking --json` and `resume --json`), not an outside reference.
 */
import { cp, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { exportModel } from '../src/commands/export.js';
import { plot } from '../src/commands/plot.js';
import { ranking } from '../src/commands/ranking.js';
import { resume } from '../src/commands/resume.js';
import { readConfiguration } from '../src/export/configuration.js';
import { studyResultJson } from '../src/report/study-result.js';
import { StudyStore } from '../src/store/study-store.js';

const FIXTURE = fileURLToPath(new URL('./fixtures/version-2-study/', import.meta.url));

let dir: string;
let studyFile: string;
beforeEach(async () => {
  dir = await mkdtemp(path.join(tmpdir(), 'rungwise-version-2-'));
  await cp(path.join(FIXTURE, 'run'), dir, { recursive: true });
  studyFile = path.join(dir, 'study.json');
  // The file names the definition it was launched from by absolute path; point it at the fixture's copy.
  const stored = JSON.parse(await readFile(studyFile, 'utf8')) as { definitionFile: string };
  stored.definitionFile = path.join(FIXTURE, 'study-definition.json');
  await writeFile(studyFile, JSON.stringify(stored));
});
afterEach(async () => {
  await rm(dir, { recursive: true, force: true });
});

/** Trial 2's configuration as the version 2 file records it under `params`. */
const TRIAL_2 = { depth: 1, width: 8, activation: 'tanh', learningRate: 0.06667546300389025, batchSize: 16, optimizer: 'adam', l2: 0, dropout: 0 };

describe('a version 2 study file', () => {
  it('is ranked in the vocabulary of format 3 with the values recorded at format 2, and left as it was', async () => {
    const before = await readFile(studyFile, 'utf8');
    expect(JSON.parse(before)).toMatchObject({ version: 2, objective: { metric: 'auc', direction: 'maximize' } });
    const result = await ranking({ dir });
    expect(result.doc.version).toBe(3);
    expect(result.doc.goal).toEqual({ metric: 'auc', better: 'higher' });
    expect(result.doc.definition.goal).toEqual({ metric: 'auc', better: 'higher' });
    expect(result.doc.definition).not.toHaveProperty('objective');
    expect(result.ranking.map(({ trial }) => trial.id)).toEqual([2, 8, 1, 4, 0, 7, 3, 5, 6]);
    const json = studyResultJson(result.doc, result.ranking, result.file);
    expect(json.goal).toEqual({ metric: 'auc', better: 'higher' });
    expect(json.counts).toEqual({ dropped: 6, waiting: 3 });
    expect(json.trials.slice(0, 3).map((t) => [t.trial, t.status, t.epochs, t.score])).toEqual([
      [2, 'waiting', 3, 1],
      [8, 'waiting', 3, 1],
      [1, 'waiting', 1, 0.9652777777777778],
    ]);
    expect(json.trials[0]!.configuration).toEqual(TRIAL_2);
    const trial2 = result.doc.trials.find((t) => t.id === 2)!;
    expect(trial2.rungScores).toEqual([0.9930555555555556, 1]);
    expect(trial2.jobs.map((j) => j.status)).toEqual(['done', 'done']);
    expect(trial2.curve).toHaveLength(3);
    expect(await readFile(studyFile, 'utf8')).toBe(before);
  });

  it('is drawn as a report, leaving the file as it was', async () => {
    const before = await readFile(studyFile, 'utf8');
    await plot({ dir });
    const html = await readFile(path.join(dir, 'plots', 'report.html'), 'utf8');
    expect(html).toContain('<th scope="row">goal</th><td>validation AUC, higher is better</td>');
    expect(html).toContain('<th scope="row">trials by status</th><td>dropped 6, waiting 3</td>');
    expect(html).toContain('<th scope="row">winner</th><td>trial 2: 1 after 3 epochs</td>');
    // 9 configurations for 1 epoch, 3 continued to 3, 1 continued to 9: 9 + 3 x 2 + 6 = 21 epochs planned; 9 + 2 x 2 trained.
    expect(html).toContain('Spent 13 epochs of 21 planned');
    expect(await readFile(studyFile, 'utf8')).toBe(before);
  });

  it('exports its rank 1 from the kept checkpoint, leaving the file as it was', async () => {
    const before = await readFile(studyFile, 'utf8');
    const out = path.join(dir, 'exported');
    const summary = await exportModel({ dir, out });
    expect(summary).toMatchObject({ trialId: 2, rank: 1, goal: { metric: 'auc', better: 'higher' }, score: 1, validation: { auc: 1, accuracy: 1 } });
    const configuration = await readConfiguration(out);
    expect(configuration).toMatchObject({ trialId: 2, configuration: TRIAL_2, epochsTrained: 3, goal: { metric: 'auc', better: 'higher' }, score: 1 });
    expect(await readFile(studyFile, 'utf8')).toBe(before);
  });

  it('is resumed to the end that rungwise reached at format 2 and saved as version 3', async () => {
    const outcome = await resume({ dir, threads: 1 });
    expect(outcome.alreadyFinished).toBe(false);
    const saved = JSON.parse(await readFile(studyFile, 'utf8')) as Record<string, unknown> & { trials: Record<string, unknown>[] };
    expect(saved).toMatchObject({ version: 3, state: 'finished', goal: { metric: 'auc', better: 'higher' } });
    expect(saved).not.toHaveProperty('objective');
    expect(saved.definition).toMatchObject({ goal: { metric: 'auc', better: 'higher' } });
    for (const trial of saved.trials) {
      expect(Object.keys(trial)).toEqual(expect.arrayContaining(['configuration', 'score', 'rungScores']));
      expect(trial).not.toHaveProperty('params');
      expect(trial).not.toHaveProperty('objective');
      expect(trial).not.toHaveProperty('rungObjectives');
    }
    const doc = await StudyStore.read(dir);
    const standing = doc.trials.map((t) => [t.id, t.status, t.epochsTrained, t.score]).sort((a, b) => Number(a[0]) - Number(b[0]));
    expect(standing).toEqual([
      [0, 'dropped', 1, 0.9097222222222222],
      [1, 'trained', 9, 1],
      [2, 'dropped', 3, 1],
      [3, 'dropped', 1, 0.6979166666666666],
      [4, 'dropped', 1, 0.9513888888888888],
      [5, 'dropped', 1, 0.6458333333333334],
      [6, 'dropped', 1, 0.4513888888888889],
      [7, 'dropped', 1, 0.8680555555555556],
      [8, 'dropped', 3, 1],
    ]);
    expect(doc.totals?.epochsTrained).toBe(21);
    expect(doc.trials.find((t) => t.id === 1)!.jobs.map((j) => [j.status, j.fromEpoch, j.toEpoch])).toEqual([
      ['done', 0, 1],
      ['done', 1, 3],
      ['done', 3, 9],
    ]);
  });
});
