/**
 * The one ranking rule (src/core/ranking.ts) on a constructed study file holding finished, stopped,
 * cut, flagged, diverged and still-training trials, read back through the `ranking` command.
 */
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { ranking } from '../src/commands/ranking.js';
import { leaderOf, rankTrials } from '../src/core/ranking.js';
import { healthFlags } from '../src/core/health.js';
import { studyResultJson, studyResultText } from '../src/report/study-result.js';
import { rankingTable } from '../src/report/ranking-table.js';
import { StudyStore } from '../src/store/study-store.js';
import type { TrialRecord } from '../src/core/trial.js';
import { trialRecord } from './helpers/trials.js';

const FIXTURE = new URL('./fixtures/studies/halving-nine.json', import.meta.url);
const dirs: string[] = [];
afterAll(async () => Promise.all(dirs.map((dir) => rm(dir, { recursive: true, force: true }))));

const point = (epoch: number, logLoss: number) => ({ epoch, trainLoss: logLoss, validationLoss: logLoss, metrics: { logLoss }, seconds: 0.1 });

/** A successive-halving study (maxEpochs 9, goal logLoss, lower is better) with one trial of each kind. */
function constructedTrials(): TrialRecord[] {
  return [
    // Finished: trained to the epoch limit.
    trialRecord(1, 0.4, { epochsTrained: 9, rung: 2, curve: [point(9, 0.4)] }),
    // Finished: its early-stopping rule stopped it at epoch 5 (cut rung 1's 3 to 9), scored at its best epoch 3.
    trialRecord(2, 0.35, { status: 'dropped', epochsTrained: 5, rung: 1, stoppedEarly: true, stoppedAtEpoch: 5, bestEpoch: 3, curve: [point(3, 0.35), point(5, 0.5)] }),
    // Cut at 3 epochs with a better score than every finished trial.
    trialRecord(3, 0.3, { status: 'dropped', epochsTrained: 3, rung: 1, curve: [point(3, 0.3)] }),
    // Cut at 1 epoch with the best score of all.
    trialRecord(4, 0.25, { status: 'dropped', epochsTrained: 1, rung: 0, curve: [point(1, 0.25)] }),
    // Finished with the best score, but flagged: it diverged after its best epoch.
    trialRecord(5, 0.2, { epochsTrained: 6, rung: 2, stoppedEarly: true, stoppedAtEpoch: 6, bestEpoch: 4, divergedAfterBest: { epoch: 7, reason: 'loss not finite' }, flags: ['blew-up'], curve: [point(4, 0.2)] }),
    // Finished, tied with trial 1: the lower id first.
    trialRecord(6, 0.4, { epochsTrained: 9, rung: 2, curve: [point(9, 0.4)] }),
    // Diverged: not ranked.
    trialRecord(7, null, { status: 'diverged', epochsTrained: 2, rung: 0, flags: ['blew-up'], divergence: { epoch: 2, reason: 'loss not finite' } }),
    // Being continued past rung 1 (3 epochs): ranked where it was last scored, among the cut.
    trialRecord(8, 0.28, { status: 'training', epochsTrained: 3, rung: 1, curve: [point(3, 0.28)] }),
  ];
}

async function writeConstructedStudy(): Promise<string> {
  const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-ranking-rule-'));
  dirs.push(dir);
  await writeFile(path.join(dir, 'study.json'), await readFile(FIXTURE, 'utf8'));
  const doc = await StudyStore.read(dir);
  await writeFile(path.join(dir, 'study.json'), JSON.stringify({ ...doc, trials: constructedTrials() }));
  return dir;
}

