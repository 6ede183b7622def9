/**
 * Early stopping inside a trial: the rules against Prechelt's definition and hand-worked sequences,
 * the trainers stopping where the rule says and keeping the best epoch's weights, a continued trial
 * deciding as one trained straight through, and studies on outside data scored at the best epoch.
 */
import { copyFile, readFile, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { beforeAll, describe, expect, it } from 'vitest';
import { bestCheckpointWeights, checkpointWeights, decodeCheckpoint } from '../src/checkpoints/format.js';
import { trainSegmentOnEngine } from '../src/trainers/engine/segment.js';
import type { EpochReport } from '../src/core/job.js';
import { runStudy } from '../src/runner/run-study.js';
import type { Goal } from '../src/core/configuration.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import { errorOf, generalisationLoss, observeEpoch, type EarlyStoppingSettings, type EarlyStoppingState } from '../src/core/early-stopping.js';
import { studyFromObject } from '../src/study/load.js';
import { beats } from '../src/core/configuration.js';
import { rankTrials, scoreAt } from '../src/core/ranking.js';
import { describeJob } from '../src/report/progress.js';
import { rankingTable } from '../src/report/ranking-table.js';
import type { TrialRecord } from '../src/core/trial.js';
import { initBackend } from '../src/trainers/tfjs/backend.js';
import { trainSegment } from '../src/trainers/tfjs/loop.js';
import { makeTempDir, PENGUINS_MEASUREMENTS, PENGUINS_TARGET, writePenguinsCsv } from './helpers/datasets.js';
import { tinyStudy } from './helpers/studies.js';
import { trialRecord } from './helpers/trials.js';
import { syntheticDataset, trainRequest } from './helpers/synthetic.js';

beforeAll(() => initBackend());

const lowerLoss: Goal = { metric: 'validationLoss', better: 'lower' };
const figures = (reports: EpochReport[]) => reports.map(({ seconds: _, ...rest }) => rest);

/** Feeds scores epoch by epoch; returns the epoch the rule stops after (undefined: never) and the last state. */
function feed(settings: EarlyStoppingSettings, scores: (number | null)[]): { stoppedAt?: number; state?: EarlyStoppingState } {
  let state: EarlyStoppingState | undefined;
  for (let i = 0; i < scores.length; i++) {
    const seen = observeEpoch(settings, state, i + 1, scores[i]!);
    state = seen.state;
    if (seen.stop) return { stoppedAt: i + 1, ...(state ? { state } : {}) };
  }
  return state ? { state } : {};
}

describe('the rules', () => {
  it("generalisation loss: validation errors (1.0, 0.8, 0.9) give GL(3) = 12.5, so GL_10 stops after epoch 3 and GL_15 does not", () => {
    // Source: Prechelt, "Early Stopping - But When?", Neural Networks: Tricks of the Trade, LNCS 1524, 1998,
    // section 2.1 (GL(t) = 100 (E_va(t) / E_opt(t) - 1)); the worked value is REFERENCES.md's (derived).
    expect(generalisationLoss(0.9, 0.8)).toBeCloseTo(12.5, 12);
    expect(feed({ rule: { rule: 'generalisation-loss', alpha: 10 }, goal: lowerLoss }, [1.0, 0.8, 0.9])).toEqual({ stoppedAt: 3, state: { bestEpoch: 2, bestScore: 0.8 } });
    expect(feed({ rule: { rule: 'generalisation-loss', alpha: 15 }, goal: lowerLoss }, [1.0, 0.8, 0.9]).stoppedAt).toBeUndefined();
  });

  it('generalisation loss on a higher-is-better goal reads 1 - the metric as the error: accuracies (0, 0.2, 0.1) are errors (1.0, 0.8, 0.9)', () => {
    // Source: Prechelt 1998, section 2.1, with E = 1 - accuracy (the error rate); derived.
    const accuracy: Goal = { metric: 'accuracy', better: 'higher' };
    expect(errorOf(0.1, accuracy)).toBeCloseTo(0.9, 15);
    expect(feed({ rule: { rule: 'generalisation-loss', alpha: 10 }, goal: accuracy }, [0, 0.2, 0.1])).toEqual({ stoppedAt: 3, state: { bestEpoch: 2, bestScore: 0.2 } });
  });

  it('generalisation loss with a perfect best (E_opt = 0) is 0 while the error stays 0, infinite once it rises', () => {
    expect(generalisationLoss(0, 0)).toBe(0);
    expect(generalisationLoss(0.01, 0)).toBe(Number.POSITIVE_INFINITY);
  });

  it('patience 3: improvements at epochs 1 and 2, none at 3, 4, 5, so it stops after epoch 5 with epoch 2 best', () => {
    // Common practice (no source): patience counts epochs since the last improvement.
    expect(feed({ rule: { rule: 'patience', patience: 3, minDelta: 0 }, goal: lowerLoss }, [5, 4, 4.5, 4.2, 4.1, 3])).toEqual({ stoppedAt: 5, state: { bestEpoch: 2, bestScore: 4 } });
  });

  it('patience with minDelta: a change no larger than minDelta is not an improvement (higher is better)', () => {
    const auc: Goal = { metric: 'auc', better: 'higher' };
    const rule = { rule: 'patience' as const, patience: 2, minDelta: 0.05 };
    expect(feed({ rule, goal: auc }, [0.6, 0.64, 0.7, 0.72, 0.74])).toEqual({ stoppedAt: 5, state: { bestEpoch: 3, bestScore: 0.7 } });
  });

  it('an epoch without a finite score is never an improvement', () => {
    expect(feed({ rule: { rule: 'patience', patience: 2, minDelta: 0 }, goal: lowerLoss }, [null, null])).toEqual({ stoppedAt: 2 });
    expect(feed({ rule: { rule: 'patience', patience: 2, minDelta: 0 }, goal: lowerLoss }, [1, null, null]).stoppedAt).toBe(3);
  });

  it('refuses generalisation loss on a goal that is not an error in its own direction, with one line naming the key (exit code 2)', () => {
    const definition = tinyStudy({ goal: { metric: 'auc', better: 'lower' }, earlyStopping: { rule: 'generalisation-loss', alpha: 5 } });
    expect(() => studyFromObject(definition, '/tmp')).toThrow(/earlyStopping\.rule: rule "generalisation-loss" needs the goal as an error/);
    try {
      studyFromObject(definition, '/tmp');
    } catch (error) {
      expect((error as { exitCode?: number; code?: string }).code).toBe('E_STUDY_INVALID');
    }
    expect(() => studyFromObject(tinyStudy({ earlyStopping: { rule: 'patience', patience: 0 } } as never), '/tmp')).toThrow(/earlyStopping\.patience/);
  });
});

describe('the trainers stop and keep the best epoch', () => {
  // A small noisy regression set that a large learning rate over-fits quickly.
  const regression = syntheticDataset({ task: 'regression', rows: 120, inputs: 4, seed: 11 });
  const params = { depth: 2, width: 32, learningRate: 0.05, batchSize: 8 };
  const earlyStopping: EarlyStoppingSettings = { rule: { rule: 'patience', patience: 3, minDelta: 0 }, goal: { metric: 'rmse', better: 'lower' } };

  for (const [name, train] of [['engine', trainSegmentOnEngine], ['tfjs', trainSegment]] as const) {
    it(`${name}: with patience 3 stops 3 epochs after the best, reports both, and its checkpoint holds the best epoch's weights (those of a run trained to it)`, async () => {
      const stopped = await train(trainRequest(regression, { toEpoch: 60, params, earlyStopping }));
      expect(stopped.status).toBe('completed');
      const curve = stopped.epochs.map((e) => scoreAt(e, earlyStopping.goal)!);
      const best = curve.indexOf(Math.min(...curve)) + 1;
      expect(stopped.bestEpoch).toBe(best);
      expect(stopped.stoppedAtEpoch).toBe(best + 3);
      expect(stopped.epochs).toHaveLength(best + 3);
      const manifest = decodeCheckpoint(stopped.checkpoint!).manifest;
      expect(manifest.epoch).toBe(best + 3);
      expect(manifest.best?.epoch).toBe(best);
      const toBest = await train(trainRequest(regression, { toEpoch: best, params }));
      expect(bestCheckpointWeights(stopped.checkpoint!)).toStrictEqual({ epoch: best, weights: checkpointWeights(toBest.checkpoint!) });
    });
  }

  it('engine, classification: the per-class figures are the best epoch\'s (equal to a run trained to it)', async () => {
    const multiclass = syntheticDataset({ task: 'multiclass', rows: 200, inputs: 5, classes: 3, seed: 5 });
    const settings: EarlyStoppingSettings = { rule: { rule: 'patience', patience: 2, minDelta: 0 }, goal: { metric: 'logLoss', better: 'lower' } };
    const stopped = await trainSegmentOnEngine(trainRequest(multiclass, { toEpoch: 80, params: { learningRate: 0.05, width: 32 }, earlyStopping: settings }));
    expect(stopped.stoppedAtEpoch).toBeDefined();
    const toBest = await trainSegmentOnEngine(trainRequest(multiclass, { toEpoch: stopped.bestEpoch!, params: { learningRate: 0.05, width: 32 } }));
    expect(stopped.classFigures).toStrictEqual(toBest.classFigures);
  });

  for (const [name, train] of [['engine', trainSegmentOnEngine], ['tfjs', trainSegment]] as const) {
    it(`${name}: a trial continued from a checkpoint stops, scores and checkpoints exactly as one trained straight through`, async () => {
      const straight = await train(trainRequest(regression, { toEpoch: 60, params, earlyStopping }));
      const split = straight.bestEpoch! + 1; // after the best epoch: the second job must carry the best weights over
      const first = await train(trainRequest(regression, { toEpoch: split, params, earlyStopping }));
      expect(first.stoppedAtEpoch).toBeUndefined();
      const second = await train(trainRequest(regression, { fromEpoch: split, toEpoch: 60, params, earlyStopping, checkpoint: first.checkpoint! }));
      expect(figures([...first.epochs, ...second.epochs])).toStrictEqual(figures(straight.epochs));
      expect(second.bestEpoch).toBe(straight.bestEpoch);
      expect(second.stoppedAtEpoch).toBe(straight.stoppedAtEpoch);
      expect(second.checkpoint).toStrictEqual(straight.checkpoint);
    });
  }

  it('engine: a loss that diverges after a best epoch stops the trial after the last finite epoch, scored and checkpointed at its best', async () => {
    // sgd with a learning rate that warm-up raises every epoch: finite for a few epochs, then it runs away.
    const rising = { optimizer: 'sgd' as const, learningRate: 4, schedule: 'constant' as const, warmupEpochs: 20, batchSize: 8 };
    const settings: EarlyStoppingSettings = { rule: { rule: 'patience', patience: 10, minDelta: 0 }, goal: { metric: 'rmse', better: 'lower' } };
    const plain = await trainSegmentOnEngine(trainRequest(regression, { toEpoch: 30, maxEpochs: 30, params: rising }));
    expect(plain.status).toBe('diverged');
    const stopped = await trainSegmentOnEngine(trainRequest(regression, { toEpoch: 30, maxEpochs: 30, params: rising, earlyStopping: settings }));
    expect(stopped.status).toBe('completed');
    expect(stopped.divergedAfterBest?.epoch).toBe(plain.divergence!.epoch);
    expect(stopped.stoppedAtEpoch).toBe(plain.divergence!.epoch - 1);
    const curve = stopped.epochs.map((e) => e.metrics.rmse!);
    expect(stopped.bestEpoch).toBe(curve.indexOf(Math.min(...curve)) + 1);
    const toBest = await trainSegmentOnEngine(trainRequest(regression, { toEpoch: stopped.bestEpoch!, maxEpochs: 30, params: rising }));
    expect(bestCheckpointWeights(stopped.checkpoint!).weights).toStrictEqual(checkpointWeights(toBest.checkpoint!));
    // Its own network is the best epoch's too: the last weights were not numbers.
    expect(checkpointWeights(stopped.checkpoint!)).toStrictEqual(checkpointWeights(toBest.checkpoint!));
  });

  it('without early stopping nothing changes: no best epoch, the checkpoint has no best section', async () => {
    const plain = await trainSegmentOnEngine(trainRequest(regression, { toEpoch: 5, params }));
    expect(plain.bestEpoch).toBeUndefined();
    expect(plain.stoppedAtEpoch).toBeUndefined();
    expect(decodeCheckpoint(plain.checkpoint!).manifest.best).toBeUndefined();
  });
});

const DEMO = fileURLToPath(new URL('../studies/demo/', import.meta.url));

/** Every ranked trial's recorded score is the best score along its curve, and no trial early stopping ended trained a later job. */
function expectScoredAtBest(trials: readonly TrialRecord[], goal: Goal): void {
  let stopped = 0;
  for (const trial of trials) {
    if (trial.score === null) continue;
    const scores = trial.curve.map((point) => scoreAt(point, goal)).filter((s): s is number => s !== null);
    const best = scores.reduce((a, b) => (beats(b, a, goal.better) ? b : a));
    expect(trial.score, `trial ${trial.id}`).toBe(best);
    expect(scoreAt(trial.curve.find((p) => p.epoch === trial.bestEpoch)!, goal)).toBe(trial.score);
    if (trial.stoppedEarly) {
      stopped++;
      expect(trial.stoppedAtEpoch).toBe(trial.epochsTrained);
      expect(trial.curve.at(-1)!.epoch).toBe(trial.stoppedAtEpoch);
      const last = trial.jobs.at(-1)!;
      // (a divergence at the first epoch of a job stops it at the job's fromEpoch)
      expect(last.fromEpoch <= trial.stoppedAtEpoch! && trial.stoppedAtEpoch! <= last.toEpoch, `trial ${trial.id}: its last job is the one that stopped (not promoted past it)`).toBe(true);
    }
  }
  expect(stopped, 'some trial stopped early (else the check says nothing of stopping)').toBeGreaterThan(0);
}

describe('studies with early stopping are ranked at the best epoch', () => {
  it('Palmer Penguins, successive halving with patience 2 on log loss: every ranked score is its curve\'s best', async () => {
    // Source: Horst, Hill, Gorman, palmerpenguins (2020), doi:10.5281/zenodo.3960218, via vega-datasets penguins.json.
    const csv = await writePenguinsCsv();
    const file = path.join(path.dirname(csv), 'study-stopping.json');
    const definition: StudyDefinitionInput = {
      name: 'penguins-stopping',
      data: { csv: path.basename(csv), task: 'multiclass', target: PENGUINS_TARGET, features: [...PENGUINS_MEASUREMENTS], splitSeed: 3 },
      space: { depth: { min: 1, max: 2 }, width: { min: 8, max: 64, log: true }, activation: ['relu', 'tanh'], learningRate: { min: 0.01, max: 0.3 }, batchSize: [16], optimizer: ['adam', 'sgd'] },
      budget: { trials: 9, maxEpochs: 27 },
      sampler: { kind: 'successive-halving', seed: 2, eta: 3, minEpochs: 3 },
      goal: { metric: 'logLoss' },
      earlyStopping: { rule: 'patience', patience: 2 },
      threads: 2,
    };
    await writeFile(file, JSON.stringify(definition));
    const outcome = await runStudy(file, { out: path.join(path.dirname(csv), 'run-stopping') });
    expectScoredAtBest(outcome.doc.trials, outcome.doc.goal);
  });

  it('the demo data, successive halving with patience 3 on AUC: every ranked score is its curve\'s best', async () => {
    // The demo data are invented (scripts/generate-demo-data.ts); what is checked is the ranking rule.
    const dir = await makeTempDir('rungwise-stopping-demo-');
    await copyFile(path.join(DEMO, 'pump-logs.csv'), path.join(dir, 'pump-logs.csv'));
    const halving = studyFromObject(JSON.parse(await readFile(path.join(DEMO, 'study-halving.json'), 'utf8')), DEMO).definition;
    const definition = { ...halving, name: 'demo-stopping', data: { ...halving.data, csv: 'pump-logs.csv' }, budget: { trials: 9, maxEpochs: 27 }, earlyStopping: { rule: 'patience', patience: 3 } };
    const file = path.join(dir, 'study.json');
    await writeFile(file, JSON.stringify(definition));
    const outcome = await runStudy(file, { out: path.join(dir, 'run') });
    expectScoredAtBest(outcome.doc.trials, outcome.doc.goal);
  });
});

describe('what the CLI says of a stopped trial', () => {
  it('the progress line names the stop and the best epoch; the ranking table has a best-epoch column', () => {
    const trial = trialRecord(4, 0.81, { epochsTrained: 7, bestEpoch: 4, stoppedEarly: true, stoppedAtEpoch: 7, rung: 1, rungScores: [0.7, 0.81], jobs: [{ rung: 0, fromEpoch: 0, toEpoch: 3, fromCheckpoint: false, attempts: 1, status: 'done' }, { rung: 1, fromEpoch: 3, toEpoch: 9, fromCheckpoint: true, attempts: 1, status: 'done' }] });
    const job = { trialId: 4, configuration: trial.configuration, rung: 1, bracket: 0, fromEpoch: 3, toEpoch: 9 };
    expect(describeJob({ trial, job }, 'auc')).toBe('trial 4 rung 1 stopped early after epoch 7: auc 0.81 (best epoch 4)');
    const other = trialRecord(5, 0.9, { epochsTrained: 3, status: 'dropped', jobs: [{ rung: 0, fromEpoch: 0, toEpoch: 3, fromCheckpoint: false, attempts: 1, status: 'done' }] });
    const ranking = rankTrials([trial, other], { metric: 'auc', better: 'higher' });
    // The stopped trial finished (its rule stopped it), so it outranks a trial cut at 3 epochs with a higher score.
    expect(ranking.map((r) => r.trial.id)).toEqual([4, 5]);
    const table = rankingTable(ranking, { metric: 'auc', better: 'higher' }).split('\n');
    expect(table[0]).toMatch(/epochs\s+best epoch\s+auc/);
    expect(table.find((line) => /^\s*1\s/.test(line))).toMatch(/7 \(stopped\)\s+4\s+0\.81/);
  });
});
