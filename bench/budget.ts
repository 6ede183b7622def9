/**
 * Budget efficiency with real training: random search vs successive halving vs Hyperband on the
 * demo study's data and on Palmer Penguins. Same search space and sampler seed, so trial id k is
 * the same configuration under every sampler; the best objective counts trials trained to maxEpochs.
 */
import { existsSync } from 'node:fs';
import { readFile, rm } from 'node:fs/promises';
import { availableParallelism } from 'node:os';
import path from 'node:path';
import { runStudy } from '../src/runner/run-study.js';
import { configurationsPerPass } from '../src/samplers/hyperband.js';
import type { SamplerKind, StudyDefinitionInput } from '../src/study/definition.js';
import type { TrialRecord } from '../src/core/trial.js';
import type { BenchOptions } from './index.js';
import { fmt, type GroupResult, type TargetCheck } from './report.js';
import { tempDir, writeDefinition, writePenguinsCsv } from './studies.js';

interface BudgetRun {
  dataset: string;
  sampler: SamplerKind;
  configurations: number;
  epochs: number;
  /** Best objective among trials trained to maxEpochs. */
  best: number;
  /** Random search only: best among the first k configurations, for k = each adaptive sampler's count. */
  bestOfFirst?: Record<number, number>;
  wallSeconds: number;
}

const SPACE: StudyDefinitionInput['space'] = {
  depth: { min: 1, max: 3 },
  width: { min: 4, max: 128, log: true },
  activation: ['relu', 'tanh', 'elu'],
  learningRate: { min: 0.0003, max: 0.1 },
  batchSize: [32, 64],
  optimizer: ['adam', 'momentum'],
};

const fullyTrained = (trials: readonly TrialRecord[], maxEpochs: number): TrialRecord[] =>
  trials.filter((t) => t.epochsTrained >= maxEpochs && t.score !== null && ['completed', 'stopped'].includes(t.status));

const bestOf = (trials: readonly TrialRecord[]): number => Math.max(...trials.map((t) => t.score!));

export async function studyBase(name: string, dir: string): Promise<StudyDefinitionInput['data'] | undefined> {
  if (name === 'penguins') {
    const csv = await writePenguinsCsv(dir);
    return { csv, target: 'Species', task: 'multiclass', splitSeed: 1 };
  }
  const demo = path.resolve('studies/demo/study.json'); // npm runs scripts from the package root
  if (!existsSync(demo)) return undefined;
  const definition = JSON.parse(await readFile(demo, 'utf8')) as StudyDefinitionInput;
  return { ...definition.data, csv: path.resolve(path.dirname(demo), definition.data.csv) };
}

export async function budgetGroup(options: BenchOptions): Promise<GroupResult> {
  const configurations = options.quick ? 9 : 27;
  const maxEpochs = 9;
  const threads = availableParallelism();
  const runs: BudgetRun[] = [];
  const notes: string[] = [];
  for (const name of ['demo', 'penguins']) {
    const dir = await tempDir(`budget-${name}`);
    try {
      const data = await studyBase(name, dir);
      if (!data) {
        notes.push(`${name}: studies/demo/study.json not found; skipped`);
        continue;
      }
      const definitionFor = (kind: SamplerKind, trials: number): StudyDefinitionInput => ({
        name: `bench-${name}-${kind}`,
        data,
        space: SPACE,
        budget: { trials, maxEpochs },
        sampler: kind === 'random' ? { kind, seed: 5 } : { kind, seed: 5, eta: 3, minEpochs: 1 },
        goal: { metric: 'accuracy', better: 'higher' },
        threads,
      });
      // One whole pass of Hyperband's brackets (budget.trials now cuts or repeats them).
      const hyperbandCount = configurationsPerPass(maxEpochs, 3, 1);
      const randomCount = Math.max(configurations, hyperbandCount);
      for (const [kind, trials] of [['random', randomCount], ['successive-halving', configurations], ['hyperband', hyperbandCount]] as const) {
        const file = await writeDefinition(dir, definitionFor(kind, trials), `${kind}.json`);
        const started = performance.now();
        const outcome = await runStudy(file, { out: path.join(dir, `run-${kind}`), threads });
        const trained = fullyTrained(outcome.doc.trials, maxEpochs);
        const run: BudgetRun = {
          dataset: name,
          sampler: kind,
          configurations: outcome.doc.trials.length,
          epochs: outcome.doc.totals?.epochsTrained ?? 0,
          best: trained.length > 0 ? bestOf(trained) : NaN,
          wallSeconds: (performance.now() - started) / 1000,
        };
        if (kind === 'random') {
          const ids = outcome.doc.trials.map((t) => t.id).sort((a, b) => a - b);
          const firstK = (k: number): TrialRecord[] => trained.filter((t) => ids.indexOf(t.id) < k);
          run.bestOfFirst = { [configurations]: bestOf(firstK(configurations)), [hyperbandCount]: bestOf(firstK(hyperbandCount)) };
        }
        runs.push(run);
        console.log(`   ${name} ${kind}: ${run.configurations} configurations, ${run.epochs} epochs, best accuracy ${fmt(run.best, 4)}, ${fmt(run.wallSeconds)} s`);
      }
    } finally {
      await rm(dir, { recursive: true, force: true });
    }
  }
  const targets: TargetCheck[] = [];
  for (const name of ['demo', 'penguins']) {
    const random = runs.find((r) => r.dataset === name && r.sampler === 'random');
    const halving = runs.find((r) => r.dataset === name && r.sampler === 'successive-halving');
    if (!random || !halving) continue;
    const reference = random.bestOfFirst![halving.configurations] ?? random.best;
    const gap = (reference - halving.best) * 100;
    const randomEpochs = halving.configurations * maxEpochs;
    const share = halving.epochs / randomEpochs;
    targets.push({
      target: `${name}: halving within 1 point of random's best accuracy with <= 1/3 of its epochs (${halving.configurations} configurations each)`,
      measured: `random ${fmt(reference * 100, 4)}% with ${randomEpochs} epochs; halving ${fmt(halving.best * 100, 4)}% (${gap >= 0 ? `${fmt(gap, 2)} points below` : `${fmt(-gap, 2)} points above`}) with ${halving.epochs} epochs (${fmt(share * 100)}%)`,
      holds: gap <= 1 && share <= 1 / 3,
    });
  }
  return {
    group: 'budget',
    title: '7. Budget efficiency with real training (objective: validation accuracy)',
    tables: [
      {
        title: `maxEpochs ${maxEpochs}, eta 3, minEpochs 1, sampler seed 5, ${threads} threads`,
        columns: ['data', 'sampler', 'configurations', 'epochs trained', 'best accuracy (trained to maxEpochs)', 'random: best of same first configurations', 'wall (s)'],
        rows: runs.map((r) => [
          r.dataset,
          r.sampler,
          r.configurations,
          r.epochs,
          fmt(r.best * 100, 4) + '%',
          r.bestOfFirst ? Object.entries(r.bestOfFirst).map(([k, v]) => `first ${k}: ${fmt(v * 100, 4)}%`).join('; ') : '',
          r.wallSeconds,
        ]),
      },
    ],
    targets,
    notes: [
      'Random search trains every configuration to maxEpochs; trial id k is the same configuration under every sampler (same space and seed), so "first k" is random search with exactly the configurations halving or Hyperband started.',
      'Epochs trained count what was actually trained (a promoted trial continues from its checkpoint).',
      ...notes,
    ],
    data: runs,
  };
}