describe('the one ranking rule on a constructed study file', () => {
  it('ranks healthy finished trials by score, then cut trials by epochs reached and score, then flagged ones; diverged ones not at all', async () => {
    const dir = await writeConstructedStudy();
    const result = await ranking({ dir });
    expect(result.doc.goal).toEqual({ metric: 'logLoss', better: 'lower' });
    // 2 (stopped, 0.35) and 1, 6 (trained, 0.4; tie by id) finished; 8 and 3 cut at 3 epochs (0.28, 0.3); 4 cut at 1 epoch; 5 flagged.
    expect(result.ranking.map((r) => r.trial.id)).toEqual([2, 1, 6, 8, 3, 4, 5]);
    expect(leaderOf(result.doc.trials, result.doc.goal)?.id).toBe(2);
    const json = studyResultJson(result.doc, result.ranking, result.file);
    expect(json.trials.map((t) => [t.trial, t.rank, t.finished])).toEqual([
      [2, 1, true], [1, 2, true], [6, 3, true], [8, 4, false], [3, 5, false], [4, 6, false], [5, 7, true], [7, null, false],
    ]);
    expect(json.trials.find((t) => t.trial === 5)?.flags).toEqual(['blew-up']);
    const table = studyResultText(result.doc, result.ranking, result.file).split('\n');
    expect(table[0]).toMatch(/flags$/);
    expect(table.find((line) => /^\s*7\s+5\s/.test(line))).toMatch(/blew-up$/);
  });

  it('the leader never gets worse as trials finish, in any order they finish', () => {
    const goal = { metric: 'logLoss' as const, better: 'lower' as const };
    const all = constructedTrials();
    // Replay the trials' arrival in two orders; a trial not yet arrived is absent.
    for (const order of [[4, 3, 8, 1, 5, 6, 2, 7], [2, 7, 6, 5, 1, 8, 3, 4]]) {
      const seen: TrialRecord[] = [];
      const leaders: (number | undefined)[] = [];
      for (const id of order) {
        seen.push(all.find((t) => t.id === id)!);
        leaders.push(leaderOf(seen, goal)?.id);
      }
      const standing = (id: number | undefined): number => (id === undefined ? Infinity : rankTrials(all, goal).findIndex((r) => r.trial.id === id));
      for (let i = 1; i < leaders.length; i++) expect(standing(leaders[i])).toBeLessThanOrEqual(standing(leaders[i - 1]));
      expect(leaders.at(-1)).toBe(2);
    }
  });
});

describe('health flags', () => {
  const auc = { metric: 'auc' as const, better: 'higher' as const };
  it('flags a binary network with an AUC of exactly 0.5 as flat and as no better than the constant predictor (AUC 0.5)', () => {
    const flat = trialRecord(1, 0.5, { curve: [{ epoch: 10, trainLoss: 0.6, validationLoss: 0.6, metrics: { auc: 0.5 }, seconds: 0 }] });
    expect(healthFlags(flat, auc, 0.5)).toEqual(['flat-output', 'no-lift']);
    const fine = trialRecord(2, 0.81, { curve: [{ epoch: 10, trainLoss: 0.6, validationLoss: 0.6, metrics: { auc: 0.81 }, seconds: 0 }] });
    expect(healthFlags(fine, auc, 0.5)).toEqual([]);
  });

  it('flags a multiclass network that predicts one class for every row, and a diverged one', () => {
    const goal = { metric: 'accuracy' as const, better: 'higher' as const };
    const oneClass = trialRecord(1, 0.34, { classFigures: { epoch: 10, confusion: [[5, 0, 0], [4, 0, 0], [6, 0, 0]], averagePrecision: [0.3, 0.3, 0.4] } });
    expect(healthFlags(oneClass, goal, 0.4)).toEqual(['flat-output', 'no-lift']);
    const mixed = trialRecord(2, 0.8, { classFigures: { epoch: 10, confusion: [[5, 0, 0], [1, 3, 0], [0, 1, 5]], averagePrecision: [1, 0.8, 0.9] } });
    expect(healthFlags(mixed, goal, 0.4)).toEqual([]);
    expect(healthFlags(trialRecord(3, null, { status: 'diverged' }), goal, 0.4)).toEqual(['blew-up']);
  });

  it('a regression network no better than the training mean is flagged no-lift (lower is better)', () => {
    const rmse = { metric: 'rmse' as const, better: 'lower' as const };
    expect(healthFlags(trialRecord(1, 2.0, {}), rmse, 2.0)).toEqual(['no-lift']);
    expect(healthFlags(trialRecord(2, 1.5, {}), rmse, 2.0)).toEqual([]);
  });
});

describe('the ranking table of a classification study', () => {
  it('shows accuracy and macro-F1 side by side beside the goal', () => {
    const point = (auc: number, accuracy: number, macroF1: number) => [{ epoch: 10, trainLoss: 0.5, validationLoss: 0.5, metrics: { auc, accuracy, macroF1 }, seconds: 0 }];
    const goal = { metric: 'auc' as const, better: 'higher' as const };
    const ranked = rankTrials([trialRecord(1, 0.8, { curve: point(0.8, 0.75, 0.6) }), trialRecord(2, 0.9, { curve: point(0.9, 0.7, 0.65) })], goal);
    const lines = rankingTable(ranked, goal).split('\n');
    expect(lines[0]).toMatch(/auc\s+accuracy\s+macroF1\s+depth/);
    expect(lines[2]).toMatch(/^\s*1\s+2\s.*0\.9\s+0\.7\s+0\.65\s/);
  });
});
