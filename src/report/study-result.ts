import { isFinished, type RankedTrial } from '../core/ranking.js';
import type { TrialFlag } from '../core/trial.js';
import type { StudyDocument } from '../store/types.js';
import type { TrialRecord, TrialStatus } from '../core/trial.js';
import type { Goal, TrialConfiguration } from '../core/configuration.js';
import { trialClassReport, type ClassReport } from './class-report.js';
import { rankingTable } from './ranking-table.js';
import { OPTIMISM_CAUTION } from './caution.js';
import { studySummary } from './summary.js';
import { budgetSummary, type BudgetSummary } from './budget-summary.js';
import { frontJson, frontText, studyFront, type FrontJson } from './front-table.js';
import { repeatText, studyRepeats } from './repeat-text.js';
import type { RepeatSummary } from '../core/repeat-figures.js';

/** Rows of the text table when `--top` is not given. */
export const DEFAULT_TABLE_ROWS = 10;

/**
 * One trial in `--json` output: ranked ones carry their rank, the others `rank: null` and why they are
 * not ranked. No timings: the same study gives the same entries, interrupted or not (totals hold the times).
 */
export interface TrialEntry {
  rank: number | null;
  trial: number;
  status: TrialStatus;
  ranked: boolean;
  /** Its training finished: it reached the study's epoch limit or its early-stopping rule stopped it (the ranking puts these first). */
  finished: boolean;
  /** Health flags (`flat-output`, `blew-up`, `no-lift`); empty when healthy. A flagged trial ranks after every healthy one. */
  flags: TrialFlag[];
  /** Why an unranked trial is not ranked: divergence, error, or still training / waiting. */
  reason?: string;
  rung: number;
  bracket: number;
  epochs: number;
  score: number | null;
  /** k-fold studies: the standard error of the score (a fold mean), s / sqrt(k). */
  scoreStandardError?: number;
  configuration: TrialConfiguration;
  seed: number;
  /** Validation metrics of the last epoch trained (with early stopping: of the best epoch). */
  metrics: Record<string, number>;
  /** With early stopping: the epoch the score and metrics are from, and where the rule stopped the trial. */
  bestEpoch?: number;
  stoppedAtEpoch?: number;
  /** Ranked classification trials: per-class figures and the confusion matrix on the validation split. */
  classes?: ClassReport;
  /** Trainable weights and biases of its network (absent in files from before weight counts). */
  weights?: number;
}

/** The result of `run`, `resume` and `ranking` as plain data. */
export interface StudyResultJson {
  study: string;
  state: StudyDocument['state'];
  file: string;
  goal: Goal;
  counts: Partial<Record<TrialStatus, number>>;
  totals: StudyDocument['totals'] | null;
  /** Work planned against work done, time training against waiting, epochs by rung (null before the study ran). */
  budget: BudgetSummary | null;
  /** Trials in the study, and how many `trials` holds (fewer only with `--top`). */
  trialCount: number;
  shown: number;
  /** Ranked trials best first, then the unranked ones by id. */
  trials: TrialEntry[];
  caution: string;
  /** The constant and linear baselines' validation figures (absent for files from before baselines). */
  baselines?: StudyDocument['baselines'];
  /** With a second goal (`footprint.against`): the configurations no other beats on both, smallest or fastest first. */
  front?: FrontJson;
  /**
   * The repeated configurations' mean ± standard error (over the search run and the further seeds, or
   * over the folds), the paired difference to the winner, which cannot be told apart from it, and the
   * one-standard-error pick; null when no repeat runs were recorded.
   */
  repeats: RepeatSummary | null;
}

function unrankedReason(trial: TrialRecord): string {
  if (trial.divergence) return `diverged at epoch ${trial.divergence.epoch}: ${trial.divergence.reason}`;
  if (trial.error) return trial.error;
  if (trial.status === 'training') return 'did not finish its rung (the study stopped while it ran)';
  return `no score recorded (${trial.status})`;
}

