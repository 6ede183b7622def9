/**
 * What class weighting trades, measured: the demo's imbalanced study (pump logs, 2207 "no" to 793
 * "yes") and Palmer Penguins (`vega-datasets`: Adelie 152, Chinstrap 68, Gentoo 124), each run with
 * the space's `classWeights` fixed to none, balanced and effective, and once with all three to choose
 * from. The same sampler seed draws the same networks in every run (the weighting is drawn last), so
 * the runs differ only in the weighting. Goal macro-F1, threshold 0.5; the rank-1 network (the
 * study's own, not retrained) scored once on the held-out test split.
 *
 *   node dist/scripts/class-weight-trade.js [--threads 2]
 */
import { copyFile, mkdtemp, readFile, writeFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { run } from '../src/commands/run.js';
import { exportModel } from '../src/commands/export.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';

const require = createRequire(import.meta.url);
const DEMO = fileURLToPath(new URL('../../studies/demo/', import.meta.url));
const WEIGHTINGS: string[][] = [['none'], ['balanced'], ['effective'], ['none', 'balanced', 'effective']];

async function penguinsCsv(folder: string): Promise<void> {
  const header = ['Species', 'Island', 'Beak Length (mm)', 'Beak Depth (mm)', 'Flipper Length (mm)', 'Body Mass (g)', 'Sex'];
  const source = path.resolve(path.dirname(require.resolve('vega-datasets')), '..', 'data', 'penguins.json');
  const records = JSON.parse(await readFile(source, 'utf8')) as Record<string, string | number | null>[];
  const cell = (value: string | number | null | undefined): string => (value === null || value === undefined || value === '.' ? 'NA' : String(value));
  await writeFile(path.join(folder, 'penguins.csv'), `${header.join(',')}\n${records.map((r) => header.map((c) => cell(r[c])).join(',')).join('\n')}\n`);
}

async function demoDefinition(): Promise<StudyDefinitionInput> {
  const demo = JSON.parse(await readFile(path.join(DEMO, 'study-imbalance.json'), 'utf8')) as StudyDefinitionInput & { $schema?: string; decisionThreshold?: unknown };
  const { $schema: _schema, decisionThreshold: _threshold, ...rest } = demo;
  const { classWeights: _weights, ...data } = rest.data;
  return { ...rest, data };
}

function penguinsDefinition(): StudyDefinitionInput {
  return {
    name: 'penguins',
    data: { csv: 'penguins.csv', target: 'Species', task: 'multiclass', splitSeed: 1 },
    space: { depth: { min: 1, max: 3 }, width: { min: 4, max: 64, log: true }, activation: ['relu', 'tanh'], learningRate: { min: 0.0003, max: 0.1 }, batchSize: [16, 32] },
    budget: { trials: 16, maxEpochs: 30 },
    sampler: { kind: 'random', seed: 7 },
  };
}

async function measure(name: string, base: StudyDefinitionInput, folder: string, threads: number): Promise<void> {
  console.log(`\n${name}: rank 1 by validation macro-F1, scored on the test split`);
  console.log('space.classWeights | chosen | test accuracy | test macro-F1 | validation macro-F1');
  for (const weightings of WEIGHTINGS) {
    const definition = { ...base, name: `${name}-${weightings.join('-')}`, space: { ...base.space, classWeights: weightings }, goal: { metric: 'macroF1' as const, better: 'higher' as const } };
    const out = path.join(folder, definition.name);
    await run({ definition, baseDir: folder, out, threads, force: true });
    const summary = await exportModel({ dir: out });
    const test = summary.studyTest ?? summary.test;
    const exported = JSON.parse(await readFile(path.join(summary.out, 'configuration.json'), 'utf8')) as { configuration: { classWeights?: string } };
    const chosen = exported.configuration.classWeights ?? '';
    console.log(`${weightings.join(', ')} | trial ${summary.trialId} ${chosen} | ${test?.accuracy?.toFixed(3)} | ${test?.macroF1?.toFixed(3)} | ${summary.validation.macroF1?.toFixed(3)}`);
  }
}

async function main(): Promise<void> {
  const threadsAt = process.argv.indexOf('--threads');
  const threads = threadsAt > 0 ? Number(process.argv[threadsAt + 1]) : 2;
  const folder = await mkdtemp(path.join(tmpdir(), 'rungwise-class-weight-trade-'));
  await copyFile(path.join(DEMO, 'pump-logs.csv'), path.join(folder, 'pump-logs.csv'));
  await penguinsCsv(folder);
  await measure('demo-imbalance', await demoDefinition(), folder, threads);
  await measure('penguins', penguinsDefinition(), folder, threads);
  console.log(`\nrun folders: ${folder}`);
}

await main();
