/**
 * The front of a study with a second goal (`footprint.against`), as text and as plain data: an
 * extra listing after the ranking, smallest (or fastest) configuration first.
 */
import type { Goal } from '../core/configuration.js';
import { frontOf, type FrontMember, type SecondGoal } from '../core/front.js';
import type { RankedTrial } from '../core/ranking.js';
import type { StudyDocument } from '../store/types.js';
import { formatNumber, textTable } from './format.js';
import { scoreText } from './ranking-table.js';

/** One configuration of the front in `--json`. */
export interface FrontEntry {
  /** 1 = the smallest (or fastest); `export --front <place>` exports it. */
  place: number;
  rank: number;
  trial: number;
  score: number;
  scoreStandardError?: number;
  weights?: number;
  rowMicroseconds?: number;
}

/** The study's front as `--json` gives it: the second goal and the configurations on it. */
export interface FrontJson {
  against: SecondGoal;
  configurations: FrontEntry[];
}

/** The second goal's column heading. */
export function secondGoalLabel(against: SecondGoal): string {
  return against === 'weights' ? 'weights' : 'µs per row';
}

/** The study's front, or undefined when the study names no second goal. */
export function studyFront(doc: StudyDocument, ranking: readonly RankedTrial[]): FrontMember[] | undefined {
  const against = doc.definition.footprint?.against;
  return against === undefined ? undefined : frontOf(ranking, doc.goal, against);
}

/** The front as plain data. */
export function frontJson(against: SecondGoal, front: readonly FrontMember[]): FrontJson {
  const configurations = front.map(({ place, ranked: { rank, trial } }): FrontEntry => {
    const entry: FrontEntry = { place, rank, trial: trial.id, score: trial.score };
    if (trial.scoreStandardError !== undefined) entry.scoreStandardError = trial.scoreStandardError;
    if (trial.weightCount !== undefined) entry.weights = trial.weightCount;
    if (trial.rowMicroseconds !== undefined) entry.rowMicroseconds = trial.rowMicroseconds;
    return entry;
  });
  return { against, configurations };
}

/** The front as text: a heading in words, then place, rank, trial, the second goal, the score, depth and width. */
export function frontText(against: SecondGoal, front: readonly FrontMember[], goal: Goal): string {
  const heading = `front: ${front.length} configuration${front.length === 1 ? '' : 's'} that no other beats on both ${goal.metric} and ${against === 'weights' ? 'weights' : 'time per row'} (export --front <place>)`;
  if (front.length === 0) return `${heading}: none yet (no finished trial within the limits)`;
  const rows = front.map(({ place, ranked: { rank, trial }, value }) => [
    String(place),
    String(rank),
    String(trial.id),
    against === 'weights' ? String(value) : formatNumber(value),
    scoreText(trial.score, trial.scoreStandardError),
    String(trial.configuration.depth),
    String(trial.configuration.width),
  ]);
  return `${heading}\n${textTable(['place', 'rank', 'trial', secondGoalLabel(against), goal.metric, 'depth', 'width'], rows)}`;
}