function entry(doc: StudyDocument, trial: TrialRecord, rank: number | null): TrialEntry {
  const result: TrialEntry = {
    rank,
    trial: trial.id,
    status: trial.status,
    ranked: rank !== null,
    finished: isFinished(trial),
    flags: trial.flags ?? [],
    rung: trial.rung,
    bracket: trial.bracket,
    epochs: trial.epochsTrained,
    score: trial.score,
    configuration: trial.configuration,
    seed: trial.seed,
    metrics: { ...((trial.bestEpoch !== undefined ? trial.curve.find((p) => p.epoch === trial.bestEpoch) : trial.curve.at(-1))?.metrics ?? {}) } as Record<string, number>,
  };
  if (trial.scoreStandardError !== undefined) result.scoreStandardError = trial.scoreStandardError;
  if (trial.weightCount !== undefined) result.weights = trial.weightCount;
  if (trial.bestEpoch !== undefined) result.bestEpoch = trial.bestEpoch;
  if (trial.stoppedAtEpoch !== undefined) result.stoppedAtEpoch = trial.stoppedAtEpoch;
  if (rank === null) result.reason = unrankedReason(trial);
  const classes = rank === null ? undefined : trialClassReport(doc, trial);
  if (classes) result.classes = classes;
  return result;
}

/**
 * Every trial of the study, ranked ones first in ranking order; `top` keeps only the first entries.
 * @example
 * const doc = await StudyStore.read('runs/demo');
 * const json = studyResultJson(doc, rankTrials(doc.trials, doc.goal), studyFilePath('runs/demo'));
 */
export function studyResultJson(doc: StudyDocument, ranking: readonly RankedTrial[], file: string, top?: number): StudyResultJson {
  const rankedIds = new Set(ranking.map(({ trial }) => trial.id));
  const entries = [
    ...ranking.map(({ rank, trial }) => entry(doc, trial, rank)),
    ...doc.trials.filter((t) => !rankedIds.has(t.id)).sort((a, b) => a.id - b.id).map((t) => entry(doc, t, null)),
  ];
  const trials = top === undefined ? entries : entries.slice(0, top);
  const counts: Partial<Record<TrialStatus, number>> = {};
  for (const trial of doc.trials) counts[trial.status] = (counts[trial.status] ?? 0) + 1;
  return {
    study: doc.name,
    state: doc.state,
    file,
    goal: doc.goal,
    counts,
    totals: doc.totals ?? null,
    budget: doc.totals ? budgetSummary(doc) : null,
    trialCount: doc.trials.length,
    shown: trials.length,
    trials,
    caution: OPTIMISM_CAUTION,
    ...(doc.baselines ? { baselines: doc.baselines } : {}),
    ...frontField(doc, ranking),
    repeats: studyRepeats(doc) ?? null,
  };
}

function frontField(doc: StudyDocument, ranking: readonly RankedTrial[]): { front?: FrontJson } {
  const front = studyFront(doc, ranking);
  return front === undefined ? {} : { front: frontJson(doc.definition.footprint!.against!, front) };
}

/** The result as text: the top of the ranking as a table, then the summary and the caution. */
export function studyResultText(doc: StudyDocument, ranking: readonly RankedTrial[], file: string, top = DEFAULT_TABLE_ROWS): string {
  const shown = ranking.slice(0, top);
  const more = ranking.length - shown.length;
  const table = shown.length > 0 ? rankingTable(shown, doc.goal) : 'no trial is ranked yet (none finished a rung)';
  const tail = more > 0 ? `\n(${more} more ranked; --top ${ranking.length} shows all, --json gives every trial)` : '';
  const front = studyFront(doc, ranking);
  const frontPart = front === undefined ? '' : `\n\n${frontText(doc.definition.footprint!.against!, front, doc.goal)}`;
  const repeats = shown.length > 0 ? `\n\n${repeatText(doc)}` : '';
  return `${table}${tail}${repeats}${frontPart}\n\n${studySummary(doc, file)}`;
}
