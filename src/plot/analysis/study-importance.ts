import type { StudyDocument } from '../../store/types.js';
import type { TrialRecord } from '../../core/trial.js';
import type { TrialConfiguration } from '../../core/configuration.js';
import { beats } from '../../core/configuration.js';
import { scoreAt } from '../../core/ranking.js';
import { variedParameterAxes, type ParameterAxis } from '../labels.js';
import { forestImportance, type InputKind } from './importance.js';
import { drawsOnLogScale } from '../../space/schema.js';
import { spaceRegularisers } from '../../space/regularisers.js';

/** Fewest scored configurations worth fitting a forest to. */
export const FEWEST_FOR_IMPORTANCE = 8;

/** How one hyperparameter is coded as a forest input. */
interface Coding {
  axis: ParameterAxis;
  input: InputKind;
  /** The value coded into [0, 1] (continuous) or a choice index. */
  encode: (value: string | number) => number;
  /** A grid position or choice index turned back into the hyperparameter's value. */
  decode: (coded: number) => string | number;
}

/** A trial's value of an axis's hyperparameter (schedule settings a space leaves out read as 0). */
export function configurationValue(trial: TrialRecord, axis: ParameterAxis): string | number {
  return trial.configuration[axis.key] ?? 0;
}

function coding(axis: ParameterAxis, study: StudyDocument): Coding {
  const space = study.definition.space;
  const range = (): { min: number; max: number; log: boolean } | undefined => {
    switch (axis.key) {
      case 'learningRate':
        return { min: space.learningRate.min, max: space.learningRate.max, log: drawsOnLogScale(space.learningRate, true) };
      case 'l2':
        return space.l2 ? { min: space.l2.min, max: space.l2.max, log: drawsOnLogScale(space.l2, true) } : undefined;
      case 'width':
        return { min: space.width.min, max: space.width.max, log: space.width.log };
      case 'dropout':
        return space.dropout ? { min: space.dropout.min, max: space.dropout.max, log: drawsOnLogScale(space.dropout, false) } : undefined;
      default: {
        const regulariser = spaceRegularisers(space).find(({ dimension }) => dimension.name === axis.key);
        return regulariser ? { min: regulariser.range.min, max: regulariser.range.max, log: drawsOnLogScale(regulariser.range, regulariser.dimension.defaultLog) } : undefined;
      }
    }
  };
  const bounds = range();
  if (bounds && bounds.max > bounds.min) {
    const f = (v: number): number => (bounds.log ? Math.log(v) : v);
    const lo = f(bounds.min);
    const hi = f(bounds.max);
    return {
      axis,
      input: { kind: 'continuous' },
      encode: (value) => Math.min(1, Math.max(0, (f(Number(value)) - lo) / (hi - lo))),
      decode: (coded) => (bounds.log ? Math.exp(lo + coded * (hi - lo)) : lo + coded * (hi - lo)),
    };
  }
  const seen = [...new Set(study.trials.map((t) => configurationValue(t, axis)))];
  const depths = axis.key === 'depth' ? Array.from({ length: space.depth.max - space.depth.min + 1 }, (_, i) => space.depth.min + i) : [];
  const levels: (string | number)[] = [...new Set([...(axis.key === 'depth' ? depths : (axis.categories ?? [])), ...seen])];
  return { axis, input: { kind: 'choice', levels: levels.length }, encode: (value) => levels.indexOf(value), decode: (coded) => levels[coded]! };
}

/**
 * The epoch at which the most configurations have a score (ties: the later): the only point where
 * configurations of every rung can be compared. Undefined when no epoch is scored.
 */
export function comparableEpoch(study: StudyDocument): number | undefined {
  const counts = new Map<number, number>();
  for (const trial of study.trials) for (const point of trial.curve) if (scoreAt(point, study.goal) !== null) counts.set(point.epoch, (counts.get(point.epoch) ?? 0) + 1);
  let best: [number, number] | undefined;
  for (const [epoch, count] of counts) if (!best || count > best[1] || (count === best[1] && epoch > best[0])) best = [epoch, count];
  return best?.[0];
}

/** Score of a trial at one epoch, or undefined. */
export function scoreAtEpoch(trial: TrialRecord, study: StudyDocument, epoch: number): number | undefined {
  const point = trial.curve.find((p) => p.epoch === epoch);
  return point ? (scoreAt(point, study.goal) ?? undefined) : undefined;
}

/** One hyperparameter's share of the score's variance, and its marginal for the value chart. */
export interface ParameterImportance {
  key: keyof TrialConfiguration;
  title: string;
  /** A few words, for crowded places. */
  shortTitle: string;
  share: number;
  kind: 'continuous' | 'choice';
  /** The forest's marginal: the predicted score at each value, the other hyperparameters averaged out. */
  marginal: { value: string | number; score: number }[];
  /** Values where the marginal lies in the better quarter of its own range (the shaded good region). */
  good: (string | number)[];
}

export interface StudyImportance {
  /** The epoch at which configurations were compared. */
  epoch: number;
  configurations: number;
  parameters: ParameterImportance[];
}

/**
 * Importance of each varied hyperparameter for the score at {@link comparableEpoch}: a random
 * forest fitted to the scored configurations, decomposed by {@link forestImportance} over the search
 * space (uniform on each range, log ranges on the log scale). Undefined with fewer than
 * {@link FEWEST_FOR_IMPORTANCE} scored configurations or nothing varied. Sorted by share, largest first.
 */
export function studyImportance(study: StudyDocument): StudyImportance | undefined {
  const epoch = comparableEpoch(study);
  const axes = variedParameterAxes(study);
  if (epoch === undefined || axes.length === 0) return undefined;
  const scored = study.trials.flatMap((t) => {
    const value = scoreAtEpoch(t, study, epoch);
    return value === undefined ? [] : [{ trial: t, value }];
  });
  if (scored.length < FEWEST_FOR_IMPORTANCE) return undefined;
  const codings = axes.map((axis) => coding(axis, study));
  const rows = scored.map(({ trial }) => codings.map((c) => c.encode(configurationValue(trial, c.axis))));
  const values = scored.map((s) => s.value);
  const { effects } = forestImportance(
    rows,
    values,
    codings.map((c) => c.input),
    { seedKey: [study.definition.sampler.seed, 'report', 'importance'] },
  );
  const better = study.goal.better;
  const parameters = effects.map((effect, i): ParameterImportance => {
    const c = codings[i]!;
    const marginal = effect.at.map((at, k) => ({ value: c.decode(at), score: effect.marginal[k]! }));
    const best = marginal.reduce((b, m) => (beats(m.score, b, better) ? m.score : b), marginal[0]!.score);
    const worst = marginal.reduce((w, m) => (beats(w, m.score, better) ? m.score : w), marginal[0]!.score);
    const threshold = best + (worst - best) * 0.25;
    const good = marginal.filter((m) => (better === 'higher' ? m.score >= threshold : m.score <= threshold)).map((m) => m.value);
    return { key: c.axis.key, title: c.axis.title, shortTitle: c.axis.shortTitle, share: effect.share, kind: c.input.kind, marginal, good };
  });
  return { epoch, configurations: scored.length, parameters: parameters.sort((a, b) => b.share - a.share) };
}
