import { scheduleInWords } from '../core/schedule.js';
import { regularisersInWords } from '../core/regularisers.js';
import { formatNumber } from '../report/format.js';
import type { StudyDocument } from '../store/types.js';
import type { TrialRecord } from '../core/trial.js';
import { OPTIMISM_CAUTION } from '../report/caution.js';
import { repeatRows } from '../report/repeat-text.js';
import { goalLabel } from './labels.js';
import { escapeHtml } from './html.js';
import { WINNER_SYMBOL } from './palette.js';
import { CLASS_TABLE_STYLE, classSection } from './class-table.js';
import { ANSWER_TABLE_STYLE, rungAgreementTable, rungShareTable } from './answer-tables.js';
import { topConfigurations } from './top-table.js';
import { bestTrial } from './winner.js';

export { bestTrial } from './winner.js';

/** A chart drawn to SVG, ready to inline. */
export interface RenderedChart {
  name: string;
  title: string;
  svg: string;
}


/**
 * Several SVGs in one page share one id namespace: vega names clip paths and gradients the same
 * way in every chart, so each chart's ids get its own prefix before inlining.
 */
export function scopeSvgIds(svg: string, prefix: string): string {
  return svg
    .replace(/\bid="([^"]+)"/g, (_, id: string) => `id="${prefix}-${id}"`)
    .replace(/url\(#([^)]+)\)/g, (_, id: string) => `url(#${prefix}-${id})`)
    .replace(/(xlink:)?href="#([^"]+)"/g, (_, xlink: string | undefined, id: string) => `${xlink ?? ''}href="#${prefix}-${id}"`);
}

function statusCounts(study: StudyDocument): string {
  const counts = new Map<string, number>();
  for (const trial of study.trials) counts.set(trial.status, (counts.get(trial.status) ?? 0) + 1);
  if (counts.size === 0) return 'none yet';
  return [...counts].map(([status, n]) => `${status} ${n}`).join(', ');
}

function samplerText(study: StudyDocument): string {
  const sampler = study.definition.sampler;
  if (!('eta' in sampler)) return `${sampler.kind} (seed ${sampler.seed})`;
  return `${sampler.kind} (eta ${sampler.eta}, first rung ${sampler.minEpochs} epoch${sampler.minEpochs === 1 ? '' : 's'}, seed ${sampler.seed})`;
}

function configurationText(trial: TrialRecord): string {
  const p = trial.configuration;
  return [
    `${p.depth} hidden layer${p.depth === 1 ? '' : 's'} of ${p.width} units`,
    `${p.activation} activation`,
    `${p.optimizer} with learning rate ${formatNumber(p.learningRate)}`,
    `batch size ${p.batchSize}`,
    `L2 penalty ${formatNumber(p.l2)}`,
    `dropout ${formatNumber(p.dropout)}`,
    ...(p.schedule ? [`learning-rate schedule ${scheduleInWords(p)}`] : []),
    ...(regularisersInWords(p) ? [regularisersInWords(p)!] : []),
  ].join(', ');
}

function summaryRows(study: StudyDocument): [string, string][] {
  const best = bestTrial(study);
  const rows: [string, string][] = [
    ['study', study.name],
    ['state', study.state],
    ['data', `${study.data.file}: ${study.data.rows} rows (training ${study.data.trainRows}, validation ${study.data.validationRows}, held-out test ${study.data.testRows})`],
    ['sampler', samplerText(study)],
    ['goal', goalLabel(study.goal)],
    ['trials by status', statusCounts(study)],
  ];
  if (best) {
    rows.push(['winner', `trial ${best.id}: ${Number(best.score!.toPrecision(4))} after ${best.epochsTrained} epoch${best.epochsTrained === 1 ? '' : 's'}`]);
    rows.push(['its configuration', configurationText(best)]);
  } else {
    rows.push(['winner', 'no trial has a score yet']);
  }
  return rows;
}

const STYLE = `
body { font-family: Helvetica, Arial, sans-serif; color: #1d2126; margin: 24px auto; max-width: 1240px; padding: 0 16px; }
h1 { font-size: 22px; margin: 0 0 12px; }
h2 { font-size: 18px; margin: 34px 0 6px; border-top: 1px solid #d0d4d9; padding-top: 14px; }
p { font-size: 14px; line-height: 1.45; max-width: 900px; }
table { border-collapse: collapse; font-size: 13px; }
th, td { text-align: left; vertical-align: top; padding: 4px 12px 4px 0; border-bottom: 1px solid #e3e6ea; }
th { font-weight: 600; }
th[scope="row"] { white-space: nowrap; }
.scroll { overflow-x: auto; max-width: 100%; }
table.top th, table.top td { padding-right: 8px; }
table.top td:last-child { min-width: 150px; }
table.top tr.winner td { font-weight: 600; }
.caution { background: #fff6e0; border-left: 4px solid #e0a526; padding: 8px 12px; font-size: 14px; }
section.chart { margin-top: 18px; }
figure { margin: 0; overflow-x: auto; max-width: 100%; }
figure svg { max-width: 100%; height: auto; }
`;

