/**
 * What `rungwise compare` prints: each study's answers to the report's questions as plain data (for
 * `--json`), a narrow terminal table (one row per answer, one column per study, each cell a few
 * words) and the answers in full on request (`--details`).
 */
import { formatNumber, textTable } from '../report/format.js';
import type { StudyDocument } from '../store/types.js';
import type { Goal, TrialConfiguration } from '../core/configuration.js';
import { computeSpent, leaderSteps, plannedEpochs, rungShares } from './analysis/budget.js';
import { rungAgreements, rungStandings } from './analysis/rung-agreement.js';
import type { StudyImportance } from './analysis/study-importance.js';
import type { StudyDigest } from './digest.js';
import { isHalving } from './labels.js';
import { bestTrial } from './winner.js';

/** One study's answers as numbers and lists; `answers` holds the same in words, in full. */
export interface ComparedStudy {
  name: string;
  dir: string;
  sampler: string;
  state: StudyDocument['state'];
  trials: number;
  unscoredTrials: number;
  winner: { trial: number; score: number | null; epochs: number; bestEpoch?: number; configuration: TrialConfiguration } | null;
  compute: { epochs: number; plannedEpochs: number | null; workerSeconds: number };
  /** Epochs spent when the winner took the lead for good; null when it has not (or no compute was spent). */
  winnerLeadsFromEpoch: number | null;
  rungShares: { bracket: number; rung: number; epochs: number; share: number }[];
  /** Spearman's rho between consecutive rungs (null with fewer than 3 configurations scored at both). */
  rungAgreements: { bracket: number; fromRung: number; configurations: number; rho: number | null }[];
  winnerAtRungs: { bracket: number; rung: number; place: number; of: number }[];
  importance: { parameter: string; share: number }[] | null;
  /** The answers in words, as the report and `--details` give them. */
  answers: Omit<StudyDigest, 'name' | 'halving'>;
}

function winnerOf(study: StudyDocument): ComparedStudy['winner'] {
  const winner = bestTrial(study);
  if (!winner) return null;
  return {
    trial: winner.id,
    score: winner.score,
    epochs: winner.epochsTrained,
    ...(winner.bestEpoch !== undefined ? { bestEpoch: winner.bestEpoch } : {}),
    configuration: winner.configuration,
  };
}

/** A study's answers as data, from its document, its digest and its importance. */
export function comparedStudy(study: StudyDocument, dir: string, digest: StudyDigest, importance: StudyImportance | undefined): ComparedStudy {
  const winner = winnerOf(study);
  const spent = computeSpent(study);
  const steps = leaderSteps(study);
  const crowned = steps.find((s, i) => s.leaderId === winner?.trial && steps.slice(i).every((later) => later.leaderId === winner?.trial));
  const halving = isHalving(study.definition.sampler.kind);
  const { name: _name, halving: _halving, ...answers } = digest;
  return {
    name: study.name,
    dir,
    sampler: study.definition.sampler.kind,
    state: study.state,
    trials: study.trials.length,
    unscoredTrials: study.trials.filter((t) => !(typeof t.score === 'number' && Number.isFinite(t.score))).length,
    winner,
    compute: { epochs: spent.epochs, plannedEpochs: plannedEpochs(study) ?? null, workerSeconds: spent.workerSeconds },
    winnerLeadsFromEpoch: crowned && spent.epochs > 0 ? crowned.epochsSpent : null,
    rungShares: halving ? rungShares(study).map(({ bracket, rung, epochs, share }) => ({ bracket, rung, epochs, share })) : [],
    rungAgreements: halving
      ? rungAgreements(study).map(({ bracket, fromRung, configurations, rho }) => ({ bracket, fromRung, configurations, rho: configurations >= 3 && Number.isFinite(rho) ? rho : null }))
      : [],
    winnerAtRungs: winner && halving ? rungStandings(study).filter((s) => s.trialId === winner.trial).map(({ bracket, rung, place, of }) => ({ bracket, rung, place, of })) : [],
    importance: importance ? importance.parameters.map((p) => ({ parameter: p.key, share: p.share })) : null,
    answers,
  };
}

const percent = (share: number): string => `${Math.round(share * 100)}%`;

function median(values: readonly number[]): number | undefined {
  if (values.length === 0) return undefined;
  const sorted = [...values].sort((a, b) => a - b);
  const middle = Math.floor(sorted.length / 2);
  return sorted.length % 2 === 1 ? sorted[middle]! : (sorted[middle - 1]! + sorted[middle]!) / 2;
}

/** The rows of the narrow table: the question in a few words, the answer in a few words, and the full answer's key. */
const ROWS: readonly [title: (goal: Goal) => string, cell: (s: ComparedStudy) => string, full: keyof ComparedStudy['answers']][] = [
  [() => 'sampler', (s) => s.sampler, 'sampler'],
  [(goal) => `winner (${goal.metric})`, (s) => (s.winner ? `trial ${s.winner.trial}: ${formatNumber(s.winner.score)}` : 'none yet'), 'winner'],
  [() => 'compute spent', (s) => `${s.compute.epochs} epochs${s.compute.plannedEpochs ? ` (${percent(s.compute.epochs / s.compute.plannedEpochs)})` : ''}`, 'spent'],
  [() => 'winner led from', (s) => (s.winnerLeadsFromEpoch === null ? '-' : `${percent(s.winnerLeadsFromEpoch / s.compute.epochs)} of compute`), 'winnerFound'],
  [() => 'compute at rung 0', (s) => (s.rungShares.length === 0 ? 'no halving' : percent(s.rungShares.filter((r) => r.rung === 0).reduce((sum, r) => sum + r.share, 0))), 'rungShares'],
  [
    () => 'rung agreement',
    (s) => {
      const rho = median(s.rungAgreements.flatMap((a) => (a.rho === null ? [] : [a.rho])));
      return rho === undefined ? '-' : `median rho ${rho.toFixed(2)}`;
    },
    'rungAgreement',
  ],
  [() => 'winner at rung 0', (s) => (s.winnerAtRungs[0] ? `${s.winnerAtRungs[0].place} of ${s.winnerAtRungs[0].of}` : '-'), 'winnerAtRungs'],
  [() => 'largest importance', (s) => (s.importance?.[0] ? `${s.importance[0].parameter} ${percent(s.importance[0].share)}` : '-'), 'importance'],
  [() => 'trials without a score', (s) => `${s.unscoredTrials} of ${s.trials}`, 'unscored'],
];

/** The narrow table: one row per answer, one column per study. */
export function compareTableText(studies: readonly ComparedStudy[], goal: Goal): string {
  const header = ['', ...studies.map((s) => s.name)];
  return textTable(header, ROWS.map(([title, cell]) => [title(goal), ...studies.map(cell)]));
}

/** Every answer in full, question by question, one line per study. */
export function compareDetailsText(studies: readonly ComparedStudy[], goal: Goal): string {
  return ROWS.map(([title, , full]) => [title(goal), ...studies.map((s) => `  ${s.name}: ${s.answers[full]}`)].join('\n')).join('\n\n');
}
