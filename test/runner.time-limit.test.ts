/**
 * A study's time limit (`budget.minutes`, `--minutes`): no job starts once it has passed, running
 * jobs finish, the study is saved as stopped by its time limit, and `resume` goes on to the same
 * trials and ranking as a study that ran straight through. The clock is injected and moved by the
 * epochs trained (one virtual second each), so nothing here depends on the machine's speed.
 */
import { mkdtemp, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { runStudy, type StudyOutcome } from '../src/runner/run-study.js';
import { resumeStudy } from '../src/runner/resume-study.js';
import type { StudyEvent } from '../src/runner/events.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import type { TrialConfiguration } from '../src/core/configuration.js';
import { ClosedFormTransport } from '../src/transports/closed-form.js';
import { runCli } from './helpers/cli.js';
import { studySummary } from '../src/report/summary.js';
import { writeIrisCsv } from './helpers/datasets.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

const SECOND = 1000;

function figures(params: TrialConfiguration, epoch: number) {
  const loss = Math.abs(Math.log10(params.learningRate) + 2) + 4 / params.width + 2 / epoch;
  return { validationLoss: loss, metrics: { auc: 1 / (1 + loss) } };
}

/** A clock that moves one virtual second per epoch reported, and the virtual time of every job start. */
function virtualClock() {
  let now = 0;
  const starts: number[] = [];
  const onEvent = (event: StudyEvent): void => {
    if (event.type === 'epoch') now += SECOND;
    if (event.type === 'job-started') starts.push(now);
  };
  return { clock: () => now, onEvent, starts, now: () => now };
}

const transport = () => new ClosedFormTransport({ capacity: 2, millisecondsPerEpoch: 0, evaluate: figures });

const ranked = (outcome: StudyOutcome) => outcome.ranking.map((r) => [r.trial.id, r.trial.score, r.trial.epochsTrained]);

const SAMPLERS: [string, StudyDefinitionInput['sampler'], number][] = [
  ['random search', { kind: 'random', seed: 5 }, 10],
  ['successive halving', { kind: 'successive-halving', seed: 5, eta: 3, minEpochs: 1 }, 18],
  ['TPE', { kind: 'tpe', seed: 5, trialsBeforeModel: 4, batchSize: 2 }, 10],
];

describe.each(SAMPLERS)('a time limit with %s', (_name, sampler, trials) => {
  it('stops starting jobs at the limit, saves the study as stopped by it, and resume gives the ranking of a straight run', async () => {
    const definition = tinyStudy({
      budget: { trials, maxEpochs: 9 },
      sampler,
      space: { depth: { min: 1, max: 2 }, width: { min: 4, max: 64, log: true }, activation: ['relu'], learningRate: { min: 0.001, max: 0.1 } },
    });
    const file = await writeTinyStudy(definition);
    const base = path.dirname(file);

    const straight = await runStudy(file, { out: path.join(base, 'straight'), transport });
    expect(straight.doc.state).toBe('finished');

    const limit = 10 * SECOND;
    const time = virtualClock();
    const stopping: string[] = [];
    const notes: string[] = [];
    const onEvent = (event: StudyEvent): void => {
      time.onEvent(event);
      if (event.type === 'stopping') stopping.push(event.reason);
      if (event.type === 'note') notes.push(event.message);
    };
    const dir = path.join(base, 'limited');
    const limited = await runStudy(file, { out: dir, transport, clock: time.clock, minutes: limit / 60_000, onEvent });
    expect(limited.doc.state).toBe('time-limit');
    expect(stopping).toEqual(['time limit of 0.16666666666666666 minutes']);
    // No job started at or after the limit, and the last job ended within one job's length (9 epochs, 2 at once) of it.
    expect(Math.max(...time.starts)).toBeLessThan(limit);
    expect(time.now()).toBeLessThan(limit + 2 * 9 * SECOND);
    expect(limited.doc.trials.length).toBeLessThan(trials);
    // After 3 jobs the measured pace (2 threads, 1 virtual second an epoch) says the limit cuts the plan.
    expect(notes.filter((n) => /the time limit stops the study near epoch \d+ of the \d+ planned/.test(n))).toHaveLength(1);
    const summary = studySummary(limited.doc);
    expect(summary).toContain(`study ${limited.doc.name} stopped by its time limit`);
    expect(summary).toMatch(/^work: \d+ of \d+ jobs planned, \d+ of \d+ epochs \(\d+ %\)/m);

    const resumed = await resumeStudy(dir, { transport });
    expect(resumed.doc.state).toBe('finished');
    expect(ranked(resumed)).toEqual(ranked(straight));
    expect(resumed.doc.trials.map((t) => [t.id, t.configuration])).toEqual(straight.doc.trials.map((t) => [t.id, t.configuration]));
  });
});

describe('rungwise run --minutes', () => {
  it('ends a study whose limit has passed with exit code 0, says how to go on, and records the stop', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-minutes-'));
    await writeIrisCsv(dir);
    const studyFile = path.join(dir, 'study.json');
    await writeFile(
      studyFile,
      JSON.stringify({
        name: 'iris-minutes',
        data: { csv: 'iris.csv', target: 'species', task: 'multiclass', splitSeed: 4 },
        space: { depth: { min: 1, max: 1 }, width: { min: 4, max: 8 }, activation: ['relu'], learningRate: { min: 0.003, max: 0.05 }, batchSize: [16], optimizer: ['adam'] },
        budget: { trials: 40, maxEpochs: 40 },
        sampler: { kind: 'random', seed: 11 },
        threads: 1,
      }),
    );
    const out = path.join(dir, 'run');
    // A limit of 6 milliseconds: however fast the machine, it passes before 40 trials of 40 epochs have started.
    const result = await runCli(['run', studyFile, '--out', out, '--minutes', '0.0001']);
    expect(result.code).toBe(0);
    expect(result.stderr).toContain(`study stopped by its time limit; continue it with: rungwise resume ${out} --minutes <m>`);
    const saved = JSON.parse(await import('node:fs/promises').then((fs) => fs.readFile(path.join(out, 'study.json'), 'utf8'))) as { state: string; trials: unknown[] };
    expect(saved.state).toBe('time-limit');
    expect(saved.trials.length).toBeLessThan(40);
    const bad = await runCli(['run', studyFile, '--out', out, '--force', '--minutes', '0']);
    expect(bad.code).toBe(2);
    expect(bad.stderr).toMatch(/--minutes must be a number of minutes above 0/);
  });
});
