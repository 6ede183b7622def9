/**
 * Model-based samplers: (1) the time to propose one configuration with 1,000 finished trials (no
 * training); (2) with real training on the demo data, Palmer Penguins and a regression set (vega-datasets
 * cars, miles per gallon): the trials TPE needs to reach random search's final best, and the epochs TPE
 * inside Hyperband needs to reach Hyperband's final best, medians over seeds.
 */
import { readFile, rm, writeFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { availableParallelism } from 'node:os';
import path from 'node:path';
import { stream } from '../src/random/streams.js';
import { runStudy } from '../src/runner/run-study.js';
import { createSampler } from '../src/samplers/index.js';
import type { Job } from '../src/samplers/sampler.js';
import { TpeModel, type Observation } from '../src/samplers/tpe-model.js';
import { pointOfConfiguration } from '../src/space/dimensions.js';
import { spaceDesign } from '../src/samplers/design.js';
import { budgetSchema } from '../src/core/budget.js';
import { samplerSchema } from '../src/samplers/registry.js';
import { spaceSchema } from '../src/space/schema.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import type { BenchOptions } from './index.js';
import { fmt, type GroupResult, type Table, type TargetCheck } from './report.js';
import { tempDir, writeDefinition, writePenguinsCsv } from './studies.js';
import { studyBase } from './budget.js';

const SPACE: StudyDefinitionInput['space'] = {
  depth: { min: 1, max: 3 },
  width: { min: 4, max: 128, log: true },
  activation: ['relu', 'tanh', 'elu'],
  learningRate: { min: 0.0003, max: 0.3 },
  batchSize: [32, 64],
  optimizer: ['adam', 'momentum', 'sgd'],
  l2: { min: 1e-6, max: 1e-2 },
};

const median = (xs: readonly number[]): number => {
  const sorted = [...xs].sort((a, b) => a - b);
  const mid = Math.floor(sorted.length / 2);
  return sorted.length % 2 ? sorted[mid]! : (sorted[mid - 1]! + sorted[mid]!) / 2;
};

/** Milliseconds to propose the 1,001st configuration of a `tpe` study whose first 1,000 have finished. */
function proposalCost(seed: number): { tpe: number; tpeHyperbandModel: number } {
  const definition = {
    space: spaceSchema.parse(SPACE),
    budget: budgetSchema.parse({ trials: 1001, maxEpochs: 1 }),
    sampler: samplerSchema.parse({ kind: 'tpe', seed, trialsBeforeModel: 1000 }),
  };
  const sampler = createSampler(definition);
  const loss = (job: Job) => Math.abs(Math.log10(job.configuration.learningRate) + 2) + job.configuration.width / 128 + stream(seed, 'noise', job.trialId)() * 0.1;
  const observations: Observation[] = [];
  for (let trialId = 0; trialId < 1000; trialId++) {
    const job = sampler.next() as Job;
    sampler.report({ trialId, rung: 0, loss: loss(job) });
    observations.push({ trialId, point: pointOfConfiguration(definition.space, job.configuration), loss: loss(job) });
  }
  let started = performance.now();
  const proposal = sampler.next();
  const tpe = performance.now() - started;
  if (typeof proposal === 'string') throw new Error(`expected a proposal, got ${proposal}`);
  // The tpe-hyperband defaults: gamma 0.15, 64 candidates, Scott widths widened 3 times for drawing.
  started = performance.now();
  new TpeModel(spaceDesign(definition.space).dimensions, observations, { gamma: 0.15, drawsPerProposal: 64, wideKernelWeight: 1, bandwidth: 'scott', drawWidening: 3, minimumGroup: 8 }).propose(stream(seed, 'propose'));
  return { tpe, tpeHyperbandModel: performance.now() - started };
}

/** The vega-datasets cars table as CSV (rows without miles per gallon dropped), for a regression study. */
async function writeCarsCsv(dir: string): Promise<string> {
  const entry = createRequire(import.meta.url).resolve('vega-datasets');
  const records = JSON.parse(await readFile(path.resolve(path.dirname(entry), '..', 'data', 'cars.json'), 'utf8')) as Record<string, string | number | null>[];
  const columns = ['Miles_per_Gallon', 'Cylinders', 'Displacement', 'Horsepower', 'Weight_in_lbs', 'Acceleration', 'Origin'];
  const lines = [columns.join(',')];
  for (const record of records) {
    if (record['Miles_per_Gallon'] === null || record['Miles_per_Gallon'] === undefined) continue;
    lines.push(columns.map((column) => (record[column] === null || record[column] === undefined ? 'NA' : String(record[column]))).join(','));
  }
  const file = path.join(dir, 'cars.csv');
  await writeFile(file, lines.join('\n') + '\n');
  return file;
}

interface Dataset {
  name: string;
  data: StudyDefinitionInput['data'];
  goal: NonNullable<StudyDefinitionInput['goal']>;
}

async function datasets(dir: string): Promise<Dataset[]> {
  const list: Dataset[] = [];
  const demo = await studyBase('demo', dir);
  if (demo) list.push({ name: 'demo', data: demo, goal: { metric: 'auc', better: 'higher' } });
  list.push({ name: 'penguins', data: { csv: await writePenguinsCsv(dir), target: 'Species', task: 'multiclass', splitSeed: 1 }, goal: { metric: 'logLoss', better: 'lower' } });
  list.push({ name: 'cars', data: { csv: await writeCarsCsv(dir), target: 'Miles_per_Gallon', task: 'regression', splitSeed: 1 }, goal: { metric: 'rmse', better: 'lower' } });
  return list;
}

/** One study's finished jobs in finishing order: objective (oriented: larger is better) and epochs trained so far. */
interface Progress {
  /** Best oriented objective among trials trained to maxEpochs, after each finished full-length job. */
  steps: { trials: number; epochs: number; best: number }[];
  final: number;
}

async function runProgress(dir: string, name: string, definition: StudyDefinitionInput, threads: number): Promise<Progress> {
  const file = await writeDefinition(dir, definition, `${name}.json`);
  const sign = definition.goal?.better === 'lower' ? -1 : 1;
  const maxEpochs = definition.budget.maxEpochs;
  const steps: Progress['steps'] = [];
  let epochs = 0;
  let trials = 0;
  let best = -Infinity;
  await runStudy(file, {
    out: path.join(dir, `run-${name}`),
    threads,
    onEvent: (event) => {
      if (event.type !== 'trial-finished') return;
      epochs += event.job.toEpoch - event.job.fromEpoch;
      if (event.job.rung === 0) trials++;
      if (event.job.toEpoch === maxEpochs && event.trial.score !== null) best = Math.max(best, sign * event.trial.score);
      steps.push({ trials, epochs, best });
    },
  });
  return { steps, final: best };
}

/** Trials (or epochs) at the first step whose best reaches `target`; null if never. */
const neededTo = (progress: Progress, target: number, unit: 'trials' | 'epochs'): number | null => progress.steps.find((step) => step.best >= target - 1e-12)?.[unit] ?? null;

export async function modelGroup(options: BenchOptions): Promise<GroupResult> {
  const threads = availableParallelism();
  const costs = [1, 2, 3, 4, 5].map(proposalCost);
  const tpeCost = median(costs.map((c) => c.tpe));
  const bohbCost = median(costs.map((c) => c.tpeHyperbandModel));
  console.log(`   proposal with 1,000 finished trials: tpe ${fmt(tpeCost)} ms, tpe-hyperband's model ${fmt(bohbCost)} ms (medians of 5)`);

  const seeds = options.quick ? [1] : [1, 2, 3];
  const trials = options.quick ? 12 : 20;
  const maxEpochs = options.quick ? 5 : 9;
  const hyperbandEpochs = options.quick ? 9 : 27;
  const dir = await tempDir('model');
  const rows: (string | number)[][] = [];
  const ratios: { dataset: string; trials: number[]; epochs: number[] } [] = [];
  try {
    for (const dataset of await datasets(dir)) {
      const entry = { dataset: dataset.name, trials: [] as number[], epochs: [] as number[] };
      for (const seed of seeds) {
        const base = (sampler: NonNullable<StudyDefinitionInput['sampler']>, budget: StudyDefinitionInput['budget']): StudyDefinitionInput => ({
          name: `bench-model-${dataset.name}`, data: dataset.data, space: SPACE, budget, sampler, goal: dataset.goal, threads,
        });
        const random = await runProgress(dir, `random-${dataset.name}-${seed}`, base({ kind: 'random', seed }, { trials, maxEpochs }), threads);
        const tpe = await runProgress(dir, `tpe-${dataset.name}-${seed}`, base({ kind: 'tpe', seed, trialsBeforeModel: 6, batchSize: threads }, { trials, maxEpochs }), threads);
        const hyperband = await runProgress(dir, `hb-${dataset.name}-${seed}`, base({ kind: 'hyperband', seed, eta: 3 }, { trials: 1, maxEpochs: hyperbandEpochs }), threads);
        const tpeHyperband = await runProgress(dir, `tpehb-${dataset.name}-${seed}`, base({ kind: 'tpe-hyperband', seed, eta: 3 }, { trials: 1, maxEpochs: hyperbandEpochs }), threads);
        const tpeTrials = neededTo(tpe, random.final, 'trials');
        const hbEpochs = hyperband.steps.at(-1)!.epochs;
        const tpeHbEpochs = neededTo(tpeHyperband, hyperband.final, 'epochs');
        entry.trials.push((tpeTrials ?? Infinity) / trials);
        entry.epochs.push((tpeHbEpochs ?? Infinity) / hbEpochs);
        const shown = (x: number) => fmt(Math.abs(x), 4);
        rows.push([dataset.name, seed, `${dataset.goal.metric} ${shown(random.final)}`, `${shown(tpe.final)}`, tpeTrials === null ? `not reached in ${trials}` : `${tpeTrials} of ${trials}`,
          `${shown(hyperband.final)} (${hbEpochs} epochs)`, shown(tpeHyperband.final), tpeHbEpochs === null ? `not reached in ${tpeHyperband.steps.at(-1)!.epochs}` : `${tpeHbEpochs}`]);
        console.log(`   ${rows.at(-1)!.join(' | ')}`);
      }
      ratios.push(entry);
    }
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
  const targets: TargetCheck[] = [
    { target: 'tpe: propose one configuration with 1,000 finished trials in < 20 ms', measured: `${fmt(tpeCost)} ms (median of 5)`, holds: tpeCost < 20 },
    { target: "tpe-hyperband's model (64 candidates): one proposal with 1,000 results in < 20 ms", measured: `${fmt(bohbCost)} ms (median of 5)`, holds: bohbCost < 20 },
  ];
  for (const entry of ratios) {
    const t = median(entry.trials);
    const e = median(entry.epochs);
    targets.push({ target: `${entry.dataset}: TPE reaches random search's final best in at most half its trials (median over ${seeds.length} seeds)`, measured: Number.isFinite(t) ? `${fmt(t * 100)}% of the trials` : 'not reached', holds: t <= 0.5 });
    targets.push({ target: `${entry.dataset}: tpe-hyperband reaches Hyperband's final best in at most half its epochs (median over ${seeds.length} seeds)`, measured: Number.isFinite(e) ? `${fmt(e * 100)}% of the epochs` : 'not reached', holds: e <= 0.5 });
  }
  const table: Table = {
    title: `random and tpe: ${trials} trials of ${maxEpochs} epochs; hyperband and tpe-hyperband: maxEpochs ${hyperbandEpochs}, eta 3, one pass; ${threads} threads`,
    columns: ['data', 'seed', 'random: final best', 'tpe: final best', 'tpe: trials to reach random\'s best', 'hyperband: final best', 'tpe-hyperband: final best', 'tpe-hyperband: epochs to reach hyperband\'s best'],
    rows,
  };
  return {
    group: 'model',
    title: '8. Model-based samplers: proposal cost and efficiency with real training',
    tables: [{ title: 'Proposal cost, 1,000 finished trials, 7 dimensions', columns: ['sampler', 'median ms (5 runs)'], rows: [['tpe (24 candidates)', tpeCost], ['tpe-hyperband model (64 candidates)', bohbCost]] }, table],
    targets,
    notes: [
      `${seeds.length} seeds per data set (the target asks for 10; fewer keep the group to a few minutes on 2 shared cores).`,
      'Best = best validation objective among trials trained to maxEpochs (AUC for the demo, log loss for penguins, RMSE in miles per gallon for cars); "to reach" counts finished trials (or epochs trained) in finishing order until that best equals or beats the other sampler\'s final best.',
      'Penguins is scored by log loss, since accuracy reaches 100% within a few trials under every sampler.',
    ],
    data: { costs, rows },
  };
}
