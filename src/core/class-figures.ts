/** What a job brings back for a classification task, and what the study file keeps per trial. */
export interface ClassFigures {
  /** The epoch these figures describe. */
  epoch: number;
  /** confusion[t][p]: validation rows of true class t predicted as class p (class indices in output order). */
  confusion: number[][];
  /** Each class's average precision against the rest (null when the class has no validation row). */
  averagePrecision: (number | null)[];
  /** Binary only: the threshold on P(second class) the matrix was counted at. */
  threshold?: number;
}

