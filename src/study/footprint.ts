/**
 * The study's footprint settings checked against the data's shape before the first trial: the
 * smallest network of the space and every listed configuration must fit the weight limit.
 */
import { UserError } from '../core/errors.js';
import { DEFAULT_PREPROCESSING, preprocessingOf, type PreprocessingChoice } from '../core/configuration.js';
import { weightCount, type NetworkShape } from '../core/size.js';
import type { StudyDefinition } from './definition.js';

/** Model inputs of the data prepared for a preprocessing choice (`PreparedData.inputCountFor`). */
export type InputsOfChoice = (choice: PreprocessingChoice) => number;

/** Every preprocessing choice the space can give a configuration (the default alone when it searches none). */
export function spaceChoices(space: Pick<StudyDefinition['space'], 'numericInputs' | 'poolCategoriesBelow' | 'numericEncoding'>): PreprocessingChoice[] {
  const numeric = space.numericInputs ?? [DEFAULT_PREPROCESSING.numericInputs];
  const pools = space.poolCategoriesBelow ?? [DEFAULT_PREPROCESSING.poolCategoriesBelow];
  const encodings = space.numericEncoding ?? ['none'];
  return numeric.flatMap((numericInputs) =>
    pools.flatMap((poolCategoriesBelow) => encodings.map((encoding) => preprocessingOf({ numericInputs, poolCategoriesBelow, numericEncoding: encoding }))),
  );
}

/** The most model inputs any configuration of the space trains on (`inputsOf` per choice; absent: `inputs` for every choice). */
export function mostInputs(space: Pick<StudyDefinition['space'], 'numericInputs' | 'poolCategoriesBelow' | 'numericEncoding'>, inputs: number, inputsOf?: InputsOfChoice): number {
  return Math.max(...spaceChoices(space).map((choice) => inputsOf?.(choice) ?? inputs));
}

/**
 * Throws a {@link UserError} (E_FOOTPRINT) naming the field when the smallest network of the space,
 * for the choice of preprocessing with the most inputs, is over `footprint.maxWeights`, or when a
 * `tryFirst` configuration is over it. Each configuration counts the inputs of its own choice
 * (`inputsOf`; absent: `shape.inputs` for every choice).
 */
export function checkFootprint(definition: Pick<StudyDefinition, 'footprint' | 'space' | 'tryFirst'>, shape: NetworkShape, file: string, inputsOf?: InputsOfChoice): void {
  const maxWeights = definition.footprint?.maxWeights;
  if (maxWeights === undefined) return;
  const inputsFor = (choice: PreprocessingChoice): number => inputsOf?.(choice) ?? shape.inputs;
  const { depth, width } = definition.space;
  const inputs = mostInputs(definition.space, shape.inputs, inputsOf);
  const smallest = weightCount({ depth: depth.min, width: width.min }, inputs, shape.outputs);
  if (smallest > maxWeights) {
    throw new UserError(
      'E_FOOTPRINT',
      `${file}: footprint.maxWeights: ${maxWeights} is below the smallest network of the space (depth ${depth.min}, width ${width.min}, ${inputs} inputs, ${shape.outputs} output${shape.outputs === 1 ? '' : 's'}: ${smallest} weights); allow at least ${smallest}, or lower space.width.min`,
    );
  }
  (definition.tryFirst ?? []).forEach((configuration, index) => {
    const weights = weightCount(configuration, inputsFor(preprocessingOf(configuration)), shape.outputs);
    if (weights > maxWeights) {
      throw new UserError('E_FOOTPRINT', `${file}: tryFirst[${index}]: depth ${configuration.depth}, width ${configuration.width} has ${weights} weights, over footprint.maxWeights ${maxWeights}; list a smaller network or remove it`);
    }
  });
}
