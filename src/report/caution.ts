/**
 * The one caution text: every place that shows a winner (the run's summary, `export`, the report)
 * says it, because the validation score of a configuration picked from many is optimistic.
 */
export const OPTIMISM_CAUTION =
  'Caution: the validation score of a configuration picked from many is optimistic; judge the chosen model on the held-out test split (rungwise export scores it there), and have any model whose predictions affect people reviewed before use.';
