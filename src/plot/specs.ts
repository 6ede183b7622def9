import type { StudyDocument } from '../store/types.js';
import { studyImportance, type StudyImportance } from './analysis/study-importance.js';
import { budgetChart } from './charts/budget.js';
import type { Chart } from './charts/chart.js';
import { learningCurvesChart } from './charts/curves.js';
import { hyperparametersChart } from './charts/hyperparameters.js';
import { studyReferences, type ChartReferences } from './charts/references.js';
import { rungAgreementChart } from './charts/rung-agreement.js';
import { rungBudgetChart } from './charts/rung-budget.js';
import { frontChart } from './charts/front.js';

export type { Chart } from './charts/chart.js';
export type { Baseline, ChartReferences, NoiseBand } from './charts/references.js';
export { budgetChart, frontChart, hyperparametersChart, learningCurvesChart, rungAgreementChart, rungBudgetChart };

/**
 * Every chart the study has data for, one per question, in report order (compute, rungs,
 * hyperparameters, training, the front of a second goal). A chart with nothing to show (no scored trial yet, the rung chart
 * under random search, hyperparameters with too few configurations) is left out rather than drawn
 * empty. `references` adds baselines and a noise band to the score charts; without one, the
 * winner's standard error over folds is the band when the study has folds.
 */
export function studyCharts(study: StudyDocument, importance: StudyImportance | undefined = studyImportance(study), references: ChartReferences = {}): Chart[] {
  const drawn = studyReferences(study, references);
  return [budgetChart([study], drawn), rungAgreementChart(study), hyperparametersChart(study, importance), learningCurvesChart(study, drawn), frontChart(study, drawn)].filter(
    (chart): chart is Chart => chart !== null,
  );
}
