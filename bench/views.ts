/**
 * Reading a study back: time of `rungwise ranking` and `rungwise plot` (the command functions) on
 * synthetic study files of 1,000 and 10,000 finished trials with 50-epoch curves, and the size of
 * the HTML report `plot` writes.
 */
import { readdir, rm, stat } from 'node:fs/promises';
import path from 'node:path';
import { plot } from '../src/commands/plot.js';
import { ranking } from '../src/commands/ranking.js';
import { StudyStore } from '../src/store/study-store.js';
import type { BenchOptions } from './index.js';
import { fmt, type GroupResult } from './report.js';
import { baseDocument, trialRecord } from './store.js';
import { tempDir } from './studies.js';

interface ViewRow {
  trials: number;
  rankingSeconds: number;
  plotSeconds: number;
  reportBytes: number;
  folderBytes: number;
}

async function timed(action: () => Promise<unknown>): Promise<number> {
  const started = performance.now();
  await action();
  return (performance.now() - started) / 1000;
}

async function measure(trials: number): Promise<ViewRow> {
  const dir = await tempDir('views');
  try {
    const store = await StudyStore.create(dir, { ...baseDocument(), state: 'finished' });
    for (let id = 1; id <= trials; id++) store.doc.trials.push(trialRecord(id));
    await store.save();
    const out = path.join(dir, 'plots');
    const rankingSeconds = await timed(() => ranking({ dir }));
    const plotSeconds = await timed(() => plot({ dir, out }));
    let folderBytes = 0;
    for (const name of await readdir(out)) folderBytes += (await stat(path.join(out, name))).size;
    return { trials, rankingSeconds, plotSeconds, reportBytes: (await stat(path.join(out, 'report.html'))).size, folderBytes };
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}

const mib = (bytes: number): string => fmt(bytes / 2 ** 20);

export async function viewsGroup(options: BenchOptions): Promise<GroupResult> {
  const sizes = options.quick ? [100, 1000] : [1000, 10_000];
  const rows: ViewRow[] = [];
  for (const trials of sizes) {
    rows.push(await measure(trials));
    console.log(`   ${trials} trials: ranking ${fmt(rows.at(-1)!.rankingSeconds)} s, plot ${fmt(rows.at(-1)!.plotSeconds)} s`);
  }
  const [small, large] = [rows[0]!, rows.at(-1)!];
  const growth = large.trials / small.trials;
  return {
    group: 'views',
    title: 'Reading a study back: ranking and plot on study files of many trials (50-epoch curves)',
    tables: [
      {
        title: 'Command functions run in this process; the study file is written once before',
        columns: ['trials', 'ranking (s)', 'plot (s)', 'report.html (MiB)', 'plot folder (MiB)'],
        rows: rows.map((r) => [r.trials.toLocaleString('en-US'), fmt(r.rankingSeconds), fmt(r.plotSeconds), mib(r.reportBytes), mib(r.folderBytes)]),
      },
    ],
    targets: [
      {
        target: 'ranking and plot stay fast as studies grow (no worse than in proportion to the trials)',
        measured: `ranking ${fmt(large.rankingSeconds / small.rankingSeconds)}x, plot ${fmt(large.plotSeconds / small.plotSeconds)}x for ${fmt(growth)}x the trials`,
        holds: large.rankingSeconds / small.rankingSeconds <= growth * 1.5 && large.plotSeconds / small.plotSeconds <= growth * 1.5,
      },
      {
        target: 'the report stays small as studies grow',
        measured: `report.html ${mib(small.reportBytes)} MiB at ${small.trials.toLocaleString('en-US')} trials, ${mib(large.reportBytes)} MiB at ${large.trials.toLocaleString('en-US')}`,
        holds: large.reportBytes / small.reportBytes < growth / 2,
      },
    ],
    notes: ['No target figure was set for these times; the verdicts compare growth with the number of trials. The plot internals are not changed by this group.'],
    data: rows,
  };
}
