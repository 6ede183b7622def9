import { existsSync } from 'node:fs';
import { mkdtemp, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { StudyStore } from '../src/store/study-store.js';
import { runCli } from './helpers/cli.js';
import { writeIrisCsv } from './helpers/datasets.js';

let dir: string;
let studyFile: string;

const study = {
  name: 'iris-cli',
  data: { csv: 'iris.csv', target: 'species', task: 'multiclass', splitSeed: 4 },
  space: {
    depth: { min: 1, max: 2 },
    width: { min: 4, max: 16 },
    activation: ['relu', 'tanh'],
    learningRate: { min: 0.003, max: 0.05 },
    batchSize: [16],
    optimizer: ['adam'],
  },
  budget: { trials: 3, maxEpochs: 4 },
  sampler: { kind: 'random', seed: 11 },
  threads: 2,
};

beforeAll(async () => {
  dir = await mkdtemp(path.join(tmpdir(), 'rungwise-cli-'));
  await writeIrisCsv(dir);
  studyFile = path.join(dir, 'study.json');
  await writeFile(studyFile, JSON.stringify(study));
});

describe('rungwise run and ranking', () => {
  it('runs a study, prints the ranking table and the study file, then ranks it again as JSON', async () => {
    const out = path.join(dir, 'run');
    const result = await runCli(['run', studyFile, '--out', out]);
    expect(result.code).toBe(0);
    // Progress (one line per ended job when not a terminal) goes to stderr, the result to stdout.
    // 3 trials of 4 epochs, then the repeat runs (default 3 seeds each of the top 3) of 4 epochs.
    expect(result.stderr).toMatch(/^running study iris-cli on 2 threads: 12 jobs, 48 epochs planned/);
    expect(result.stderr.match(/^\[\d\/12 jobs, \d+\/48 epochs\] trial \d done/gm)).toHaveLength(3);
    expect(result.stderr.match(/^\[\d+\/12 jobs, \d+\/48 epochs\] repeat \d of trial \d done/gm)).toHaveLength(9);
    expect(result.stdout).not.toMatch(/^\[\d+\/\d+ jobs|^running study/m);
    // The budget's account closes the result.
    expect(result.stdout).toMatch(/^work: 12 of 12 jobs planned, 48 of 48 epochs \(100 %\), 3 of 3 configurations$/m);
    expect(result.stdout).toMatch(/rank\s+trial\s+rung\s+epochs\s+accuracy/);
    expect(result.stdout).toContain(`study file: ${path.join(out, 'study.json')}`);
    expect(result.stdout).toContain('validation score of a configuration picked from many is optimistic');

    const ranking = await runCli(['ranking', out, '--json']);
    expect(ranking.code).toBe(0);
    const parsed = JSON.parse(ranking.stdout) as { trials: { rank: number; trial: number; epochs: number; score: number }[]; repeats: { winnerId: number; pickId: number; figures: { trialId: number; count: number }[] } };
    expect(parsed.trials.map((r) => r.rank)).toEqual([1, 2, 3]);
    // The repeat runs: every configuration's search run and 3 further seeds, the winner first, and the pick.
    expect(parsed.repeats.figures.map((f) => [f.trialId, f.count])).toEqual(parsed.trials.map((r) => [r.trial, 4]));
    expect(result.stdout).toContain(`one-standard-error pick: trial ${parsed.repeats.pickId} `);
    const exported = await runCli(['export', out, '--one-se-pick']);
    expect(exported.code).toBe(0);
    expect(exported.stdout).toContain(`chosen: trial ${parsed.repeats.pickId}, the one-standard-error pick`);
    expect(parsed.trials.every((r) => r.epochs === 4)).toBe(true);
    const scores = parsed.trials.map((r) => r.score);
    expect([...scores].sort((a, b) => b - a)).toEqual(scores);

    const doc = await StudyStore.read(out);
    expect(doc.trials).toHaveLength(3);
    expect(doc.trials.every((t) => t.status === 'trained' && t.curve.length === 4)).toBe(true);
  });

  it('runs a definition with the old objective key, printing one note on what to rename', async () => {
    const old = path.join(dir, 'old-keys.json');
    await writeFile(old, JSON.stringify({ ...study, objective: { metric: 'logLoss', direction: 'minimize' } }));
    const out = path.join(dir, 'old-keys');
    const result = await runCli(['run', old, '--out', out]);
    expect(result.code).toBe(0);
    const notes = result.stderr.split('\n').filter((line) => line.startsWith('note: '));
    expect(notes).toEqual([`note: ${old}: "objective" is the key's old name; it was read as "goal"; rename it to "goal" and its "direction": "minimize" to "better": "lower"`]);
    expect(result.stdout).toMatch(/rank\s+trial\s+rung\s+epochs\s+logLoss/);
    expect((await StudyStore.read(out)).goal).toEqual({ metric: 'logLoss', better: 'lower' });
  });

  it('refuses to run over a directory that already holds a study', async () => {
    const out = path.join(dir, 'taken');
    expect((await runCli(['run', studyFile, '--out', out])).code).toBe(0);
    const again = await runCli(['run', studyFile, '--out', out]);
    expect(again.code).toBe(2);
    expect(again.stderr).toMatch(/already holds a study; use `rungwise resume /);
  });

  it('exits 2 with a one-line error and writes nothing for a malformed definition', async () => {
    const bad = path.join(dir, 'bad.json');
    await writeFile(bad, JSON.stringify({ ...study, budget: { trials: 3, maxEpoch: 4 } }));
    const out = path.join(dir, 'never');
    const result = await runCli(['run', bad, '--out', out]);
    expect(result.code).toBe(2);
    expect(result.stdout).toBe('');
    expect(result.stderr.trim().split('\n')).toHaveLength(2);
    expect(result.stderr).toContain(`${bad}: budget.maxEpoch: unknown key (did you mean 'maxEpochs'?)`);
    expect(result.stderr).toContain(`${bad}: budget.maxEpochs: missing, expected a number`);
    expect(existsSync(out)).toBe(false);
  });

  it('exits 2 for an unknown flag', async () => {
    const result = await runCli(['run', studyFile, '--wrokers', '2']);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain("unknown option '--wrokers'");
  });

  it('ranking of a directory without a study says what to do next', async () => {
    const result = await runCli(['ranking', path.join(dir, 'empty')]);
    expect(result.code).toBe(2);
    expect(result.stderr).toMatch(/no study file here; run `rungwise run/);
  });
});
