/**
 * Start-up time of the command line: `rungwise --help` and `--version` against `node -e 0` (Node's own
 * start-up), run alternately in one loop so that machine load falls on all three alike. The CLI loads
 * a command's modules (tfjs, the chart library, the runner) only when that command runs, so help and
 * version should cost little more than Node itself; `run --help` checks a command's help alike.
 */
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import type { BenchOptions } from './index.js';
import { fmt, median, quantile, type GroupResult } from './report.js';

const BIN = fileURLToPath(new URL('../../bin/rungwise.js', import.meta.url));
/** Target of the conventions work: help and version within 0.25 s. */
const TARGET_SECONDS = 0.25;

function timeOnce(args: readonly string[]): number {
  const started = performance.now();
  const result = spawnSync(process.execPath, args, { stdio: ['ignore', 'ignore', 'pipe'] });
  if (result.status !== 0) throw new Error(`node ${args.join(' ')} exited ${result.status}: ${result.stderr.toString()}`);
  return (performance.now() - started) / 1000;
}

export async function startupGroup(options: BenchOptions): Promise<GroupResult> {
  const rounds = options.quick ? 5 : 20;
  const cases: [string, string[]][] = [
    ['node -e 0', ['-e', '0']],
    ['rungwise --help', [BIN, '--help']],
    ['rungwise --version', [BIN, '--version']],
    ['rungwise run --help', [BIN, 'run', '--help']],
  ];
  const seconds = new Map<string, number[]>(cases.map(([name]) => [name, []]));
  for (const [, args] of cases) timeOnce(args); // warm the file cache
  for (let round = 0; round < rounds; round++) for (const [name, args] of cases) seconds.get(name)!.push(timeOnce(args));
  const baseline = median(seconds.get('node -e 0')!);
  const rows = cases.map(([name]) => {
    const values = seconds.get(name)!;
    const mid = median(values);
    return [name, fmt(mid * 1000, 1), fmt(quantile(values, 0.95) * 1000, 1), `${fmt(mid / baseline, 2)}x`];
  });
  const help = median(seconds.get('rungwise --help')!);
  const version = median(seconds.get('rungwise --version')!);
  return {
    group: 'startup',
    title: `Command-line start-up, median of ${rounds} alternating runs`,
    tables: [{ title: 'start-up time', columns: ['command', 'median ms', 'p95 ms', 'vs node -e 0'], rows }],
    targets: [
      { target: `--help under ${TARGET_SECONDS} s`, measured: `${fmt(help, 3)} s (${fmt(help / baseline, 2)}x node -e 0)`, holds: help < TARGET_SECONDS },
      { target: `--version under ${TARGET_SECONDS} s`, measured: `${fmt(version, 3)} s (${fmt(version / baseline, 2)}x node -e 0)`, holds: version < TARGET_SECONDS },
    ],
    notes: ['Each figure includes spawning the process; the ratio to `node -e 0` is what the CLI adds.'],
    data: Object.fromEntries(seconds),
  };
}
