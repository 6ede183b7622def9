import type { StudyDocument } from '../store/types.js';
import { studyImportance, type StudyImportance } from './analysis/study-importance.js';
import type { Chart } from './charts/chart.js';
import { budgetChart } from './charts/budget.js';
import { learningCurvesChart } from './charts/curves.js';
import { rungAgreementChart } from './charts/rung-agreement.js';
import { rungBudgetChart } from './charts/rung-budget.js';
import { studyDigest, type StudyDigest } from './digest.js';
import { importanceTable } from './answer-tables.js';
import { chartSection, htmlPage, htmlTable, QUESTIONS, type RenderedChart } from './report.js';
import { escapeHtml } from './html.js';
import { OPTIMISM_CAUTION } from '../report/caution.js';
import { studyColour } from './palette.js';

/** The rows of the side-by-side table: what each row says, and where in a digest it is. */
const DIGEST_ROWS: readonly [string, Exclude<keyof StudyDigest, 'halving'>][] = [
  ['sampler', 'sampler'],
  ['winner', 'winner'],
  ['compute spent', 'spent'],
  ['winner took the lead', 'winnerFound'],
  ['compute by rung', 'rungShares'],
  ['rung agreement', 'rungAgreement'],
  ['winner at each rung', 'winnerAtRungs'],
  ['largest importance', 'importance'],
  ['trials without a score', 'unscored'],
  ['baseline', 'baseline'],
  ['health flags', 'health'],
  ["winner's noise", 'noise'],
];

/** The digests as a table: one row per answer, one column per study. */
export function comparisonTable(digests: readonly StudyDigest[]): { header: string[]; rows: Record<string, string>[] } {
  const header = ['', ...digests.map((d) => d.name)];
  const rows = DIGEST_ROWS.map(([title, key]) => Object.fromEntries([['', title], ...digests.map((d) => [d.name, d[key]])]) as Record<string, string>);
  return { header, rows };
}

/** Studies of a comparison with names that tell them apart (a repeated name gets its position). */
export function distinctNames(studies: readonly StudyDocument[]): StudyDocument[] {
  const counts = new Map<string, number>();
  for (const s of studies) counts.set(s.name, (counts.get(s.name) ?? 0) + 1);
  return studies.map((s, i) => ((counts.get(s.name) ?? 0) > 1 ? { ...s, name: `${s.name} (${i + 1})` } : s));
}

/**
 * Charts of a comparison: shared ones (compute, rung shares) and each study's own (rungs, curves),
 * with each study's importance (drawn as a table beside them) and digest.
 */
export function comparisonCharts(studies: readonly StudyDocument[]): { charts: Chart[]; digests: StudyDigest[]; importances: (StudyImportance | undefined)[] } {
  const importances = studies.map((s) => studyImportance(s));
  const own = (make: (study: StudyDocument, i: number) => Chart | null, prefix: string): Chart[] =>
    studies.flatMap((study, i) => {
      const chart = make(study, i);
      return chart ? [{ ...chart, name: `${prefix}-${i + 1}`, title: `${chart.title} (${study.name})` }] : [];
    });
  const charts = [
    budgetChart(studies),
    rungBudgetChart(studies),
    ...own((study) => rungAgreementChart(study), 'rung-agreement'),
    ...own((study, i) => learningCurvesChart(study, {}, `learning-curves-${i + 1}`), 'learning-curves'),
  ].filter((c): c is Chart => c !== null);
  return { charts, digests: studies.map((s, i) => studyDigest(s, importances[i])), importances };
}

/** Which question a comparison chart answers, by its name's stem. */
function questionOf(name: string): string | undefined {
  const stem = name.replace(/-\d+$/, '');
  return QUESTIONS.find((q) => q.charts.includes(stem))?.heading;
}

/** The comparison as one self-contained page: the side-by-side table, then each question's charts (and the importance table). */
export function buildComparisonReport(studies: readonly StudyDocument[], digests: readonly StudyDigest[], charts: readonly RenderedChart[], importances: readonly (StudyImportance | undefined)[] = []): string {
  const table = comparisonTable(digests);
  const key = studies.map((s, i) => `<span style="color:${studyColour(i)}">&#9632;</span> ${escapeHtml(s.name)}`).join(' &nbsp; ');
  const importance = importanceTable(studies.map((s) => s.name), importances);
  const sections = QUESTIONS.map(({ heading, charts: names }) => {
    const drawn = charts.filter((c) => questionOf(c.name) === heading).map(chartSection);
    if (names.includes('hyperparameters') && importance) drawn.push(importance);
    return drawn.length > 0 ? `<h2>${escapeHtml(heading)}</h2>\n${drawn.join('\n')}` : '';
  }).filter((s) => s !== '');
  const body = `<h1>Comparison of ${studies.map((s) => escapeHtml(s.name)).join(', ')}</h1>
<p class="caution">${escapeHtml(OPTIMISM_CAUTION)}</p>
<p>Colours: ${key}. ★ marks each study's winner (rank 1 of its own ranking).</p>
<h2>The questions side by side</h2>
${htmlTable(table.header, table.rows, 'side-by-side')}
${sections.join('\n')}`;
  return htmlPage(`comparison of ${studies.map((s) => s.name).join(', ')}: rungwise`, body);
}
