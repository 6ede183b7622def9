/**
 * What errors cost and what the network may weigh, on the demo data: the winner's cost per 1,000
 * validation rows when the study ranks by cost (least-cost threshold), against the winner chosen by
 * AUC with a largest-F1 threshold (both from `studies/demo/study-costs.json`, invented costs); and the
 * front of `studies/demo/study-front.json` (at most 1,500 weights, weights as the second goal).
 */
import { readFile, rm } from 'node:fs/promises';
import path from 'node:path';
import { exportModel } from '../src/commands/export.js';
import { frontOf } from '../src/core/front.js';
import { runStudy } from '../src/runner/run-study.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import type { BenchOptions } from './index.js';
import { fmt, type GroupResult } from './report.js';
import { tempDir, writeDefinition } from './studies.js';

/** A demo definition with its CSV path made absolute (and the quick budget with --quick). */
async function demoDefinition(file: string, options: BenchOptions): Promise<StudyDefinitionInput> {
  const source = path.resolve(file); // npm runs scripts from the package root
  const definition = JSON.parse(await readFile(source, 'utf8')) as StudyDefinitionInput & { $schema?: string };
  delete definition.$schema;
  return { ...definition, data: { ...definition.data, csv: path.resolve(path.dirname(source), definition.data.csv) }, ...(options.quick ? { budget: { trials: 4, maxEpochs: 5 } } : {}) };
}

interface CostWinner {
  ranking: string;
  trial: number;
  threshold: number;
  perThousand: number;
  weights: number | undefined;
}

/** Runs a definition, exports its rank 1 and reads the cost at the exported threshold. */
async function costWinner(dir: string, label: string, definition: StudyDefinitionInput): Promise<CostWinner> {
  const file = await writeDefinition(dir, definition, `${label}.json`);
  const out = path.join(dir, `run-${label}`);
  const { ranking } = await runStudy(file, { out });
  const summary = await exportModel({ dir: out });
  const perRow = summary.threshold?.costPerRow;
  if (perRow === undefined) throw new Error(`${label}: the export gave no cost at its threshold`);
  return { ranking: label, trial: summary.trialId, threshold: summary.threshold!.threshold, perThousand: perRow * 1000, weights: ranking[0]!.trial.weightCount };
}

export async function footprintGroup(options: BenchOptions): Promise<GroupResult> {
  const costs = await demoDefinition('studies/demo/study-costs.json', options);
  const front = await demoDefinition('studies/demo/study-front.json', options);
  const dir = await tempDir('footprint');
  try {
    const byCost = await costWinner(dir, 'by-cost', costs);
    const byAuc = await costWinner(dir, 'by-auc', { ...costs, name: 'demo-costs-auc', goal: { metric: 'auc' }, decisionThreshold: { choose: 'largest-f1' } });
    const { doc, ranking } = await runStudy(await writeDefinition(dir, front, 'front.json'), { out: path.join(dir, 'run-front') });
    const members = frontOf(ranking, doc.goal, 'weights');
    const largest = Math.max(...doc.trials.map((t) => t.weightCount ?? 0));
    console.log(`   cost winner ${fmt(byCost.perThousand)} per 1,000 rows, AUC winner ${fmt(byAuc.perThousand)}; front of ${members.length}`);
    return {
      group: 'footprint',
      title: 'What errors cost and what the network weighs, on the demo data (invented costs, validation rows)',
      tables: [
        {
          title: `studies/demo/study-costs.json${options.quick ? ' (quick: 4 trials, maxEpochs 5)' : ''}: the winner's cost per 1,000 validation rows at its exported threshold`,
          columns: ['ranked by', 'winner (trial)', 'threshold', 'cost per 1,000 rows (EUR)', 'weights'],
          rows: [
            ['cost, least-cost threshold', byCost.trial, fmt(byCost.threshold, 3), fmt(byCost.perThousand), byCost.weights ?? '-'],
            ['AUC, largest-F1 threshold', byAuc.trial, fmt(byAuc.threshold, 3), fmt(byAuc.perThousand), byAuc.weights ?? '-'],
          ],
        },
        {
          title: `studies/demo/study-front.json${options.quick ? ' (quick)' : ''}: at most 1,500 weights, the front of cost against weights`,
          columns: ['place', 'rank', 'trial', 'weights', 'cost per row (EUR)', 'depth', 'width'],
          rows: members.map((m) => [m.place, m.ranked.rank, m.ranked.trial.id, m.value, fmt(m.ranked.trial.score, 4), m.ranked.trial.configuration.depth, m.ranked.trial.configuration.width]),
        },
      ],
      targets: [],
      notes: [
        `The front holds ${members.length} of ${doc.trials.length} configurations; the largest network trained has ${largest} weights (limit 1,500).`,
        'Both cost figures are on the validation rows the threshold was chosen on, so they flatter both winners; export --retrain scores one on the test split.',
      ],
      data: { byCost, byAuc, front: members.map((m) => ({ place: m.place, rank: m.ranked.rank, trial: m.ranked.trial.id, weights: m.value, score: m.ranked.trial.score })), largest },
    };
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}
