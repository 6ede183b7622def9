import type { StudyDocument } from '../store/types.js';
import { studyImportance, type StudyImportance } from './analysis/study-importance.js';
import { budgetChart } from './charts/budget.js';
import type { Chart } from './charts/chart.js';
import { learningCurvesChart } from './charts/curves.js';
import { goodValuesChart } from './charts/good-values.js';
import { importanceChart } from './charts/importance.js';
import { rungAgreementChart } from './charts/rung-agreement.js';
import { rungBudgetChart } from './charts/rung-budget.js';

export type { Chart } from './charts/chart.js';
export { budgetChart, goodValuesChart, importanceChart, learningCurvesChart, rungAgreementChart, rungBudgetChart };

/**
 * Every chart the study has data for, in report order (the questions: compute, rungs, importance,
 * training). A chart with nothing to show (no scored trial yet, rung charts under random search,
 * importance with too few configurations) is left out rather than drawn empty.
 */
export function studyCharts(study: StudyDocument, importance: StudyImportance | undefined = studyImportance(study)): Chart[] {
  return [
    budgetChart([study]),
    rungBudgetChart([study]),
    rungAgreementChart(study),
    importanceChart([study], [importance]),
    goodValuesChart(study, importance),
    learningCurvesChart(study),
  ].filter((chart): chart is Chart => chart !== null);
}
