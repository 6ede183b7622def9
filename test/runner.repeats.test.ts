/**
 * The repeat runs after the search (src/runner/repeats.ts): planned and counted, recorded in the study
 * file, the same for any number of threads, resumed after an interrupt to the same figures, off with
 * `top: 0`, and absent from studies whose file predates them. Trained on the engine (tiny study).
 */
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { runStudy } from '../src/runner/run-study.js';
import { resumeStudy } from '../src/runner/resume-study.js';
import type { StudyEvent } from '../src/runner/events.js';
import { plannedWork } from '../src/report/budget.js';
import { studyResultJson, studyResultText } from '../src/report/study-result.js';
import { rankTrials } from '../src/core/ranking.js';
import { repeatSeed } from '../src/runner/repeats.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';
import { studyReferences } from '../src/plot/charts/references.js';
import { studyDigest } from '../src/plot/digest.js';
import { linearBaselineWarning } from '../src/report/baseline-text.js';
import { studyRepeats } from '../src/report/repeat-text.js';

const definition = tinyStudy({ budget: { trials: 6, maxEpochs: 4 }, repeats: { top: 3, seeds: 2 } });

describe('repeat runs', () => {
  it('are planned, counted by the progress events, recorded, and the same with 1 and 2 threads', async () => {
    const file = await writeTinyStudy(definition);
    const base = path.dirname(file);
    const plan = plannedWork({ ...definition, repeats: { top: 3, seeds: 2 } } as never);
    // The search's 6 one-job trials of 4 epochs, then 3 configurations x 2 seeds of 4 epochs.
    expect(plan).toMatchObject({ jobs: 6 + 6, epochs: 24 + 24, repeats: { configurations: 3, seeds: 2, jobs: 6, epochs: 24 } });

    const counts: { jobs: number; epochs: number }[] = [];
    const onEvent = (event: StudyEvent): void => {
      if (event.type === 'trial-finished' || event.type === 'repeat-finished') counts.push({ jobs: event.progress.jobsDone, epochs: event.progress.epochsDone });
    };
    const one = await runStudy(file, { out: path.join(base, 'one'), threads: 1, onEvent });
    const two = await runStudy(file, { out: path.join(base, 'two'), threads: 2 });
    const repeats = one.doc.repeats!;
    // The best three finished trials of the one ranking, each repeated with seeds 1 and 2.
    expect(repeats.trialIds).toEqual(rankTrials(one.doc.trials, one.doc.goal).slice(0, 3).map((r) => r.trial.id));
    expect(repeats.runs.map((r) => [r.trialId, r.index, r.epochs])).toEqual(repeats.trialIds.flatMap((id) => [[id, 1, 4], [id, 2, 4]]));
    expect(repeats.runs.map((r) => r.seed)).toEqual(repeats.trialIds.flatMap(() => [repeatSeed(1, 1), repeatSeed(1, 2)]));
    expect(repeats.runs.every((r) => r.status === 'completed' && typeof r.score === 'number')).toBe(true);
    // The same runs and scores whatever the number of threads.
    const scores = (doc: typeof one.doc) => doc.repeats!.runs.map((r) => [r.trialId, r.index, r.score]);
    expect(scores(two.doc)).toEqual(scores(one.doc));
    // The plan announced is the work run: 12 jobs, 48 epochs, and the counters never go back.
    expect(counts.at(-1)).toEqual({ jobs: 12, epochs: 48 });
    counts.forEach((c, i) => i > 0 && expect(c.jobs).toBeGreaterThan(counts[i - 1]!.jobs));
    // The ranking shows the repeat figures, the winner first.
    const json = studyResultJson(one.doc, one.ranking, one.file);
    expect(json.repeats?.winnerId).toBe(one.ranking[0]!.trial.id);
    expect(json.repeats?.figures.map((f) => f.count)).toEqual([3, 3, 3]);
    expect(studyResultText(one.doc, one.ranking, one.file)).toMatch(/one-standard-error pick: trial \d+/);
    // The report draws the winner's band from its runs and the study's baselines; compare says the same in words.
    const summary = studyRepeats(one.doc)!;
    const references = studyReferences(one.doc);
    expect(references.band).toEqual({ score: summary.figures[0]!.mean, standardError: summary.figures[0]!.standardError, from: '3 runs' });
    expect(references.baselines?.map((b) => b.label)).toEqual(['constant', 'linear']);
    expect(studyDigest(one.doc, undefined).noise).toContain(`one-standard-error pick: trial ${summary.pickId}`);
  });

  it('warns when the winner does not beat the linear model by more than its standard error over the runs', async () => {
    const file = await writeTinyStudy(definition);
    const outcome = await runStudy(file, { out: path.join(path.dirname(file), 'warn'), threads: 2 });
    const summary = studyRepeats(outcome.doc)!;
    const winner = summary.figures[0]!;
    const se = winner.standardError ?? 0;
    const withLinear = (score: number) => ({ ...outcome.doc, baselines: { constant: outcome.doc.baselines!.constant, linear: { metrics: { auc: score }, what: 'linear' } } });
    // A linear model just under the winner's mean less its standard error is beaten; one just above it is not.
    expect(linearBaselineWarning(withLinear(winner.mean - se - 1e-9), summary)).toBeUndefined();
    expect(linearBaselineWarning(withLinear(winner.mean - se + 1e-9), summary)).toMatch(/does not beat the linear baseline/);
  });

  it('resume after an interrupt in the repeat runs gives the figures of a straight run', async () => {
    const file = await writeTinyStudy(definition);
    const base = path.dirname(file);
    const straight = await runStudy(file, { out: path.join(base, 'straight'), threads: 1 });
    const abort = new AbortController();
    const dir = path.join(base, 'interrupted');
    const cut = await runStudy(file, {
      out: dir,
      threads: 1,
      signal: abort.signal,
      onEvent: (event) => {
        if (event.type === 'repeat-finished') abort.abort();
      },
    });
    expect(cut.doc.state).toBe('interrupted');
    expect(cut.doc.repeats!.runs.length).toBeGreaterThan(0);
    expect(cut.doc.repeats!.runs.length).toBeLessThan(6);
    const resumed = await resumeStudy(dir, { threads: 2 });
    expect(resumed.doc.state).toBe('finished');
    expect(resumed.doc.repeats).toEqual({ ...straight.doc.repeats, runs: straight.doc.repeats!.runs.map((r) => ({ ...r, workerSeconds: expect.any(Number) })) });
  });

  it('run none with top 0, and a study file from before them says so', async () => {
    const off = tinyStudy({ repeats: { top: 0 } });
    const file = await writeTinyStudy(off);
    const outcome = await runStudy(file, { out: path.join(path.dirname(file), 'off') });
    expect(outcome.doc.repeats).toBeUndefined();
    expect(plannedWork(outcome.doc.definition).jobs).toBe(4);
    const { repeats: _settings, ...before } = outcome.doc.definition;
    const old = { ...outcome.doc, definition: before as typeof outcome.doc.definition };
    expect(studyResultJson(old, outcome.ranking, outcome.file).repeats).toBeNull();
    expect(studyResultText(old, outcome.ranking, outcome.file)).toContain('no repeat runs were recorded');
  });
});
