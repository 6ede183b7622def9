import { z } from 'zod';
import { dataOnlyStudySchema, studySchema } from './definition.js';

/** The JSON Schema of a study definition file, generated from the same zod schema that validates it. */
export function studyJsonSchema(): Record<string, unknown> {
  // A full definition, or one that gives only its data (rungwise fills in the rest).
  const schema = z.toJSONSchema(z.union([studySchema, dataOnlyStudySchema]), { io: 'input', unrepresentable: 'any' }) as Record<string, unknown>;
  return {
    ...schema,
    $id: 'https://rungwise.invalid/schema/study.schema.json',
    title: 'rungwise study definition',
    description: 'A study: the data, the search space, the budget, the sampler and the goal.',
  };
}
