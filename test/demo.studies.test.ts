import { existsSync, readFileSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { studySchema, type StudyDefinition } from '../src/study/definition.js';

const repositoryFile = (path: string): string => fileURLToPath(new URL(`../${path}`, import.meta.url));

const DEMO_FILES = [
  'studies/demo/study.json',
  'studies/demo/study-halving.json',
  'studies/demo/study-hyperband.json',
  'studies/demo/study-async-halving.json',
  'studies/demo/study-sobol.json',
  'studies/demo/study-tpe.json',
  'studies/demo/study-tpe-hyperband.json',
  'studies/demo/study-imbalance.json',
  'studies/demo/study-costs.json',
  'studies/demo/study-front.json',
  'studies/demo/study-early-stopping.json',
  'studies/demo/study-folds.json',
  'studies/demo/study-regularisers.json',
  'studies/demo/study-shapes.json',
];
const TINY_FILES = [
  'studies/tiny/study.json',
  'studies/tiny/study-regression.json',
  'studies/tiny/study-multiclass.json',
];
const STUDY_FILES = [...DEMO_FILES, ...TINY_FILES];

function load(path: string): StudyDefinition {
  return studySchema.parse(JSON.parse(readFileSync(repositoryFile(path), 'utf8')));
}

/** Values of one column of a study's CSV (the generated files need no quoting). */
function columnOf(path: string, definition: StudyDefinition): string[] {
  const csv = readFileSync(resolve(dirname(repositoryFile(path)), definition.data.csv), 'utf8');
  const [header, ...rows] = csv.trimEnd().split('\n').map((line) => line.split(','));
  const index = header!.indexOf(definition.data.target);
  expect(index, `${definition.data.target} in the header of ${definition.data.csv}`).toBeGreaterThanOrEqual(0);
  return rows.map((row) => row[index]!);
}

describe('committed study definitions', () => {
  it.each(STUDY_FILES)('%s passes the study schema and names the editor schema', (path) => {
    const raw = JSON.parse(readFileSync(repositoryFile(path), 'utf8')) as { $schema?: string };
    expect(raw.$schema).toBe('../../schema/study.schema.json');
    expect(studySchema.safeParse(raw).error).toBeUndefined();
  });

  it.each(STUDY_FILES)('%s points at an existing CSV holding its target', (path) => {
    const definition = load(path);
    expect(existsSync(resolve(dirname(repositoryFile(path)), definition.data.csv))).toBe(true);
    expect(columnOf(path, definition).length).toBeGreaterThan(0);
  });

  it('give each task a target of the right kind', () => {
    const distinct = (path: string): number => new Set(columnOf(path, load(path))).size;
    expect(distinct('studies/tiny/study.json')).toBe(2);
    expect(distinct('studies/demo/study.json')).toBe(2);
    expect(distinct('studies/tiny/study-multiclass.json')).toBe(3);
    const flows = columnOf('studies/tiny/study-regression.json', load('studies/tiny/study-regression.json')).map(Number);
    expect(flows.every(Number.isFinite)).toBe(true);
  });
});

describe('the demo studies', () => {
  it('search the same space with the AUC objective (the costs demo by its cost)', () => {
    const [random, ...others] = DEMO_FILES.map(load);
    // The early-stopping, regularisers and shapes demos search schedules, regularisers, shapes and blocks as well; the rest of their space is everyone's.
    const shared = (space: StudyDefinition['space']) => ({ ...space, schedule: undefined, weightDecay: undefined, maxGradientNorm: undefined, labelSmoothing: undefined, shape: undefined, block: undefined });
    for (const definition of others) expect(shared(definition!.space)).toEqual(shared(random!.space));
    for (const definition of [random, ...others]) expect(definition!.goal?.metric).toBe(definition!.data.costs ? 'cost' : 'auc');
    expect(others.filter((definition) => definition!.data.costs).map((definition) => definition!.name)).toEqual(['demo-costs', 'demo-front']);
    expect(random!.sampler.kind).toBe('random');
    expect(random!.budget).toEqual({ trials: 16, maxEpochs: 20 });
  });

  it('search the same space and data with the Sobol design, TPE and TPE inside Hyperband', () => {
    const random = load('studies/demo/study.json');
    const kinds = ['study-sobol', 'study-tpe', 'study-tpe-hyperband'].map((name) => load(`studies/demo/${name}.json`));
    for (const definition of kinds) {
      expect(definition.space).toEqual(random.space);
      expect(definition.data).toEqual(random.data);
    }
    expect(kinds.map((definition) => definition.sampler.kind)).toEqual(['sobol', 'tpe', 'tpe-hyperband']);
  });

  it('halve 27 configurations by 3 from 1 epoch to 27', () => {
    const { budget, sampler } = load('studies/demo/study-halving.json');
    expect(sampler).toMatchObject({ kind: 'successive-halving', eta: 3, minEpochs: 1 });
    expect(budget).toEqual({ trials: 27, maxEpochs: 27 });
  });

  it('halve the same 27 configurations with learning-rate schedules and early stopping in the early-stopping demo', () => {
    const halving = load('studies/demo/study-halving.json');
    const early = load('studies/demo/study-early-stopping.json');
    expect(early.sampler).toEqual(halving.sampler);
    expect(early.budget).toEqual(halving.budget);
    expect(early.data).toEqual(halving.data);
    expect(early.space.schedule?.kind).toEqual(['constant', 'step', 'cosine']);
    expect(early.earlyStopping).toMatchObject({ rule: 'patience', patience: 3 });
  });

  it('search the random-search demo with shapes and residual blocks in the shapes demo', () => {
    const random = load('studies/demo/study.json');
    const shapes = load('studies/demo/study-shapes.json');
    expect(shapes.space).toEqual({ ...random.space, shape: ['constant', 'funnel'], block: ['plain', 'residual'] });
    expect(shapes.data).toEqual(random.data);
    expect(shapes.sampler).toEqual(random.sampler);
    expect(shapes.budget).toEqual(random.budget);
  });

  it('score the random-search demo on 5 folds in the folds demo', () => {
    const random = load('studies/demo/study.json');
    const folds = load('studies/demo/study-folds.json');
    expect(folds.data).toEqual({ ...random.data, folds: 5 });
    expect(folds.sampler).toEqual(random.sampler);
    expect(folds.budget).toEqual(random.budget);
  });

  it('state the configuration count Hyperband derives for R = 27, eta = 3', () => {
    // Source: Li et al., "Hyperband", JMLR 18(185), 2018, Algorithm 1 (derived): s_max = 3, B = 108,
    // brackets s = 3..0 start ceil((B / R) * eta^s / (s + 1)) = 27, 12, 6, 4 configurations: 49 in all.
    const { budget, sampler } = load('studies/demo/study-hyperband.json');
    expect(sampler).toMatchObject({ kind: 'hyperband', eta: 3, minEpochs: 1 });
    expect(budget).toEqual({ trials: 49, maxEpochs: 27 });
  });
});

describe('the tiny studies', () => {
  it.each(TINY_FILES)('%s runs 4 trials of 3 epochs on 2 threads with random search', (path) => {
    const definition = load(path);
    expect(definition.budget).toEqual({ trials: 4, maxEpochs: 3 });
    expect(definition.threads).toBe(2);
    expect(definition.sampler.kind).toBe('random');
    expect(columnOf(path, definition)).toHaveLength(120);
  });
});
