/**
 * `npm run bench`: runs every benchmark group (or those named with `--only a,b`), prints each
 * group's tables as it finishes, and writes bench/results/latest.json and latest.md.
 * `--quick` shrinks every group (fewer epochs, trials and sizes) for a smoke run.
 */
import path from 'node:path';
import { budgetGroup } from './budget.js';
import { earlyStoppingGroup } from './early-stopping.js';
import { engineGroup } from './engine.js';
import { footprintGroup } from './footprint.js';
import { frontGroup } from './front.js';
import { dataGroup } from './data.js';
import { memoryGroup } from './memory.js';
import { modelGroup } from './model.js';
import { overheadGroup } from './overhead.js';
import { paceGroup } from './pace.js';
import { plansGroup } from './plans.js';
import { poolGroup } from './pool.js';
import { queueGroup } from './queue.js';
import { referenceGroup } from './reference.js';
import { reportRenderGroup } from './report-render.js';
import { repeatsGroup } from './repeats.js';
import { groupMarkdown, machineInfo, writeResults, type GroupResult } from './report.js';
import { schedulingGroup } from './scheduling.js';
import { startupGroup } from './startup.js';
import { storeGroup } from './store.js';
import { throughputGroup } from './throughput.js';
import { viewsGroup } from './views.js';

export interface BenchOptions {
  quick: boolean;
}

const GROUPS: Record<string, (options: BenchOptions) => Promise<GroupResult>> = {
  throughput: throughputGroup,
  engine: engineGroup,
  pool: poolGroup,
  overhead: overheadGroup,
  store: storeGroup,
  memory: memoryGroup,
  scheduling: schedulingGroup,
  budget: budgetGroup,
  plans: plansGroup,
  'early-stopping': earlyStoppingGroup,
  footprint: footprintGroup,
  front: frontGroup,
  model: modelGroup,
  startup: startupGroup,
  queue: queueGroup,
  data: dataGroup,
  views: viewsGroup,
  pace: paceGroup,
  'report-render': reportRenderGroup,
  reference: referenceGroup,
  repeats: repeatsGroup,
};

function parseArgs(argv: string[]): { quick: boolean; only: string[] } {
  let quick = false;
  let only = Object.keys(GROUPS);
  for (let i = 0; i < argv.length; i++) {
    const arg = argv[i]!;
    if (arg === '--quick') quick = true;
    else if (arg === '--only' || arg.startsWith('--only=')) {
      const value = arg === '--only' ? argv[++i] : arg.slice('--only='.length);
      only = (value ?? '').split(',').filter(Boolean);
      const unknown = only.filter((name) => !(name in GROUPS));
      if (unknown.length > 0 || only.length === 0) {
        throw new Error(`--only: unknown group "${unknown.join(',') || value}"; groups are ${Object.keys(GROUPS).join(', ')}`);
      }
    } else throw new Error(`unknown argument "${arg}"; allowed: --quick, --only <group>[,<group>...] (groups: ${Object.keys(GROUPS).join(', ')})`);
  }
  return { quick, only };
}

async function main(): Promise<void> {
  const argv = process.argv.slice(2);
  const { quick, only } = parseArgs(argv);
  const machine = machineInfo();
  console.log(`rungwise bench${quick ? ' (quick)' : ''}: ${only.join(', ')}`);
  console.log(`machine: ${machine.cpuModel}, ${machine.cores} cores, Node ${machine.node}, load ${machine.loadAverage.join(' / ')}\n`);
  const results: GroupResult[] = [];
  for (const name of only) {
    const started = performance.now();
    console.log(`-- ${name} ...`);
    const result = await GROUPS[name]!({ quick });
    result.seconds = (performance.now() - started) / 1000;
    results.push(result);
    console.log(groupMarkdown(result) + '\n');
  }
  // npm runs scripts from the package root.
  const dir = path.resolve('bench/results');
  await writeResults(dir, machine, argv, results);
  console.log(`written: ${path.join(dir, 'latest.json')} and latest.md`);
}

main().catch((error: unknown) => {
  console.error(error instanceof Error ? error.message : error);
  process.exitCode = 1;
});
