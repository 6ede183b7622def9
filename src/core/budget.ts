import { z } from 'zod';

export const budgetSchema = z.strictObject({
  trials: z.int().min(1).describe('Configurations to try; Hyperband repeats or cuts its brackets to this count.'),
  maxEpochs: z.int().min(1).describe('Epochs a configuration trains for at most (every trial, for random search).'),
  minutes: z
    .number()
    .positive()
    .optional()
    .describe('Minutes a run (or each resume) may start jobs, fractions allowed; then running jobs finish and the study stops, to be resumed. Absent: no time limit.'),
});



/** How much a study may train: configurations and epochs per configuration. */
export type Budget = z.output<typeof budgetSchema>;
