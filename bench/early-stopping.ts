/**
 * Early stopping inside a trial, on the demo data: successive halving as `studies/demo/study-halving.json`
 * defines it, run twice in one go: without early stopping and with `earlyStopping: { rule: 'patience',
 * patience: 3 }`. Prints the leader's validation score (rank 1 of `rankTrials`), the best score of
 * any trial, and the epochs each study actually trained.
 */
import { existsSync } from 'node:fs';
import { readFile, rm } from 'node:fs/promises';
import { availableParallelism } from 'node:os';
import path from 'node:path';
import { runStudy } from '../src/runner/run-study.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import { beats } from '../src/core/configuration.js';
import type { BenchOptions } from './index.js';
import { fmt, type GroupResult } from './report.js';
import { tempDir, writeDefinition } from './studies.js';

interface StoppingRun {
  variant: string;
  trials: number;
  /** Epochs actually trained: every curve point of every trial. */
  epochs: number;
  stoppedEarly: number;
  leader: { trial: number; score: number; bestEpoch?: number; epochs: number };
  bestScore: number;
  wallSeconds: number;
}

export async function earlyStoppingGroup(options: BenchOptions): Promise<GroupResult> {
  const source = path.resolve('studies/demo/study-halving.json'); // npm runs scripts from the package root
  if (!existsSync(source)) throw new Error(`${source} not found`);
  const halving = JSON.parse(await readFile(source, 'utf8')) as StudyDefinitionInput;
  const base: StudyDefinitionInput = {
    ...halving,
    data: { ...halving.data, csv: path.resolve(path.dirname(source), halving.data.csv) },
    threads: availableParallelism(),
    ...(options.quick ? { budget: { trials: 9, maxEpochs: 9 } } : {}),
  };
  delete (base as { $schema?: string }).$schema;
  const variants: [string, StudyDefinitionInput][] = [
    ['without early stopping', base],
    ['patience 3', { ...base, name: `${base.name}-patience`, earlyStopping: { rule: 'patience', patience: 3 } }],
  ];
  const dir = await tempDir('early-stopping');
  const runs: StoppingRun[] = [];
  try {
    for (const [variant, definition] of variants) {
      const file = await writeDefinition(dir, definition, `${variant.replaceAll(' ', '-')}.json`);
      const started = performance.now();
      const outcome = await runStudy(file, { out: path.join(dir, `run-${variant.replaceAll(' ', '-')}`) });
      const wallSeconds = (performance.now() - started) / 1000;
      const { doc, ranking } = outcome;
      const leader = ranking[0]!.trial;
      const scores = ranking.map((r) => r.trial.score);
      const run: StoppingRun = {
        variant,
        trials: doc.trials.length,
        epochs: doc.trials.reduce((sum, t) => sum + t.curve.length, 0),
        stoppedEarly: doc.trials.filter((t) => t.stoppedEarly).length,
        leader: { trial: leader.id, score: leader.score, epochs: leader.epochsTrained, ...(leader.bestEpoch !== undefined ? { bestEpoch: leader.bestEpoch } : {}) },
        bestScore: scores.reduce((a, b) => (beats(b, a, doc.goal.better) ? b : a)),
        wallSeconds,
      };
      runs.push(run);
      console.log(`   ${variant}: ${run.epochs} epochs, leader trial ${leader.id} ${doc.goal.metric} ${fmt(leader.score, 4)}, ${run.stoppedEarly} stopped early, ${fmt(wallSeconds)} s`);
    }
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
  const metric = halving.goal?.metric ?? 'auc';
  return {
    group: 'early-stopping',
    title: `Early stopping inside a trial: successive halving on the demo data (${metric}, validation split)`,
    tables: [
      {
        title: `studies/demo/study-halving.json${options.quick ? ' (quick: 9 trials, maxEpochs 9)' : ''}, ${availableParallelism()} threads`,
        columns: ['variant', 'trials', 'epochs trained', 'stopped early', `leader (rank 1): trial, ${metric}, epochs (best epoch)`, `best ${metric} of any ranked trial`, 'wall (s)'],
        rows: runs.map((r) => [
          r.variant,
          r.trials,
          r.epochs,
          r.stoppedEarly,
          `#${r.leader.trial}: ${fmt(r.leader.score, 4)} after ${r.leader.epochs}${r.leader.bestEpoch !== undefined ? ` (best ${r.leader.bestEpoch})` : ''}`,
          fmt(r.bestScore, 4),
          r.wallSeconds,
        ]),
      },
    ],
    targets: [],
    notes: [
      'Epochs trained count every epoch actually trained (a promoted trial continues from its checkpoint; a stopped one trains no further).',
      'With early stopping a trial is scored at its best epoch; without it, at its last. Both are validation figures, optimistic as every figure the study ranks by; the held-out test split is the honest one (`rungwise export --retrain`).',
    ],
    data: runs,
  };
}
