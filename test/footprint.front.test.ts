/**
 * The second goal: non-dominated sorting, the front of a study beside its one ranking, the listing in
 * `ranking`, and `export --front` / `--max-weights`.
 */
import { existsSync } from 'node:fs';
import path from 'node:path';
import { runPaths } from '../src/store/run-dir.js';
import { describe, expect, it } from 'vitest';
import { dominates, frontOf, nonDominatedFronts } from '../src/core/front.js';
import { rankTrials } from '../src/core/ranking.js';
import { runStudy } from '../src/runner/run-study.js';
import { rankOnFront } from '../src/export/select.js';
import { studyResultJson, studyResultText } from '../src/report/study-result.js';
import { exportModel } from '../src/commands/export.js';
import type { StudyDocument } from '../src/store/types.js';
import { trialRecord } from './helpers/trials.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

describe('non-dominated sorting', () => {
  it('dominates: no worse in every objective and better in one', () => {
    // Source: Deb et al., "A Fast and Elitist Multiobjective Genetic Algorithm: NSGA-II", IEEE TEC 6(2), 2002, section III-A (definition of domination).
    expect(dominates([1, 2], [1, 3])).toBe(true);
    expect(dominates([1, 3], [1, 3])).toBe(false);
    expect(dominates([1, 4], [2, 3])).toBe(false);
  });

  it('sorts six points into three fronts, worked by hand', () => {
    // Source: Deb et al. 2002, section III-A, fast non-dominated sort; the points and fronts are worked by hand:
    // A(1,5) B(2,3) C(3,1) dominate nothing below them on both; D(2,4) is beaten by B, F(3,3) by B and C;
    // E(4,4) by B, C, D and F, so it is alone on the third front.
    const points = [[1, 5], [2, 3], [3, 1], [2, 4], [4, 4], [3, 3]];
    expect(nonDominatedFronts(points)).toEqual([[0, 1, 2], [3, 5], [4]]);
  });

  it('keeps equal points on the same front', () => {
    expect(nonDominatedFronts([[2, 2], [2, 2], [3, 3]])).toEqual([[0, 1], [2]]);
  });
});

describe('the front of a ranking', () => {
  // Scores (AUC, higher is better) and weight counts, worked by hand: trial 1 (0.70, 100), trial 2 (0.80, 400),
  // trial 3 (0.75, 500: beaten by trial 2), trial 4 (0.90, 2000), trial 5 (0.95, 300 but flagged too-slow),
  // trial 6 (0.60, 50, cut by a halving sampler: not finished).
  const trials = [
    trialRecord(1, 0.7, { weightCount: 100 }),
    trialRecord(2, 0.8, { weightCount: 400 }),
    trialRecord(3, 0.75, { weightCount: 500 }),
    trialRecord(4, 0.9, { weightCount: 2000 }),
    trialRecord(5, 0.95, { weightCount: 300, flags: ['too-slow'] }),
    trialRecord(6, 0.6, { weightCount: 50, status: 'dropped', epochsTrained: 3 }),
  ];
  const goal = { metric: 'auc', better: 'higher' } as const;
  const ranking = rankTrials(trials, goal);

  it('lists the finished, unflagged trials no other beats on both, smallest first, with their rank in the one ranking', () => {
    const front = frontOf(ranking, goal, 'weights');
    expect(front.map((m) => [m.place, m.ranked.trial.id, m.value])).toEqual([[1, 1, 100], [2, 2, 400], [3, 4, 2000]]);
    // The ranking itself is unchanged: the too-slow trial ranks after the others, the cut one after the finished.
    expect(ranking.map((r) => r.trial.id)).toEqual([4, 2, 3, 1, 6, 5]);
    expect(front.map((m) => m.ranked.rank)).toEqual([4, 2, 1]);
  });

  it('picks the rank to export by place or by the largest size allowed, and names the front when asked for what it lacks', () => {
    const doc = { trials, goal, definition: { footprint: { against: 'weights' } } } as unknown as StudyDocument;
    expect(rankOnFront(doc, { front: 2 }, 'study.json')).toBe(2);
    expect(rankOnFront(doc, { maxWeights: 1999 }, 'study.json')).toBe(2);
    expect(rankOnFront(doc, { maxWeights: 2000 }, 'study.json')).toBe(1);
    expect(() => rankOnFront(doc, { front: 4 }, 'study.json')).toThrow(/study\.json: --front 4 does not exist; the front holds 3 configurations, weights 100, 400, 2000 \(places 1 to 3\)/);
    expect(() => rankOnFront(doc, { maxWeights: 99 }, 'study.json')).toThrow(/--max-weights 99: no front configuration is that small/);
    const single = { ...doc, definition: {} } as unknown as StudyDocument;
    expect(() => rankOnFront(single, { front: 1 }, 'study.json')).toThrow(/--front needs a study with a second goal \(footprint\.against/);
    expect(rankOnFront(single, { maxWeights: 500 }, 'study.json')).toBe(2);
  });
});

describe('a study with a second goal, end to end', () => {
  it('lists the front after the ranking, in JSON, keeps its checkpoints, and exports a place on it', async () => {
    const file = await writeTinyStudy(
      tinyStudy({
        space: { depth: { min: 1, max: 2 }, width: { min: 2, max: 32 }, activation: ['relu'], learningRate: { min: 0.01, max: 0.1 }, batchSize: [16], optimizer: ['adam'] },
        budget: { trials: 10, maxEpochs: 3 },
        footprint: { against: 'weights' },
      }),
    );
    const dir = path.join(path.dirname(file), 'run');
    // Trained on the engine (export needs real checkpoints); widths from 2 to 32 give the front several sizes.
    const { doc, ranking } = await runStudy(file, { out: dir });
    const json = studyResultJson(doc, ranking, 'study.json');
    const front = json.front!.configurations;
    expect(json.front!.against).toBe('weights');
    expect(front.length).toBeGreaterThan(1);
    // Each place is smaller and scores lower than the next: no configuration on it beats another on both.
    for (let i = 1; i < front.length; i++) {
      expect(front[i]!.weights!).toBeGreaterThan(front[i - 1]!.weights!);
      expect(front[i]!.score).toBeGreaterThan(front[i - 1]!.score);
    }
    expect(front.at(-1)!.rank).toBe(1);
    // Every other finished trial is beaten on both by a front configuration.
    for (const entry of json.trials.filter((t) => t.ranked && !front.some((f) => f.trial === t.trial))) {
      expect(front.some((f) => f.weights! <= entry.weights! && f.score >= entry.score! && (f.weights! < entry.weights! || f.score > entry.score!))).toBe(true);
    }
    expect(studyResultText(doc, ranking, 'study.json')).toMatch(/front: \d+ configurations that no other beats on both auc and weights/);
    // Checkpoints are kept for the best 3 ranks and, with a second goal, for every front configuration.
    for (const entry of front) expect(existsSync(runPaths.checkpoint(dir, entry.trial)), `trial ${entry.trial}`).toBe(true);
    expect(front.some((entry) => entry.rank > 3)).toBe(true);
    const summary = await exportModel({ dir, front: 1, out: path.join(dir, 'smallest') });
    expect(summary.trialId).toBe(front[0]!.trial);
    expect(summary.rank).toBe(front[0]!.rank);
  }, 120_000);
});
