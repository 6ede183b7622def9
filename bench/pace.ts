/**
 * The engine at the hardware's pace (issue 25), every figure a ratio measured in this one run:
 * the training loop alone on the issue's networks (the plain SIMD engine and, where the runtime lets
 * it validate, the relaxed-SIMD build with fused multiply-add) beside a reference library's MLP when
 * it is installed; the whole `run` against the loop alone; the data load's peak memory against the
 * CSV's size; and a study's speed-up from one worker to two.
 */
import { execFile, fork } from 'node:child_process';
import { rm, stat } from 'node:fs/promises';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import type { BenchOptions } from './index.js';
import type { LoadMeasurement } from './data-load-process.js';
import { writeDataCsv } from './data-file.js';
import type { LoopMeasurement, LoopSample } from './pace-loop-process.js';
import type { RunMeasurement } from './pace-run-process.js';
import { fmt, type GroupResult, type TargetCheck } from './report.js';
import { tempDir, writeDefinition } from './studies.js';

const RELAXED_FLAG = '--experimental-wasm-relaxed-simd';
const RELAXED_BUILD = fileURLToPath(new URL('./engine-relaxed.wasm', import.meta.url));
const REFERENCE_SCRIPT = path.resolve('bench/reference/mlp_reference.py'); // npm runs scripts from the package root
const LOAD_ROWS = 500_000;

/** Runs a bench child process with V8 flags and arguments; resolves its posted message. */
function child<T>(module: string, args: string[], execArgv: string[] = []): Promise<T> {
  return new Promise((resolve, reject) => {
    const process = fork(new URL(module, import.meta.url), args, { execArgv, stdio: 'inherit' });
    process.once('message', (message: T) => resolve(message));
    process.once('error', reject);
    process.once('exit', (code) => {
      if (code !== 0) reject(new Error(`${module} ${args.join(' ')} exited with code ${code}`));
    });
  });
}

/** The V8 flags under which the relaxed-SIMD build validates here (none on Node 22 and later), or undefined. */
async function relaxedFlags(): Promise<string[] | undefined> {
  const probe = (execArgv: string[]): Promise<boolean> =>
    new Promise((resolve) => {
      const script = `const b=require('fs').readFileSync(${JSON.stringify(RELAXED_BUILD)});process.exit(WebAssembly.validate(b)?0:1)`;
      execFile(process.execPath, [...execArgv, '-e', script], (error) => resolve(!error));
    });
  if (await probe([])) return [];
  if (await probe([RELAXED_FLAG])) return [RELAXED_FLAG];
  return undefined;
}

interface Reference {
  library?: string;
  version?: string;
  samples?: LoopSample[];
  /** Why there are no reference figures. */
  missing?: string;
}

/** The reference library's figures from bench/reference/mlp_reference.py, one thread, when python3 and the library are there. */
function reference(quick: boolean): Promise<Reference> {
  const env = { ...process.env, OMP_NUM_THREADS: '1', OPENBLAS_NUM_THREADS: '1', MKL_NUM_THREADS: '1' };
  return new Promise((resolve) => {
    execFile('python3', [REFERENCE_SCRIPT, quick ? '0.5' : '2'], { env, timeout: 600_000 }, (error, stdout, stderr) => {
      if (!error) return resolve(JSON.parse(stdout) as Reference);
      const reason = (error as { code?: unknown }).code === 'ENOENT' ? 'python3 not found' : (stderr.trim().split('\n').at(-1) ?? String(error));
      resolve({ missing: `no reference figures: ${reason} (bench/reference/mlp_reference.py runs it when it is installed)` });
    });
  });
}

/** Best of `repeats` runs per network and build, the builds interleaved so a burst of load hits one run, not one build. */
async function loops(quick: boolean, flags: string[] | undefined): Promise<LoopMeasurement[]> {
  const quickArgs = quick ? ['--quick'] : [];
  const builds: { args: string[]; execArgv: string[] }[] = [{ args: quickArgs, execArgv: [] }];
  if (flags) builds.push({ args: [...quickArgs, '--build', RELAXED_BUILD], execArgv: flags });
  const best: LoopMeasurement[] = [];
  for (let repeat = 0; repeat < 2; repeat++) {
    for (const [i, build] of builds.entries()) {
      const run = await child<LoopMeasurement>('./pace-loop-process.js', build.args, build.execArgv);
      best[i] = !best[i] ? run : { build: run.build, samples: run.samples.map((s, k) => (s.samplesPerSecond > best[i]!.samples[k]!.samplesPerSecond ? s : best[i]!.samples[k]!)) };
    }
  }
  return best;
}

