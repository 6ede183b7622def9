import { existsSync } from 'node:fs';
import { readFile, rm, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { UserError } from '../src/core/errors.js';
import { inspectTarget } from '../src/data/infer-task.js';
import { run } from '../src/commands/run.js';
import { defaultBudget, defaultFirstConfiguration, defaultStudy, studyNameFor } from '../src/study/defaults.js';
import { loadStudy, validateStudy } from '../src/study/load.js';
import { runCli } from './helpers/cli.js';
import { IRIS_TARGET, makeTempDir, PENGUINS_TARGET, writeIrisCsv, writePenguinsCsv } from './helpers/datasets.js';

let folder: string;
let irisFile: string;
let penguinsFile: string;

beforeAll(async () => {
  folder = await makeTempDir('rungwise-from-data-');
  irisFile = await writeIrisCsv(folder);
  penguinsFile = await writePenguinsCsv(folder);
});
afterAll(async () => {
  await rm(folder, { recursive: true, force: true });
});

async function csvWith(name: string, targets: readonly (string | number)[]): Promise<string> {
  const file = path.join(folder, name);
  await writeFile(file, `x,y\n${targets.map((target, i) => `${i % 7},${target}`).join('\n')}\n`);
  return file;
}

async function userErrorOf(promise: Promise<unknown>): Promise<UserError> {
  try {
    await promise;
  } catch (error) {
    if (error instanceof UserError) return error;
    throw error;
  }
  throw new Error('expected a UserError');
}

describe('the task read from the target column', () => {
  it('reads the open data sets as they are documented: Iris and Palmer Penguins have 3 species', async () => {
    // Source: Fisher (1936) via UCI iris.names (3 classes); Horst, Hill, Gorman (2020), palmerpenguins (3 species). REFERENCES.md, confirmed.
    expect(await inspectTarget(irisFile, IRIS_TARGET, 'test')).toMatchObject({ rows: 150, columns: 5, task: 'multiclass' });
    expect(await inspectTarget(penguinsFile, PENGUINS_TARGET, 'test')).toMatchObject({ rows: 344, task: 'multiclass' });
  });

  it('reads 2 labels or 2 numbers as binary, fractions or many whole numbers as regression', async () => {
    // Common practice (no source): the rule stated in src/data/infer-task.ts and the README.
    expect((await inspectTarget(await csvWith('yes-no.csv', ['yes', 'no', 'yes', 'no']), 'y', 'test')).task).toBe('binary');
    expect((await inspectTarget(await csvWith('zero-one.csv', [0, 1, 1, 0, 1]), 'y', 'test')).task).toBe('binary');
    expect((await inspectTarget(await csvWith('fractions.csv', [1.5, 2, 3, 4]), 'y', 'test')).task).toBe('regression');
    const counts = Array.from({ length: 40 }, (_, i) => i * 3);
    expect((await inspectTarget(await csvWith('counts.csv', counts), 'y', 'test')).task).toBe('regression');
  });

  it('refuses a few whole numbers as ambiguous, in one line naming the file, the target and the fix', async () => {
    const file = await csvWith('grades.csv', [1, 2, 3, 4, 5, 1, 2]);
    const error = await userErrorOf(inspectTarget(file, 'y', 'grades.csv: data'));
    expect(error.message).toBe(`grades.csv: data: target 'y' of ${file}: holds 5 distinct whole numbers (1, 2, 3, 4, 5): classes or a quantity? add --task binary|multiclass|regression (or "task" in the definition's data)`);
    expect(error.exitCode).toBe(2);
    expect((await inspectTarget(file, 'y', 'test', 'multiclass')).task).toBe('multiclass');
  });

  it('refuses a constant target and a missing column', async () => {
    expect((await userErrorOf(inspectTarget(await csvWith('constant.csv', ['a', 'a', 'a']), 'y', 'test'))).message).toMatch(/holds a single value/);
    expect((await userErrorOf(inspectTarget(irisFile, 'Species', 'test'))).message).toMatch(/target column 'Species' is not in .*did you mean 'species'/);
  });
});

describe('the default study', () => {
  it('is a valid definition with the budget scaled to the rows and the known-good configuration first', () => {
    const input = defaultStudy({ csv: 'data.csv', target: 'y', task: 'binary', rows: 2000, columns: 30 });
    const definition = validateStudy(input, 'default');
    expect(definition.name).toBe('data');
    expect(definition.budget).toEqual({ trials: 81, maxEpochs: 54 });
    expect(definition.sampler).toMatchObject({ kind: 'successive-halving', eta: 3, minEpochs: 2 });
    expect(definition.tryFirst).toEqual([defaultFirstConfiguration('binary', 2000)]);
    expect(defaultBudget(150)).toEqual({ trials: 81, minEpochs: 8, maxEpochs: 216 });
    expect(defaultBudget(100_000)).toEqual({ trials: 81, minEpochs: 1, maxEpochs: 27 });
    expect(studyNameFor('My data (2024).csv')).toBe('My-data-2024');
  });

  it('searches the published recipes\' preprocessing, regularisers and schedule, label smoothing for classification only', () => {
    const classification = validateStudy(defaultStudy({ csv: 'data.csv', target: 'y', task: 'multiclass', rows: 150, columns: 5 }), 'default');
    const regression = validateStudy(defaultStudy({ csv: 'data.csv', target: 'y', task: 'regression', rows: 398, columns: 8 }), 'default');
    // From memory: RealMLP-TD (Holzmüller, Grinsztajn, Steinwart, "Better by Default", NeurIPS 2024) scales
    // numbers robustly with a smooth clip and smooths classification labels by 0.1.
    expect(classification.space.numericInputs).toEqual(['standardise', 'robust-clip']);
    expect(classification.space.labelSmoothing).toEqual({ min: 0, max: 0.2, log: false });
    expect(classification.tryFirst?.[0]).toMatchObject({ numericInputs: 'robust-clip', labelSmoothing: 0.1, schedule: 'cosine', warmupEpochs: 0 });
    // Source: Kadra, Lindauer, Hutter, Grabocka, "Well-tuned Simple Nets Excel on Tabular Datasets", NeurIPS 2021:
    // regularisers (here decoupled weight decay beside L2 and dropout) searched together.
    expect(classification.space.weightDecay).toEqual({ min: 1e-6, max: 1e-3, log: true });
    expect(classification.space.schedule?.kind).toEqual(['constant', 'cosine']);
    expect(regression.space.labelSmoothing).toBeUndefined();
    expect(regression.tryFirst?.[0]?.labelSmoothing).toBeUndefined();
    expect(regression.space.numericInputs).toEqual(['standardise', 'robust-clip']);
    // Residual blocks cannot yet be searched with weight decay or label smoothing: the default keeps plain blocks.
    expect(classification.space.block).toBeUndefined();
  });
});

describe('run from data alone', () => {
  it('defines the study, writes its definition beside the run, and trains the listed configuration first', async () => {
    const out = path.join(folder, 'runs', 'iris');
    const notes: string[] = [];
    const outcome = await run({
      definition: { data: { csv: path.basename(irisFile), target: IRIS_TARGET, splitSeed: 3 }, budget: { trials: 3, maxEpochs: 2 } },
      baseDir: folder,
      out,
      threads: 1,
      onEvent: (event) => {
        if (event.type === 'note') notes.push(event.message);
      },
    });
    expect(outcome.doc.definition.data).toMatchObject({ task: 'multiclass', splitSeed: 3 });
    expect(notes[0]).toMatch(/task multiclass \(the target holds 3 distinct text labels\); 150 rows, 5 columns/);
    expect(notes[2]).toContain('definition.json');
    const written = await loadStudy(path.join(out, 'definition.json'));
    expect(written.definition).toEqual(outcome.doc.definition);
    expect(path.resolve(out, written.definition.data.csv)).toBe(irisFile);
    const first = outcome.doc.trials.find((trial) => trial.id === 0)!;
    expect(first.configuration).toEqual(defaultFirstConfiguration('multiclass', 150));
  });

  it('refuses an ambiguous target before anything is written (exit code 2, one line)', async () => {
    const file = await csvWith('levels.csv', [1, 2, 3, 1, 2, 3, 1]);
    const result = await runCli(['run', file, '--target', 'y', '--out', path.join(folder, 'runs', 'levels')]);
    expect(result.code).toBe(2);
    expect(result.stderr.trim().split('\n')).toHaveLength(1);
    expect(result.stderr).toContain('--task');
    expect(existsSync(path.join(folder, 'runs', 'levels'))).toBe(false);
  });

  it('asks for --target when given a CSV without it', async () => {
    const result = await runCli(['run', irisFile]);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain(`rungwise run ${irisFile} --target <column>`);
  });

  it('reads a definition file that gives only data, relative to the file', async () => {
    const file = path.join(folder, 'only-data.json');
    await writeFile(file, JSON.stringify({ data: { csv: path.basename(penguinsFile), target: PENGUINS_TARGET }, budget: { trials: 2, maxEpochs: 1 } }));
    const out = path.join(folder, 'runs', 'penguins');
    const outcome = await run({ definition: file, out, threads: 1 });
    expect(outcome.doc.definition.name).toBe('penguins');
    expect(JSON.parse(await readFile(path.join(out, 'definition.json'), 'utf8'))).toMatchObject({ data: { task: 'multiclass', target: PENGUINS_TARGET } });
  });
});
