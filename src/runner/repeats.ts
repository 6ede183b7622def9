/**
 * The repeat runs after the search: the best configurations train again from scratch with further
 * seeds on the same split, through the study's transport, and the coordinator records each run in the
 * study file as it settles (so an interrupted study resumes the runs not yet recorded, and the figures
 * are the same whatever the number of threads).
 */
import type { RepeatRun, RepeatSettings, RepeatsRecord } from '../core/repeats.js';
import { repeatCandidates, repeatEpochs } from '../core/repeat-figures.js';
import type { TrainJob, TrainResult } from '../core/job.js';
import type { TrialConfiguration } from '../core/configuration.js';
import { scoreAt } from '../core/ranking.js';
import { hasSchedule } from '../core/schedule.js';
import type { TrialRecord } from '../core/trial.js';
import { deriveSeed } from '../random/streams.js';
import type { StudyStore } from '../store/study-store.js';
import type { TrialTransport } from '../transports/transport.js';
import type { StudyObserver, StudyProgress } from './events.js';
import type { StopControl } from './stop-control.js';
import type { RepeatPlan } from '../samplers/plan.js';

/** What the repeat runs work with. */
export interface RepeatContext {
  store: StudyStore;
  /** The id of the data set a configuration trains on (its preprocessing choice's), handed to the transport first. */
  datasetIdFor: (configuration: TrialConfiguration) => Promise<string>;
  stop: StopControl;
  emit: StudyObserver;
  /** The study's progress now (the search's and the recorded repeat runs'). */
  progress: () => StudyProgress;
}

/** The repeat settings a study file's definition carries (absent in files from before them: none run). */
export function recordedRepeatSettings(definition: object): RepeatSettings | undefined {
  return (definition as { repeats?: RepeatSettings }).repeats;
}

/**
 * The further seed number `index` (1 .. seeds): the same for every configuration, so the runs of two
 * configurations with one index share their shuffles and can be paired.
 */
export function repeatSeed(studySeed: number, index: number): number {
  return deriveSeed(studySeed, 'repeat', index);
}

/**
 * The study file's repeat record, chosen once (the top configurations when the search ended), at most
 * `planned` of them (early stopping can finish more trials than the plan trains to the epoch limit).
 */
function openRecord(store: StudyStore, settings: RepeatSettings, planned: number): RepeatsRecord {
  const { doc } = store;
  doc.repeats ??= { trialIds: repeatCandidates(doc.trials, doc.goal, Math.min(settings.top, planned)).map((t) => t.id), seeds: settings.seeds, runs: [] };
  return doc.repeats;
}

/** The runs not yet recorded, best configuration first, then by seed number. */
function pendingRuns(record: RepeatsRecord, trials: readonly TrialRecord[]): { trial: TrialRecord; index: number }[] {
  const done = new Set(record.runs.map((run) => `${run.trialId}/${run.index}`));
  const pending: { trial: TrialRecord; index: number }[] = [];
  for (const id of record.trialIds) {
    const trial = trials.find((t) => t.id === id);
    if (!trial) continue;
    for (let index = 1; index <= record.seeds; index++) if (!done.has(`${id}/${index}`)) pending.push({ trial, index });
  }
  return pending;
}

async function repeatJob(context: RepeatContext, trial: TrialRecord, index: number): Promise<TrainJob> {
  const { definition } = context.store.doc;
  const datasetId = await context.datasetIdFor(trial.configuration);
  return {
    trialId: trial.id,
    seed: repeatSeed(definition.sampler.seed, index),
    configuration: trial.configuration,
    datasetId,
    fromEpoch: 0,
    toEpoch: repeatEpochs(trial),
    ...(hasSchedule(trial.configuration) ? { maxEpochs: definition.budget.maxEpochs } : {}),
    repeat: index,
  };
}

function runOf(context: RepeatContext, job: TrainJob, result: TrainResult): RepeatRun {
  const last = result.epochs.at(-1);
  const score = result.status === 'completed' && last ? scoreAt(last, context.store.doc.goal) : null;
  return { trialId: job.trialId, index: job.repeat!, seed: job.seed, epochs: job.toEpoch, status: result.status, score, workerSeconds: result.workerSeconds };
}

/** Record a run in the study file's order (configurations as chosen, then seed number), save, and announce it. */
async function record(context: RepeatContext, repeats: RepeatsRecord, run: RepeatRun): Promise<void> {
  repeats.runs.push(run);
  const place = (r: RepeatRun): number => repeats.trialIds.indexOf(r.trialId) * 1000 + r.index;
  repeats.runs.sort((a, b) => place(a) - place(b));
  // The counts of the moment the run settled: another run may settle while this one is saved.
  const progress = context.progress();
  await context.store.save();
  context.emit({ type: 'repeat-finished', run, progress });
}

/** Train one repeat run; a run cut off by the study's stop is not recorded (it runs again on resume). */
async function runOne(context: RepeatContext, transport: TrialTransport, repeats: RepeatsRecord, job: TrainJob): Promise<number> {
  context.emit({ type: 'repeat-started', job });
  try {
    const result = await transport.run(job, () => undefined, context.stop.cutOff.signal);
    await record(context, repeats, runOf(context, job, result));
    return result.workerSeconds;
  } catch (error) {
    if (context.stop.cutOff.signal.aborted) return 0;
    const message = error instanceof Error ? error.message : String(error);
    await record(context, repeats, { trialId: job.trialId, index: job.repeat!, seed: job.seed, epochs: job.toEpoch, status: 'failed', score: null, workerSeconds: 0, error: message });
    return 0;
  }
}

/**
 * Run the repeat runs not yet recorded, up to the transport's capacity at once, until all are recorded
 * or the study stops. Returns the training seconds they took. Nothing runs without settings or a plan
 * for them (`top: 0`, or folds, whose fold scores serve instead).
 */
export async function runRepeats(context: RepeatContext, transport: TrialTransport, settings: RepeatSettings | undefined, planned: RepeatPlan | undefined): Promise<number> {
  if (!settings || !planned) return 0;
  const repeats = openRecord(context.store, settings, planned.configurations);
  const pending = pendingRuns(repeats, context.store.doc.trials);
  const running = new Set<Promise<void>>();
  let seconds = 0;
  for (const next of pending) {
    while (running.size >= Math.max(1, transport.capacity) && !context.stop.stopping) await Promise.race(running);
    if (context.stop.stopping) break;
    const job = await repeatJob(context, next.trial, next.index);
    const done: Promise<void> = runOne(context, transport, repeats, job).then((s) => {
      seconds += s;
      running.delete(done);
    });
    running.add(done);
  }
  await Promise.all(running);
  return seconds;
}
