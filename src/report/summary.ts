import type { StudyDocument } from '../store/types.js';
import { unsuccessfulTrials } from '../core/trial-status.js';
import { OPTIMISM_CAUTION } from './caution.js';
import { formatDuration, formatNumber } from './format.js';
import { healthSummary } from './health-summary.js';
import { baselineLine, linearBaselineWarning } from './baseline-text.js';
import { budgetSummary, budgetSummaryText } from './budget-summary.js';
import { stateText } from './progress.js';
import { studyRepeats } from './repeat-text.js';

/** A share as the summary prints it: two significant digits (0.012, 0.10, 1.0), 0 as 0. */
export { twoSignificantDigits } from './budget-summary.js';

/** The closing lines of a run: trials by status, totals, the study file's path and the caution. */
export function studySummary(doc: StudyDocument, file = ''): string {
  const counts = new Map<string, number>();
  for (const trial of doc.trials) counts.set(trial.status, (counts.get(trial.status) ?? 0) + 1);
  const byStatus = [...counts].map(([status, n]) => `${n} ${status}`).join(', ');
  const lines = [`study ${doc.name} ${stateText(doc.state)}: ${doc.trials.length} trials (${byStatus || 'none'})`];
  if (doc.totals) lines.push(budgetSummaryText(budgetSummary(doc)));
  if (file) lines.push(`study file: ${file}`);
  const repeats = studyRepeats(doc);
  const baseline = baselineLine(doc, repeats);
  if (baseline) lines.push(baseline);
  const warning = linearBaselineWarning(doc, repeats);
  if (warning) lines.push(warning);
  const health = healthSummary(doc.trials);
  if (health) lines.push(health);
  lines.push(OPTIMISM_CAUTION);
  const failed = unsuccessfulTrials(doc.trials);
  if (failed.first) {
    lines.push(`${failed.count} of ${doc.trials.length} trials ended without a score (failed, diverged or timed out); the first: trial ${failed.first.id}: ${failed.first.reason}`);
  }
  return lines.join('\n');
}
