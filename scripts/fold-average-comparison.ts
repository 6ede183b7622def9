/**
 * `export --average-folds` (a k-fold trial's fold networks averaged) against the single network a
 * plain export of a k-fold study hands over (retrained on training plus validation rows), both
 * scored on the held-out test split, for ranks 1 to n: on the folds demo
 * (`studies/demo/study-folds.json`) and on open sets of `scripts/reference-comparison.ts` (penguins,
 * cars) run with 5 folds and random search (16 trials, seed 3). Prints one line per rank.
 *
 *   node dist/scripts/fold-average-comparison.js [--sets demo,cars,penguins] [--ranks 3] [--threads 2]
 */
import { copyFile, mkdir, readFile, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { run } from '../src/commands/run.js';
import { exportFoldAverage } from '../src/commands/export-folds.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import { SETS, csvText } from './reference-comparison.js';

const DEMO = fileURLToPath(new URL('../../studies/demo/', import.meta.url));

/** The search space and budget of the open sets' studies (the demo keeps its own). */
function openSetStudy(name: string, csv: string, target: string, task: 'multiclass' | 'regression'): StudyDefinitionInput {
  return {
    name: `${name}-folds`,
    data: { csv, target, task, validationFraction: 0.2, testFraction: 0.25, splitSeed: 1, folds: 5 },
    space: {
      depth: { min: 1, max: 3 },
      width: { min: 4, max: 128, log: true },
      activation: ['relu', 'tanh', 'elu'],
      learningRate: { min: 0.0003, max: 0.1, log: true },
      batchSize: [16, 32, 64],
      optimizer: ['adam', 'momentum'],
      l2: { min: 1e-6, max: 0.01, log: true },
    },
    budget: { trials: 16, maxEpochs: task === 'regression' ? 40 : 30 },
    sampler: { kind: 'random', seed: 3 },
    goal: task === 'regression' ? { metric: 'rmse', better: 'lower' } : { metric: 'logLoss', better: 'lower' },
  };
}

/** Writes the set's CSV and definition into `folder`; returns the definition file. */
async function writeStudy(name: string, folder: string): Promise<string> {
  if (name === 'demo') {
    await copyFile(path.join(DEMO, 'pump-logs.csv'), path.join(folder, 'pump-logs.csv'));
    const definition = JSON.parse(await readFile(path.join(DEMO, 'study-folds.json'), 'utf8')) as Record<string, unknown>;
    delete definition.$schema;
    await writeFile(path.join(folder, 'demo.json'), JSON.stringify(definition));
    return path.join(folder, 'demo.json');
  }
  const set = SETS[name]!();
  await writeFile(path.join(folder, `${name}.csv`), csvText(set));
  await writeFile(path.join(folder, `${name}.json`), JSON.stringify(openSetStudy(name, `${name}.csv`, set.target, set.task)));
  return path.join(folder, `${name}.json`);
}

function option(name: string, fallback: string): string {
  const index = process.argv.indexOf(name);
  return index >= 0 ? process.argv[index + 1]! : fallback;
}

const figures = (metrics: Record<string, number> | undefined): string => Object.entries(metrics ?? {}).map(([name, value]) => `${name} ${value.toFixed(4)}`).join(', ');

async function main(): Promise<void> {
  const names = option('--sets', 'demo,cars,penguins').split(',');
  const ranks = Number(option('--ranks', '3'));
  const threads = Number(option('--threads', '2'));
  const folder = path.join(tmpdir(), 'rungwise-fold-average-comparison');
  await mkdir(folder, { recursive: true });
  for (const name of names) {
    const out = path.join(folder, `${name}-run`);
    await run({ definition: await writeStudy(name, folder), out, threads, force: true });
    for (let rank = 1; rank <= ranks; rank++) {
      const { trialId, ensemble } = await exportFoldAverage({ dir: out, rank });
      console.log(`${name} rank ${rank} (trial ${trialId}): average ${figures(ensemble.test)} | retrained ${figures(ensemble.winnerTest)} | out-of-fold ${figures(ensemble.validation)}`);
    }
  }
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  main().catch((error: unknown) => {
    console.error(error instanceof Error ? error.message : error);
    process.exitCode = 1;
  });
}
