/**
 * The study's footprint settings checked against the data's shape before the first trial: the
 * smallest network of the space and every listed configuration must fit the weight limit.
 */
import { UserError } from '../core/errors.js';
import { weightCount, type NetworkShape } from '../core/size.js';
import type { StudyDefinition } from './definition.js';

/**
 * Throws a {@link UserError} (E_FOOTPRINT) naming the field when no network of the space fits
 * `footprint.maxWeights`, or when a `tryFirst` configuration is over it.
 */
export function checkFootprint(definition: Pick<StudyDefinition, 'footprint' | 'space' | 'tryFirst'>, shape: NetworkShape, file: string): void {
  const maxWeights = definition.footprint?.maxWeights;
  if (maxWeights === undefined) return;
  const { depth, width } = definition.space;
  const smallest = weightCount({ depth: depth.min, width: width.min }, shape.inputs, shape.outputs);
  if (smallest > maxWeights) {
    throw new UserError(
      'E_FOOTPRINT',
      `${file}: footprint.maxWeights: ${maxWeights} is below the smallest network of the space (depth ${depth.min}, width ${width.min}, ${shape.inputs} inputs, ${shape.outputs} output${shape.outputs === 1 ? '' : 's'}: ${smallest} weights); allow at least ${smallest}, or lower space.width.min`,
    );
  }
  (definition.tryFirst ?? []).forEach((configuration, index) => {
    const weights = weightCount(configuration, shape.inputs, shape.outputs);
    if (weights > maxWeights) {
      throw new UserError('E_FOOTPRINT', `${file}: tryFirst[${index}]: depth ${configuration.depth}, width ${configuration.width} has ${weights} weights, over footprint.maxWeights ${maxWeights}; list a smaller network or remove it`);
    }
  });
}
