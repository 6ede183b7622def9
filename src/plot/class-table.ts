/**
 * The report's per-class section: for the top trials of the ranking, precision, recall, F1 and
 * average precision per class and the validation confusion matrix, as HTML tables (no chart: a few
 * numbers read best as numbers). Cells of the matrix are shaded by the share of their true class's
 * rows on a grey-to-ink lightness ramp (order reads without hue; blues are the rungs').
 */
import { classReport, type ClassReport } from '../report/class-report.js';
import { formatNumber } from '../report/format.js';
import type { StudyDocument } from '../store/types.js';
import { rankTrials } from '../core/ranking.js';
import { escapeHtml } from './html.js';
import { shareShade, WINNER_SYMBOL } from './palette.js';

/** Trials of the ranking whose per-class figures the report shows. */
export const CLASS_REPORT_TRIALS = 3;

export const CLASS_TABLE_STYLE = `
table.confusion { margin-top: 12px; }
table.confusion td.count { text-align: right; min-width: 54px; padding: 4px 8px; }
table.confusion th { padding-right: 8px; }
table.classes td.number { text-align: right; }
details { margin-top: 10px; font-size: 14px; }
.classes-block { margin-top: 10px; }
`;

function perClassTable(report: ClassReport): string {
  const rows = report.perClass
    .map(
      (row) =>
        `<tr><th scope="row">${escapeHtml(row.label)}</th>${[row.rows, row.precision, row.recall, row.f1, row.averagePrecision]
          .map((value) => `<td class="number">${escapeHtml(formatNumber(value))}</td>`)
          .join('')}</tr>`,
    )
    .join('\n');
  const head = ['class', 'validation rows', 'precision', 'recall', 'F1', 'PR AUC'].map((h) => `<th scope="col">${h}</th>`).join('');
  return `<div class="scroll"><table class="classes">\n<tr>${head}</tr>\n${rows}\n</table></div>`;
}

function confusionTable(report: ClassReport): string {
  const head = `<tr><th scope="col">true \\ predicted</th>${report.labels.map((label) => `<th scope="col">${escapeHtml(label)}</th>`).join('')}</tr>`;
  const rows = report.confusion
    .map((row, t) => {
      const total = row.reduce((sum, count) => sum + count, 0);
      const cells = row.map((count) => {
        const share = total === 0 ? 0 : count / total;
        const { background, text } = shareShade(share);
        const percent = total === 0 ? '' : ` (${Math.round(share * 100)}%)`;
        return `<td class="count" style="background:${background};color:${text}">${count}${percent}</td>`;
      });
      return `<tr><th scope="row">${escapeHtml(report.labels[t]!)}</th>${cells.join('')}</tr>`;
    })
    .join('\n');
  return `<div class="scroll"><table class="confusion">\n${head}\n${rows}\n</table></div>`;
}

function block(report: ClassReport, rank: number, trialId: number): string {
  const at = report.threshold !== undefined ? `, the second class predicted from probability ${formatNumber(report.threshold)}` : '';
  const caption = `${rank === 1 ? `${WINNER_SYMBOL} ` : ''}Rank ${rank} (trial ${trialId}), epoch ${report.epoch}${at}: precision-recall AUC ${formatNumber(report.precisionRecallAuc)}.`;
  return `<div class="classes-block"><p>${escapeHtml(caption)}</p>\n${perClassTable(report)}\n${confusionTable(report)}</div>`;
}

/**
 * The section's HTML, or '' when the study is not a classification or no ranked trial has figures
 * (studies from before they were kept). The winner's block is open, the next ones folded.
 */
export function classSection(study: StudyDocument): string {
  const classes = study.recipe.classes;
  if (!classes) return '';
  const shown = rankTrials(study.trials, study.goal)
    .slice(0, CLASS_REPORT_TRIALS)
    .flatMap(({ rank, trial }) => (trial.classFigures ? [{ rank, trial, report: classReport(study.recipe.task, classes, trial.classFigures) }] : []));
  if (shown.length === 0) return '';
  const blocks = shown.map(({ rank, trial, report }) => (rank === 1 ? block(report, rank, trial.id) : `<details><summary>Rank ${rank} (trial ${trial.id})</summary>\n${block(report, rank, trial.id)}</details>`));
  return `<h2>How does it do on each class?</h2>
<p>Validation rows by class for the top of the ranking. A rare class can be missed while accuracy looks good; recall says how many of its rows were found, precision how many of the rows called that class were right. Rows of the matrix are the true classes, shaded by their share.</p>
${blocks.join('\n')}`;
}
