import { formatNumber } from '../report/format.js';
import { healthSummary } from '../report/health-summary.js';
import { baselineScore } from '../core/baselines.js';
import type { StudyDocument } from '../store/types.js';
import { computeSpent, leaderSteps, plannedEpochs, rungShares } from './analysis/budget.js';
import { rungAgreements, rungStandings } from './analysis/rung-agreement.js';
import type { StudyImportance } from './analysis/study-importance.js';
import { agreementText } from './charts/rung-agreement.js';
import { isHalving } from './labels.js';
import { QUESTIONS } from './report.js';
import { bestTrial } from './winner.js';
import { repeatSentence } from '../report/repeat-text.js';

/** The answers of one study to the report's questions, as short texts (for `compare` and the report's findings). */
export interface StudyDigest {
  name: string;
  sampler: string;
  /** Whether the sampler stops configurations at rungs. */
  halving: boolean;
  winner: string;
  spent: string;
  winnerFound: string;
  rungShares: string;
  rungAgreement: string;
  winnerAtRungs: string;
  importance: string;
  unscored: string;
  /** The constant predictor's goal score on the validation rows, or '-' for a file without baselines. */
  baseline: string;
  /** The flagged trials and where in the space they were, or 'none'. */
  health: string;
  /** The winner's mean ± standard error over its repeat runs (or folds), the runners-up it cannot be told from, and the one-standard-error pick; 'no repeat runs' without them. */
  noise: string;
}

const percent = (share: number): string => `${Math.round(share * 100)}%`;

/** What the study's charts show, in words. */
export function studyDigest(study: StudyDocument, importance: StudyImportance | undefined): StudyDigest {
  const winner = bestTrial(study);
  const spent = computeSpent(study);
  const planned = plannedEpochs(study);
  const steps = leaderSteps(study);
  const crowned = steps.find((s, i) => s.leaderId === winner?.id && steps.slice(i).every((later) => later.leaderId === winner?.id));
  const halving = isHalving(study.definition.sampler.kind);
  const shares = halving ? rungShares(study) : [];
  const byRung = new Map<number, number>();
  for (const share of shares) byRung.set(share.rung, (byRung.get(share.rung) ?? 0) + share.share);
  const agreements = halving ? rungAgreements(study) : [];
  const standings = winner && halving ? rungStandings(study).filter((s) => s.trialId === winner.id) : [];
  const constant = baselineScore(study.baselines?.constant, study.goal.metric);
  const linear = baselineScore(study.baselines?.linear, study.goal.metric);
  const unscored = study.trials.filter((t) => !(typeof t.score === 'number' && Number.isFinite(t.score))).length;
  return {
    name: study.name,
    sampler: study.definition.sampler.kind,
    halving,
    winner: winner ? `trial ${winner.id}: ${study.goal.metric} ${formatNumber(winner.score)} after ${winner.epochsTrained} epochs` : 'none yet',
    spent: `${spent.epochs} epochs${planned ? ` of ${planned} planned (${percent(spent.epochs / planned)})` : ''}, ${formatNumber(spent.workerSeconds)} thread-seconds`,
    winnerFound: crowned && spent.epochs > 0 ? `after ${crowned.epochsSpent} epochs (${percent(crowned.epochsSpent / spent.epochs)} of those spent)` : '-',
    rungShares: halving ? [...byRung].map(([rung, share]) => `rung ${rung} ${percent(share)}`).join(', ') : 'one rung (no halving)',
    rungAgreement: halving && agreements.length > 0 ? agreements.map((a) => `bracket ${a.bracket}, rung ${a.fromRung} to ${a.fromRung + 1}: ${agreementText(a.rho, a.configurations)}`).join('; ') : '-',
    winnerAtRungs: standings.length > 0 ? standings.map((s) => `${s.place} of ${s.of} at rung ${s.rung}`).join(', ') : '-',
    importance: importance ? importance.parameters.slice(0, 3).map((p) => `${p.key} ${percent(p.share)}`).join(', ') : 'too few configurations',
    unscored: `${unscored} of ${study.trials.length}`,
    baseline: constant === undefined ? '-' : `constant ${formatNumber(constant)}${linear === undefined ? '' : `, linear ${formatNumber(linear)}`} (${study.goal.metric})`,
    health: healthSummary(study.trials)?.replace(/^health: /, '') ?? 'none flagged',
    noise: repeatSentence(study),
  };
}

/** The digest as sentences under the report's question headings. */
export function digestFindings(digest: StudyDigest): Map<string, string[]> {
  const [budget, rungs, importance] = QUESTIONS.map((q) => q.heading);
  const findings = new Map<string, string[]>();
  findings.set(budget!, [
    `Spent ${digest.spent}. The winner took the lead ${digest.winnerFound}.`,
    ...(digest.halving ? [`Compute by rung: ${digest.rungShares}.`] : []),
    ...(digest.baseline !== '-' ? [`Baseline on the validation rows: ${digest.baseline}; the winner: ${digest.winner}.`] : []),
    ...(digest.health !== 'none flagged' ? [`Health flags: ${digest.health}.`] : []),
    ...(digest.noise !== 'no repeat runs' ? [`The winner's noise: ${digest.noise}.`] : []),
  ]);
  if (digest.rungAgreement !== '-') {
    findings.set(rungs!, [
      "A halving sampler gives every configuration a short look (rung 0) and lets only the best go on to longer ones. Agreement says whether a shorter look put the configurations that went on in the order the longer look found (1: the same order; 0: no relation; Spearman's rank correlation); the table under the chart gives it for every pair of rungs.",
      `The winner stood ${digest.winnerAtRungs}.`,
    ]);
  }
  findings.set(importance!, [`Largest shares of the score's variance: ${digest.importance}.`]);
  return findings;
}
