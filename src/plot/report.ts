import { formatNumber } from '../report/format.js';
import type { StudyDocument, TrialRecord } from '../store/types.js';
import { OPTIMISM_CAUTION } from '../report/caution.js';
import { rankTrials } from '../study/objective.js';
import { objectiveLabel } from './labels.js';


/** A chart drawn to SVG, ready to inline. */
export interface RenderedChart {
  name: string;
  title: string;
  svg: string;
}

function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);
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

/** The trial to recommend: the leader of the study's one ranking. */
export function bestTrial(study: StudyDocument): TrialRecord | undefined {
  return rankTrials(study.trials, study.objective)[0]?.trial;
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
  const p = trial.params;
  return [
    `${p.depth} hidden layer${p.depth === 1 ? '' : 's'} of ${p.width} units`,
    `${p.activation} activation`,
    `${p.optimizer} with learning rate ${formatNumber(p.learningRate)}`,
    `batch size ${p.batchSize}`,
    `L2 penalty ${formatNumber(p.l2)}`,
    `dropout ${formatNumber(p.dropout)}`,
  ].join(', ');
}

function summaryRows(study: StudyDocument): [string, string][] {
  const best = bestTrial(study);
  const rows: [string, string][] = [
    ['study', study.name],
    ['state', study.state],
    ['data', `${study.data.file}: ${study.data.rows} rows (training ${study.data.trainRows}, validation ${study.data.validationRows}, held-out test ${study.data.testRows})`],
    ['sampler', samplerText(study)],
    ['objective', objectiveLabel(study.objective)],
    ['trials by status', statusCounts(study)],
  ];
  if (best) {
    rows.push(['best trial', `trial ${best.id}: ${Number(best.objective!.toPrecision(4))} after ${best.epochsTrained} epoch${best.epochsTrained === 1 ? '' : 's'}`]);
    rows.push(['its configuration', configurationText(best)]);
  } else {
    rows.push(['best trial', 'no trial has a score yet']);
  }
  return rows;
}

const STYLE = `
body { font-family: Helvetica, Arial, sans-serif; color: #1d2126; margin: 24px auto; max-width: 1100px; padding: 0 16px; }
h1 { font-size: 22px; margin: 0 0 12px; }
h2 { font-size: 17px; margin: 28px 0 8px; }
table { border-collapse: collapse; font-size: 14px; }
th, td { text-align: left; vertical-align: top; padding: 4px 12px 4px 0; border-bottom: 1px solid #e3e6ea; }
th { font-weight: 600; white-space: nowrap; }
.caution { background: #fff6e0; border-left: 4px solid #e0a526; padding: 8px 12px; font-size: 14px; }
section.chart { margin-top: 28px; }
figure { margin: 0; overflow-x: auto; }
figure svg { max-width: 100%; height: auto; }
`;

/**
 * One self-contained HTML page: summary table, caution, and every chart's SVG inlined. It loads
 * nothing (the content security policy forbids it), so it opens the same offline.
 */
export function buildReport(study: StudyDocument, charts: readonly RenderedChart[]): string {
  const table = summaryRows(study)
    .map(([key, value]) => `<tr><th scope="row">${escapeHtml(key)}</th><td>${escapeHtml(value)}</td></tr>`)
    .join('\n');
  const sections = charts
    .map(
      (chart) =>
        // The chart's own title is drawn inside the SVG, so the section only names it for screen readers.
        `<section class="chart" id="chart-${escapeHtml(chart.name)}" aria-label="${escapeHtml(chart.title)}">\n<figure>${scopeSvgIds(chart.svg, chart.name)}</figure>\n</section>`,
    )
    .join('\n');
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${escapeHtml(study.name)}: rungwise study report</title>
<style>${STYLE}</style>
</head>
<body>
<h1>Study ${escapeHtml(study.name)}</h1>
<p class="caution">${escapeHtml(OPTIMISM_CAUTION)}</p>
<table>
${table}
</table>
${sections.length > 0 ? sections : '<p>No trial has a score yet, so there is nothing to plot.</p>'}
</body>
</html>
`;
}
