/** A numeric column as read: one number per row, NaN where the value is missing. */
export interface NumericValues {
  kind: 'numeric';
  name: string;
  values: Float64Array;
}

/** A categorical column as read: each row's index into `labels` (as written in the file), -1 where missing. */
export interface CategoricalValues {
  kind: 'categorical';
  name: string;
  codes: Int32Array;
  labels: string[];
}

/** One feature column, typed. */
export type FeatureValues = NumericValues | CategoricalValues;
