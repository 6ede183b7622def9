/**
 * Data loading at scale: time and peak resident memory of `prepareData` on seeded synthetic CSVs of
 * 200,000 and 1,000,000 rows x 30 columns (written at bench time, deleted after), each in a fresh
 * process, beside a process that only loads the modules and one that streams the file keeping nothing.
 */
import { fork } from 'node:child_process';
import { rm, stat } from 'node:fs/promises';
import path from 'node:path';
import type { BenchOptions } from './index.js';
import type { LoadMeasurement } from './data-load-process.js';
import { writeDataCsv } from './data-file.js';
import { fmt, type GroupResult } from './report.js';
import { tempDir, writeDefinition } from './studies.js';

/** The target: peak resident memory at most this many times the float32 prepared data, plus a constant. */
const TARGET_RATIO = 4;

function measure(args: string[]): Promise<LoadMeasurement> {
  return new Promise((resolve, reject) => {
    const child = fork(new URL('./data-load-process.js', import.meta.url), args, { stdio: 'inherit' });
    child.once('message', (result: LoadMeasurement) => resolve(result));
    child.once('error', reject);
    child.once('exit', (code) => {
      if (code !== 0) reject(new Error(`the data-load process exited with code ${code}`));
    });
  });
}

interface LoadRow extends LoadMeasurement {
  fileBytes: number;
  readOnlyPeakBytes: number;
}

const mb = (bytes: number): string => fmt(bytes / 1e6, 4);

export async function dataGroup(options: BenchOptions): Promise<GroupResult> {
  const sizes = options.quick ? [20_000, 100_000] : [200_000, 1_000_000];
  const dir = await tempDir('data');
  const rows: LoadRow[] = [];
  let baseline: LoadMeasurement;
  try {
    baseline = await measure(['--baseline']);
    for (const size of sizes) {
      const csv = path.join(dir, `rows-${size}.csv`);
      await writeDataCsv(csv, size);
      const definition = await writeDefinition(dir, {
        name: 'bench-data',
        data: { csv: path.basename(csv), target: 'label', task: 'binary' },
        space: { depth: { min: 1, max: 2 }, width: { min: 8, max: 64 }, activation: ['relu'], learningRate: { min: 0.001, max: 0.1 } },
        budget: { trials: 1, maxEpochs: 1 },
      }, `study-${size}.json`);
      const fileBytes = (await stat(csv)).size;
      const readOnly = await measure(['--read-only', csv]);
      const loaded = await measure([definition]);
      rows.push({ ...loaded, fileBytes, readOnlyPeakBytes: readOnly.peakRssBytes });
      console.log(`   ${size} rows: ${fmt(loaded.seconds)} s, peak ${mb(loaded.peakRssBytes)} MB`);
      await rm(csv, { force: true });
    }
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
  const [small, large] = [rows[0]!, rows.at(-1)!];
  // peak = slope x prepared + constant, fitted through the two sizes.
  const slope = (large.peakRssBytes - small.peakRssBytes) / (large.preparedBytes - small.preparedBytes);
  const constant = small.peakRssBytes - slope * small.preparedBytes;
  return {
    group: 'data',
    title: 'Data loading: time and peak memory of prepareData (30 columns: 28 numeric, 1 categorical, binary target)',
    tables: [
      {
        title: 'One fresh process per figure; prepared = float32 x and y of every split',
        columns: ['rows', 'file (MB)', 'prepared (MB)', 'load (s)', 'rows/s', 'peak RSS (MB)', 'peak / file', 'peak / prepared', 'stream only, peak (MB)', 'progress events'],
        rows: rows.map((r) => [
          r.rows.toLocaleString('en-US'),
          mb(r.fileBytes),
          mb(r.preparedBytes),
          fmt(r.seconds),
          Math.round(r.rows / r.seconds).toLocaleString('en-US'),
          mb(r.peakRssBytes),
          fmt(r.peakRssBytes / r.fileBytes),
          fmt(r.peakRssBytes / r.preparedBytes),
          mb(r.readOnlyPeakBytes),
          r.progressEvents,
        ]),
      },
    ],
    targets: [
      {
        target: `peak resident memory at most ${TARGET_RATIO}x the float32 size of the prepared data, plus a constant`,
        measured: `peak grows ${fmt(slope)}x the prepared size (from ${mb(small.peakRssBytes)} MB at ${small.rows.toLocaleString('en-US')} rows to ${mb(large.peakRssBytes)} MB at ${large.rows.toLocaleString('en-US')}); constant ${mb(constant)} MB (a process with the modules loaded: ${mb(baseline.peakRssBytes)} MB)`,
        holds: slope <= TARGET_RATIO,
      },
      {
        target: 'progress while reading and preparing',
        measured: `${large.progressEvents} progress events for ${large.rows.toLocaleString('en-US')} rows`,
        holds: rows.every((r) => r.progressEvents > 10),
      },
    ],
    notes: [
      'The constant is what the process holds whatever the file size: Node, the modules, and V8\'s young generation while the CSV parser allocates a short string per cell ("stream only": the same file streamed, nothing kept).',
      'Numbers are kept as float64 while reading, so the recipe\'s means and standard deviations are exactly those of the text; that is 2x the float32 size, the prepared matrices 1x more.',
      'The machine is shared: times vary with its load (see the load average in the header).',
    ],
    data: { baseline, rows, slope, constant },
  };
}
