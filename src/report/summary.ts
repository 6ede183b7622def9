import type { StudyDocument } from '../store/types.js';
import { formatDuration, formatNumber } from './format.js';

/** Validation scores of a configuration picked from many are optimistic; every place that shows a winner says so. */
export const OPTIMISM_CAUTION =
  'Caution: the validation score of a configuration picked from many is optimistic; judge the chosen model on the held-out test split (rungwise export --retrain), and have any model whose predictions affect people reviewed before use.';

/** The closing lines of a run: trials by status, totals, the study file's path and the caution. */
export function studySummary(doc: StudyDocument, file = ''): string {
  const counts = new Map<string, number>();
  for (const trial of doc.trials) counts.set(trial.status, (counts.get(trial.status) ?? 0) + 1);
  const byStatus = [...counts].map(([status, n]) => `${n} ${status}`).join(', ');
  const lines = [`study ${doc.name} ${doc.state}: ${doc.trials.length} trials (${byStatus || 'none'})`];
  if (doc.totals) {
    lines.push(
      `epochs trained ${doc.totals.epochsTrained}; wall time ${formatDuration(doc.totals.wallSeconds)}; worker utilisation ${formatNumber(doc.totals.workerUtilisation)} on ${doc.totals.workers} worker(s)`,
    );
  }
  if (file) lines.push(`study file: ${file}`);
  lines.push(OPTIMISM_CAUTION);
  return lines.join('\n');
}
