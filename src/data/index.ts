export { isMissing, parseCsv, parseNumber, readCsv, type CsvTable } from './csv.js';
export { splitRows, splitSizes, type SplitIndices, type SplitOptions } from './split.js';
export {
  buildRecipe,
  columnKind,
  encodeFeatures,
  encodeTarget,
  meanAndStd,
  sortLabels,
  unscaleTarget,
  type FeatureColumn,
  type RecipeOptions,
} from './recipe.js';
export { prepareData, toSharedDataset } from './prepare.js';
export type { DataSummary, FeatureRecipe, PreparedData, PreprocessingRecipe, SplitArrays } from './types.js';
export { streamCsv, type CsvDialect, type RecordSink, type StreamOptions } from './source.js';
export { typeColumn, TEXT_SHARE_IN_NUMERIC, type ColumnReading } from './typing.js';
export type { DataEvent, DataLoadOptions, DataObserver } from './events.js';
