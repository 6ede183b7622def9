/**
 * The data sets a study trains on: its own (the default preprocessing) and one per other
 * preprocessing choice its configurations name (`numericInputs`, `poolCategoriesBelow`, `numericEncoding`), each
 * prepared by the coordinator the first time a job needs it, from the rows already read, added to
 * the transport once and kept for the rest of the session. Memory is bounded by the space: at most
 * one data set per combination of the choices it lists (3 x 4 x 3 at most), each the size of the study's
 * own training and validation matrices, or wider with a numeric encoding (k fold data sets each with `data.folds`).
 */
import { isDefaultPreprocessing, preprocessingKey, preprocessingOf, type PreprocessingChoice, type TrialConfiguration } from '../core/configuration.js';
import type { SharedDataset } from '../core/job.js';
import { datasetId } from '../data/dataset-id.js';
import { toSharedDataset } from '../data/prepare.js';
import type { PreparedData } from '../data/types.js';

/** The fold data sets of a prepared data set, each named by its content hash. */
export function foldDatasets(data: PreparedData): SharedDataset[] {
  return (data.folds ?? []).map((fold) => {
    const part: PreparedData = { recipe: fold.recipe, train: fold.train, validation: fold.validation, test: { rows: 0, x: new Float32Array(0), y: new Float32Array(0) } };
    if (fold.classWeights) part.classWeights = fold.classWeights;
    if (fold.costMatrix) part.costMatrix = fold.costMatrix;
    return toSharedDataset(part, datasetId(part));
  });
}

export class StudyDatasets {
  /** The study's own data set (the default preprocessing). */
  readonly study: SharedDataset;
  private readonly byChoice = new Map<string, Promise<SharedDataset>>();
  private readonly folds = new Map<string, SharedDataset[]>();

  constructor(private readonly data: PreparedData) {
    this.study = toSharedDataset(data, datasetId(data));
    this.folds.set(this.study.id, foldDatasets(data));
  }

  /** The fold data sets of a data set this catalogue made (k-fold studies). */
  foldsOf(dataset: SharedDataset): SharedDataset[] {
    const folds = this.folds.get(dataset.id);
    if (!folds) throw new Error(`study data sets: no folds for data set ${dataset.id}`);
    return folds;
  }

  /**
   * Model inputs of the data set a configuration trains on, known before it is prepared (from its
   * choice's recipe: `PreparedData.inputCountFor`), so the weight limit sizes each configuration by its own inputs.
   */
  inputsFor(configuration: Pick<TrialConfiguration, 'numericInputs' | 'poolCategoriesBelow' | 'numericEncoding'>): number {
    const choice = preprocessingOf(configuration);
    return isDefaultPreprocessing(choice) || !this.data.inputCountFor ? this.study.inputCount : this.data.inputCountFor(choice);
  }


  /**
   * The id of the data set a configuration trains on; a choice met for the first time is prepared
   * and handed to `add` (the transport's `addDataset`) before its id is returned.
   */
  async idFor(configuration: TrialConfiguration, add: (dataset: SharedDataset) => Promise<void>): Promise<string> {
    const choice = preprocessingOf(configuration);
    if (isDefaultPreprocessing(choice)) return this.study.id;
    const key = preprocessingKey(choice);
    let dataset = this.byChoice.get(key);
    if (!dataset) {
      dataset = this.prepare(choice, add);
      this.byChoice.set(key, dataset);
    }
    return (await dataset).id;
  }

  private async prepare(choice: PreprocessingChoice, add: (dataset: SharedDataset) => Promise<void>): Promise<SharedDataset> {
    if (!this.data.prepareChoice) throw new Error(`study data sets: the data were prepared without preprocessing choices, but a configuration asks for ${preprocessingKey(choice)}`);
    const variant = await this.data.prepareChoice(choice);
    const dataset = toSharedDataset(variant, datasetId(variant));
    this.folds.set(dataset.id, foldDatasets(variant));
    await add(dataset);
    return dataset;
  }
}
