/**
 * Plans against runs: every demo study (studies/demo/*.json) run with real training, its planned jobs
 * and epochs against those run, and the first time-left estimate the progress display would show
 * (when the first job ended) against the time that was really left.
 */
import { readdir } from 'node:fs/promises';
import { availableParallelism } from 'node:os';
import path from 'node:path';
import { TimeLeftEstimator } from '../src/report/time-left.js';
import { runStudy } from '../src/runner/run-study.js';
import type { StudyEvent } from '../src/runner/events.js';
import { plannedBudget } from '../src/samplers/index.js';
import { loadStudy } from '../src/study/load.js';
import type { BenchOptions } from './index.js';
import { fmt, type GroupResult } from './report.js';
import { tempDir } from './studies.js';

interface PlanRun {
  study: string;
  sampler: string;
  plannedJobs: number;
  ranJobs: number;
  plannedEpochs: number;
  ranEpochs: number;
  limit: boolean;
  /** Seconds left as first estimated (when the first job ended), and as it turned out. */
  firstEstimate: number | null;
  realLeft: number | null;
}

/** Follows a run's events as the progress display does, and keeps its first estimate. */
function estimateWatcher(threads: number, plannedEpochs: number): { onEvent: (event: StudyEvent) => void; first: () => { estimate: number; at: number } | undefined } {
  const estimator = new TimeLeftEstimator(threads);
  let trained = 0;
  let first: { estimate: number; at: number } | undefined;
  return {
    onEvent: (event) => {
      const now = performance.now();
      if (event.type === 'job-started') estimator.started(event.job, now);
      if (event.type === 'epoch') {
        estimator.epoch(event.report.trialId, event.report.seconds);
        trained += 1;
      }
      if (event.type === 'trial-finished') {
        estimator.jobEnded(event.job);
        trained = Math.max(trained, event.progress.epochsDone);
        const estimate = estimator.secondsLeft(plannedEpochs - trained, now);
        if (!first && estimate !== undefined) first = { estimate, at: now };
      }
    },
    first: () => first,
  };
}

export async function plansGroup(options: BenchOptions): Promise<GroupResult> {
  const folder = path.resolve('studies/demo'); // npm runs scripts from the package root
  const files = (await readdir(folder)).filter((name) => name.endsWith('.json')).sort();
  const chosen = options.quick ? files.filter((name) => /halving|hyperband/.test(name)).slice(0, 2) : files;
  const threads = Math.min(2, availableParallelism());
  const runs: PlanRun[] = [];
  const dir = await tempDir('plans');
  for (const name of chosen) {
    const study = await loadStudy(path.join(folder, name));
    const plan = plannedBudget(study.definition);
    const watcher = estimateWatcher(threads, plan.epochs);
    const outcome = await runStudy(study, { out: path.join(dir, name), threads, force: true, onEvent: watcher.onEvent });
    const end = performance.now();
    const jobs = outcome.doc.trials.reduce((sum, t) => sum + t.jobs.filter((j) => j.status !== 'training' && j.status !== 'cut-off').length, 0);
    const first = watcher.first();
    runs.push({
      study: name,
      sampler: study.definition.sampler.kind,
      plannedJobs: plan.jobs,
      ranJobs: jobs,
      plannedEpochs: plan.epochs,
      ranEpochs: outcome.doc.totals?.epochsTrained ?? 0,
      limit: plan.limit,
      firstEstimate: first ? first.estimate : null,
      realLeft: first ? (end - first.at) / 1000 : null,
    });
    const run = runs.at(-1)!;
    console.log(`   ${name}: jobs ${run.ranJobs}/${run.plannedJobs}, epochs ${run.ranEpochs}/${run.plannedEpochs}, first estimate ${fmt(run.firstEstimate ?? NaN)} s, real ${fmt(run.realLeft ?? NaN)} s`);
  }
  return {
    group: 'plans',
    title: 'Plans against runs, and the first time-left estimate against the time really left (demo studies)',
    tables: [
      {
        title: `${threads} threads`,
        columns: ['study', 'sampler', 'jobs run / planned', 'epochs run / planned', 'plan', 'first time-left estimate (s)', 'real time left then (s)'],
        rows: runs.map((r) => [r.study, r.sampler, `${r.ranJobs} / ${r.plannedJobs}`, `${r.ranEpochs} / ${r.plannedEpochs}`, r.limit ? 'limit' : 'exact', r.firstEstimate ?? '-', r.realLeft ?? '-']),
      },
    ],
    targets: runs.map((r) => ({
      target: `${r.study}: runs ${r.limit ? 'within' : 'no more than'} its plan`,
      measured: `${r.ranJobs} of ${r.plannedJobs} jobs, ${r.ranEpochs} of ${r.plannedEpochs} epochs`,
      holds: r.ranJobs <= r.plannedJobs && r.ranEpochs <= r.plannedEpochs,
    })),
    notes: ['Epochs run fall short of the plan only where trials diverged, failed or were stopped early (their jobs end sooner), or, under asynchronous halving, where promotions did not fit the limit.'],
    data: runs,
  };
}