/** Peak resident memory of preparing (and sharing) a seeded 500,000-row CSV, in a fresh process. */
async function load(quick: boolean): Promise<LoadMeasurement & { fileBytes: number }> {
  const dir = await tempDir('pace-load');
  try {
    const csv = path.join(dir, 'rows.csv');
    await writeDataCsv(csv, quick ? 50_000 : LOAD_ROWS);
    const definition = await writeDefinition(dir, {
      name: 'bench-pace-load',
      data: { csv: 'rows.csv', target: 'label', task: 'binary' },
      space: { depth: { min: 1, max: 1 }, width: { min: 8, max: 8 }, activation: ['relu'], learningRate: { min: 0.01, max: 0.01 } },
      budget: { trials: 1, maxEpochs: 1 },
    });
    const fileBytes = (await stat(csv)).size;
    return { ...(await child<LoadMeasurement>('./data-load-process.js', [definition])), fileBytes };
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}

interface PaceData {
  relaxed: string;
  loops: LoopMeasurement[];
  reference: Reference;
  endToEnd: RunMeasurement;
  pool: RunMeasurement[];
  load: LoadMeasurement & { fileBytes: number };
}

export async function paceGroup(options: BenchOptions): Promise<GroupResult> {
  const flags = await relaxedFlags();
  const relaxed = flags === undefined ? 'does not validate on this runtime' : flags.length === 0 ? 'validates without a flag' : `validates with ${RELAXED_FLAG} only`;
  console.log(`   relaxed-SIMD build: ${relaxed}`);
  const measured = await loops(options.quick, flags);
  const ref = await reference(options.quick);
  console.log(`   reference: ${ref.missing ?? `${ref.library} ${ref.version}`}`);
  const runArgs = options.quick ? ['--quick'] : [];
  const endToEnd = await child<RunMeasurement>('./pace-run-process.js', runArgs);
  const poolTrials = ['--trials', options.quick ? '4' : '8'];
  const pool = [await child<RunMeasurement>('./pace-run-process.js', [...runArgs, ...poolTrials]), await child<RunMeasurement>('./pace-run-process.js', [...runArgs, ...poolTrials, '--threads', '2'])];
  const loaded = await load(options.quick);
  return paceResult({ relaxed, loops: measured, reference: ref, endToEnd, pool, load: loaded });
}

function paceResult(data: PaceData): GroupResult {
  const { loops: measured, reference: ref, endToEnd, pool, load: loaded } = data;
  const plain = measured[0]!;
  const key = plain.samples.find((s) => s.network === '3x128' && s.batchSize === 32)!;
  const e2e = endToEnd.samplesPerSecond / key.samplesPerSecond;
  const stretch = (endToEnd.trainRows * endToEnd.epochs) / endToEnd.trainingWallSeconds / key.samplesPerSecond;
  const e2eCpu = endToEnd.samplesPerCpuSecond / key.samplesPerCpuSecond;
  const speedup = pool[0]!.wallSeconds / pool[1]!.wallSeconds;
  const peakRatio = loaded.peakRssBytes / loaded.fileBytes;
  const refAt = (s: LoopSample): LoopSample | undefined => ref.samples?.find((r) => r.network === s.network && r.batchSize === s.batchSize);
  const columns = ['network', 'batch', ...measured.map((m) => `engine, ${m.build} (samples/s)`), ...(ref.samples ? [`${ref.library} ${ref.version}`, 'engine / reference'] : [])];
  const rows = plain.samples.map((s, k) => {
    const other = refAt(s);
    const best = Math.max(...measured.map((m) => m.samples[k]!.samplesPerSecond));
    return [s.network, s.batchSize, ...measured.map((m) => fmt(m.samples[k]!.samplesPerSecond)), ...(other ? [fmt(other.samplesPerSecond), `${fmt(best / other.samplesPerSecond)}x`] : [])];
  });
  const big = plain.samples.find((s) => s.network === '4x256')!;
  const bigRef = refAt(big);
  const bigBest = Math.max(...measured.map((m) => m.samples.find((s) => s.network === '4x256')!.samplesPerSecond));
  const targets: TargetCheck[] = [
    { target: '>= 1.0x the reference MLP at 4x256 batch 256', measured: bigRef ? `${fmt(bigBest / bigRef.samplesPerSecond)}x` : ref.missing!, holds: bigRef ? bigBest >= bigRef.samplesPerSecond : null },
    { target: 'end-to-end run within 10% of the loop alone at 3x128 batch 32', measured: `${fmt(e2e)} in wall time (${fmt(stretch)} from the first job), ${fmt(e2eCpu)} in CPU time`, holds: e2e >= 0.9 },
    { target: `peak load memory <= 2.5x the file (${loaded.rows.toLocaleString('en-US')} rows)`, measured: `${fmt(peakRatio)}x (${fmt(loaded.peakRssBytes / 1e6)} MB for ${fmt(loaded.fileBytes / 1e6)} MB)`, holds: peakRatio <= 2.5 },
    { target: 'two threads >= 1.8x one worker', measured: `${fmt(speedup)}x (cores obtained ${fmt(pool[0]!.coresUsed)} and ${fmt(pool[1]!.coresUsed)})`, holds: speedup >= 1.8 },
  ];
  return {
    group: 'pace',
    title: 'Issue 25: the engine at the hardware\'s pace (20 inputs, 3 classes, Adam, relu, 4,096 rows)',
    tables: [
      { title: 'Training loop alone (no validation, metrics or checkpoints), samples/s, best of 2', columns, rows },
      {
        title: `The whole run against the loop alone, 3x128 batch 32 (${endToEnd.trials} trials x ${endToEnd.epochs / endToEnd.trials} epochs, one worker)`,
        columns: ['loop alone (samples/s)', 'whole run (samples/s)', 'whole / loop', 'first job to end / loop', 'per CPU-second: loop', 'per CPU-second: run', 'whole / loop in CPU time', 'run wall (s)', 'first job to end (s)', 'worker (s)', 'epochs as timed in the worker (s)'],
        rows: [[fmt(key.samplesPerSecond), fmt(endToEnd.samplesPerSecond), fmt(e2e), fmt(stretch), fmt(key.samplesPerCpuSecond), fmt(endToEnd.samplesPerCpuSecond), fmt(e2eCpu), fmt(endToEnd.wallSeconds), fmt(endToEnd.trainingWallSeconds), fmt(endToEnd.workerSeconds), fmt(endToEnd.epochSeconds)]],
      },
      {
        title: `Data load, ${loaded.rows.toLocaleString('en-US')} rows x 30 columns (prepareData and the shared data set, fresh process)`,
        columns: ['file (MB)', 'peak RSS (MB)', 'peak / file', 'prepared float32 (MB)', 'seconds'],
        rows: [[fmt(loaded.fileBytes / 1e6), fmt(loaded.peakRssBytes / 1e6), `${fmt(peakRatio)}x`, fmt(loaded.preparedBytes / 1e6), fmt(loaded.seconds)]],
      },
      {
        title: `A study of ${pool[0]!.trials} trials of 3x128 batch 32 with 1 and 2 threads (whole run)`,
        columns: ['threads', 'wall (s)', 'speed-up', 'cores obtained (CPU time / wall)', 'main thread busy', 'samples per CPU-second'],
        rows: pool.map((r) => [r.threads, fmt(r.wallSeconds), `${fmt(pool[0]!.wallSeconds / r.wallSeconds)}x`, fmt(r.coresUsed), `${fmt(r.mainThreadBusy * 100)}%`, fmt(r.samplesPerCpuSecond)]),
      },
    ],
    targets,
    notes: [
      `Relaxed-SIMD build (dist/bench/engine-relaxed.wasm, f32x4.relaxed_madd in the matrix products): ${data.relaxed}. The engine itself runs the plain SIMD build.`,
      ref.missing ?? `Reference: ${ref.library} ${ref.version}, one thread for its numeric kernels (OMP_NUM_THREADS=1).`,
      'CPU-time ratios count the work each side did (every thread of the process, the whole run including the data load and thread start-up), so they hold up when other jobs take the cores; wall-time ratios need a quiet machine.',
      '"cores obtained" is the CPU time the process got per second of wall time: on a machine shared with other jobs, a speed-up is bounded by it.',
    ],
    data,
  };
}