/** A table of text cells, with its header; a row whose first cell starts with the winner's star is marked. */
export function htmlTable(header: readonly string[], rows: readonly Record<string, string>[], className: string): string {
  const head = `<tr>${header.map((h) => `<th scope="col">${escapeHtml(h)}</th>`).join('')}</tr>`;
  const body = rows
    .map((row) => `<tr${Object.values(row)[0]?.startsWith(WINNER_SYMBOL) ? ' class="winner"' : ''}>${header.map((h) => `<td>${escapeHtml(row[h] ?? '')}</td>`).join('')}</tr>`)
    .join('\n');
  return `<div class="scroll"><table class="${className}">\n${head}\n${body}\n</table></div>`;
}

/** One chart inlined as a section, its ids scoped so several SVGs share the page. */
export function chartSection(chart: RenderedChart): string {
  // The chart's own title is drawn inside the SVG, so the section only names it for screen readers.
  return `<section class="chart" id="chart-${escapeHtml(chart.name)}" aria-label="${escapeHtml(chart.title)}">\n<figure>${scopeSvgIds(chart.svg, chart.name)}</figure>\n</section>`;
}

/** The page around a body: nothing loaded (the content security policy forbids it), so it opens the same offline. */
export function htmlPage(title: string, body: string, refreshSeconds?: number): string {
  const refresh = refreshSeconds ? `\n<meta http-equiv="refresh" content="${refreshSeconds}">` : '';
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">${refresh}
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${escapeHtml(title)}</title>
<style>${STYLE}${CLASS_TABLE_STYLE}${ANSWER_TABLE_STYLE}</style>
</head>
<body>
${body}
</body>
</html>
`;
}

/**
 * The report's questions after the ranking, in order, each with the charts that may answer it (a
 * report has one chart per question; a comparison also the shared `rung-budget`)
 * and the tables under them.
 */
export const QUESTIONS: readonly { heading: string; charts: readonly string[]; tables?: (study: StudyDocument) => string }[] = [
  { heading: 'Was the budget well spent?', charts: ['budget', 'rung-budget'], tables: rungShareTable },
  { heading: 'Did the early rungs judge well?', charts: ['rung-agreement'], tables: rungAgreementTable },
  { heading: 'Which hyperparameters matter, and which values are good?', charts: ['hyperparameters'] },
  { heading: 'What did training look like?', charts: ['learning-curves'] },
  { heading: 'What does a smaller or faster network cost in score?', charts: ['front'] },
];

export interface ReportOptions {
  /** Sentences under each question's heading, by heading. */
  findings?: ReadonlyMap<string, readonly string[]>;
  /** Set while `plot --watch` runs: the page reloads itself this often. */
  refreshSeconds?: number;
}

/** The repeat runs' table under the top configurations, or nothing for a study without them. */
function repeatSection(study: StudyDocument): string {
  const table = repeatRows(study);
  if (!table) return '';
  const how =
    study.repeats !== undefined
      ? `The top configurations trained again with ${study.repeats.seeds} further seed${study.repeats.seeds === 1 ? '' : 's'} on the same split: mean ± standard error over the search run and those runs, and the difference to the winner with its 95% paired t interval (an interval holding 0: cannot be told apart).`
      : 'The top configurations\' fold scores: mean ± standard error over the folds.';
  return `<p>${escapeHtml(how)} The one-standard-error pick is the configuration with the fewest weights whose mean is within one standard error of the best mean (Hastie, Tibshirani and Friedman 2009, 7.10); <code>rungwise export --one-se-pick</code> exports it.</p>\n${htmlTable(table.header, table.rows, 'repeats')}`;
}

/**
 * One self-contained HTML page: the summary, the caution, the top configurations, then each
 * question with its findings and charts. It loads nothing, so it opens the same offline.
 */
export function buildReport(study: StudyDocument, charts: readonly RenderedChart[], options: ReportOptions = {}): string {
  const summary = summaryRows(study)
    .map(([key, value]) => `<tr><th scope="row">${escapeHtml(key)}</th><td>${escapeHtml(value)}</td></tr>`)
    .join('\n');
  const top = topConfigurations(study);
  const byName = new Map(charts.map((chart) => [chart.name, chart]));
  const questions = QUESTIONS.map(({ heading, charts: names, tables }) => {
    const drawn = names.flatMap((name) => (byName.has(name) ? [chartSection(byName.get(name)!)] : []));
    const said = (options.findings?.get(heading) ?? []).map((text) => `<p>${escapeHtml(text)}</p>`);
    const table = tables?.(study) ?? '';
    if (drawn.length === 0 && said.length === 0) return '';
    return `<h2>${escapeHtml(heading)}</h2>\n${[...said, ...drawn, ...(table ? [table] : [])].join('\n')}`;
  }).filter((section) => section !== '');
  const body = `<h1>Study ${escapeHtml(study.name)}</h1>
<p class="caution">${escapeHtml(OPTIMISM_CAUTION)}</p>
<table>
${summary}
</table>
<h2>Which configuration should I ship, and how sure is that?</h2>
${top.rows.length > 0 ? `<p>The top of the ranking (more epochs rank first, then the score). ${WINNER_SYMBOL} marks the winner here and in every chart.</p>\n${htmlTable(top.header, top.rows, 'top')}` : ''}
${repeatSection(study)}
${classSection(study)}
${charts.length > 0 ? questions.join('\n') : '<p>No trial has a score yet, so there is nothing to plot.</p>'}`;
  return htmlPage(`${study.name}: rungwise study report`, body, options.refreshSeconds);
}
