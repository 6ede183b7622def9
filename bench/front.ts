/**
 * What TPE's second goal buys: the demo front study (`studies/demo/study-front.json`: invented costs,
 * at most 1,500 weights, cost against weights) run with random search, with TPE on the cost alone
 * (no `footprint.against`) and with TPE on both goals (Ozaki et al. 2020's split, `samplers/two-goals.ts`),
 * on the same seeds and budget: each run's front (size) and its hypervolume, normalised between the best
 * and worst values seen over all runs (cost) and between the smallest network seen and the limit (weights).
 */
import { readFile, rm } from 'node:fs/promises';
import path from 'node:path';
import { frontOf } from '../src/core/front.js';
import { budgetSchema } from '../src/core/budget.js';
import { stream } from '../src/random/streams.js';
import { runStudy } from '../src/runner/run-study.js';
import { createSampler, secondGoalMeasure, type Job } from '../src/samplers/index.js';
import { samplerSchema } from '../src/samplers/registry.js';
import { spaceSchema } from '../src/space/schema.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import type { BenchOptions } from './index.js';
import { fmt, type GroupResult } from './report.js';
import { tempDir, writeDefinition } from './studies.js';

const PROPOSERS = ['random', 'tpe, cost alone', 'tpe, both goals'] as const;
type Proposer = (typeof PROPOSERS)[number];
const WEIGHT_LIMIT = 1500;

interface FrontRun {
  proposer: Proposer;
  seed: number;
  /** (cost, weights) of the front's configurations. */
  front: [number, number][];
}

/** The demo front study with its CSV path made absolute, the proposer's sampler and seed, and no repeat runs. */
async function frontDefinition(proposer: Proposer, seed: number, options: BenchOptions): Promise<StudyDefinitionInput> {
  const source = path.resolve('studies/demo/study-front.json'); // npm runs scripts from the package root
  const definition = JSON.parse(await readFile(source, 'utf8')) as StudyDefinitionInput & { $schema?: string };
  delete definition.$schema;
  const trialsBeforeModel = options.quick ? 6 : 10;
  const sampler = proposer === 'random' ? { kind: 'random' as const, seed } : { kind: 'tpe' as const, seed, trialsBeforeModel };
  return {
    ...definition,
    data: { ...definition.data, csv: path.resolve(path.dirname(source), definition.data.csv) },
    sampler,
    footprint: proposer === 'tpe, cost alone' ? { maxWeights: WEIGHT_LIMIT } : { maxWeights: WEIGHT_LIMIT, against: 'weights' },
    repeats: { top: 0 },
    ...(options.quick ? { budget: { trials: 12, maxEpochs: 5 } } : {}),
  };
}

/** Hypervolume of points (both minimised) up to `reference`, by sweeping the first goal. */
function hypervolume(points: readonly (readonly [number, number])[], reference: readonly [number, number]): number {
  const sorted = [...points].sort((a, b) => a[0] - b[0] || a[1] - b[1]);
  let volume = 0;
  let ceiling = reference[1];
  for (const [first, second] of sorted) {
    if (first >= reference[0] || second >= ceiling) continue;
    volume += (reference[0] - first) * (ceiling - second);
    ceiling = second;
  }
  return volume;
}

async function runFront(dir: string, proposer: Proposer, seed: number, options: BenchOptions): Promise<FrontRun> {
  const label = `${proposer.replaceAll(/[^a-z]+/g, '-')}-${seed}`;
  const { doc, ranking } = await runStudy(await writeDefinition(dir, await frontDefinition(proposer, seed, options), `${label}.json`), { out: path.join(dir, `run-${label}`) });
  return { proposer, seed, front: frontOf(ranking, doc.goal, 'weights').map((m) => [m.ranked.trial.score!, m.value]) };
}

/**
 * Milliseconds to propose the 1,001st configuration of a `tpe` study whose first 1,000 have finished,
 * with the cost alone or with weights as a second goal (the split's non-dominated sorting is O(n^2)).
 */
function proposalCost(seed: number, twoGoals: boolean): number {
  const definition = {
    space: spaceSchema.parse({ depth: { min: 1, max: 4 }, width: { min: 4, max: 256, log: true }, activation: ['relu', 'tanh', 'elu'], learningRate: { min: 1e-4, max: 0.5 }, batchSize: [32, 64, 128] }),
    budget: budgetSchema.parse({ trials: 1001, maxEpochs: 1 }),
    sampler: samplerSchema.parse({ kind: 'tpe', seed, trialsBeforeModel: 1000 }),
    ...(twoGoals ? { secondGoal: secondGoalMeasure('weights', { inputs: 14, outputs: 1 }) } : {}),
  };
  const sampler = createSampler(definition);
  for (let trialId = 0; trialId < 1000; trialId++) {
    const job = sampler.next() as Job;
    const loss = Math.abs(Math.log10(job.configuration.learningRate) + 2) + 4 / job.configuration.width + stream(seed, 'noise', trialId)() * 0.1;
    sampler.report({ trialId, rung: 0, loss });
  }
  const started = performance.now();
  if (typeof sampler.next() === 'string') throw new Error('expected a proposal');
  return performance.now() - started;
}

