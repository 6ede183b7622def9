import type { StudyDocument } from '../store/types.js';
import type { Chart } from './charts/chart.js';
import { learningCurvesChart } from './charts/curves.js';
import { parallelChart } from './charts/parallel.js';
import { parametersChart } from './charts/parameters.js';
import { progressChart } from './charts/progress.js';
import { rungsChart } from './charts/rungs.js';

export type { Chart } from './charts/chart.js';
export { learningCurvesChart, parallelChart, parametersChart, progressChart, rungsChart };

/**
 * Every chart the study has data for, in report order. A chart with nothing to show (no scored
 * trial yet, or the rung chart under random search) is left out rather than drawn empty.
 */
export function studyCharts(study: StudyDocument): Chart[] {
  return [progressChart(study), learningCurvesChart(study), parametersChart(study), parallelChart(study), rungsChart(study)].filter(
    (chart): chart is Chart => chart !== null,
  );
}