const median = (xs: readonly number[]): number => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)]!;

export async function frontGroup(options: BenchOptions): Promise<GroupResult> {
  const costSeeds = [1, 2, 3, 4, 5];
  const cost = { one: median(costSeeds.map((seed) => proposalCost(seed, false))), two: median(costSeeds.map((seed) => proposalCost(seed, true))) };
  console.log(`   proposal with 1,000 finished trials: cost alone ${fmt(cost.one)} ms, both goals ${fmt(cost.two)} ms (medians of 5)`);
  const seeds = options.quick ? [7] : [7, 1, 2, 3, 4];
  const dir = await tempDir('front');
  try {
    const runs: FrontRun[] = [];
    for (const seed of seeds) for (const proposer of PROPOSERS) runs.push(await runFront(dir, proposer, seed, options));
    const all = runs.flatMap((r) => r.front);
    const best: [number, number] = [Math.min(...all.map((p) => p[0])), Math.min(...all.map((p) => p[1]))];
    const worst: [number, number] = [Math.max(...all.map((p) => p[0])), WEIGHT_LIMIT];
    /** The run's hypervolume share with the weights as they are, or on a log scale (as the report's front chart draws them). */
    const share = (run: FrontRun, scale: (weights: number) => number) => {
      const [low, high] = [scale(best[1]), scale(worst[1])];
      const points = run.front.map(([cost, weights]): [number, number] => [cost, scale(weights)]);
      return hypervolume(points, [worst[0], high]) / ((worst[0] - best[0]) * (high - low) || 1);
    };
    const linear = (run: FrontRun) => share(run, (w) => w);
    const logarithmic = (run: FrontRun) => share(run, Math.log);
    const rows = runs.map((run) => [run.seed, run.proposer, run.front.length, fmt(linear(run), 3), fmt(logarithmic(run), 3), run.front.map(([cost, weights]) => `${fmt(cost, 1)}@${weights}`).join(' ')]);
    const means = PROPOSERS.map((proposer) => {
      const mine = runs.filter((r) => r.proposer === proposer);
      const mean = (of: (run: FrontRun) => number) => mine.reduce((sum, run) => sum + of(run), 0) / mine.length;
      return { proposer, size: mean((run) => run.front.length), share: mean(linear), logShare: mean(logarithmic) };
    });
    console.log(`   mean hypervolume share (weights, log weights): ${means.map((m) => `${m.proposer} ${fmt(m.share, 3)}, ${fmt(m.logShare, 3)}`).join('; ')}`);
    return {
      group: 'front',
      title: 'TPE with a second goal: the front of cost against weights on the demo front study (invented costs, validation rows)',
      tables: [
        {
          title: `studies/demo/study-front.json${options.quick ? ' (quick: 12 trials, maxEpochs 5)' : ''}, no repeat runs: each run's front`,
          columns: ['seed', 'proposer', 'front size', 'hypervolume share', 'share, log weights', 'front (cost per row @ weights)'],
          rows,
        },
        {
          title: `mean over seeds ${seeds.join(', ')}`,
          columns: ['proposer', 'front size', 'hypervolume share', 'share, log weights'],
          rows: means.map((m) => [m.proposer, fmt(m.size, 1), fmt(m.share, 3), fmt(m.logShare, 3)]),
        },
        {
          title: 'tpe: milliseconds to propose with 1,000 finished trials (median of 5 seeds)',
          columns: ['goals', 'ms'],
          rows: [['cost alone', fmt(cost.one)], ['cost and weights', fmt(cost.two)]],
        },
      ],
      targets: [],
      notes: [
        `Hypervolume share: the area the front dominates up to the worst front cost seen (${fmt(worst[0], 1)}) and the limit (${WEIGHT_LIMIT} weights), over the area between that and the best cost and smallest network seen in any run (${fmt(best[0], 1)}, ${best[1]} weights); 1 would be one configuration best on both. The log share measures the weights on a log scale, as the report's front chart draws them.`,
        'Validation costs: optimistic for the configurations picked; one run per seed, so the seeds show the spread.',
      ],
      data: { seeds, runs, best, worst, means, proposalMilliseconds: cost },
    };
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}
