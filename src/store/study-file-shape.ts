/**
 * The types of a study file's fields, checked when it is opened (after migration), so a file edited by
 * hand or damaged gives one line naming the file and the field instead of an internal error later.
 * Objects are loose: a field this version does not know is kept, not refused.
 */
import { z } from 'zod';
import { UserError } from '../core/errors.js';
import { formatPath } from '../study/issues.js';
import { PREVIOUS_SUFFIX } from './file-adapter.js';
import type { StudyDocument } from './types.js';

const count = z.int().min(0);
// JSON has no NaN or infinity: a diverged epoch's figures are written as null.
const figure = z.number().nullable();
const statuses = ['training', 'waiting', 'trained', 'dropped', 'diverged', 'failed', 'timed-out'] as const;

const configurationShape = z.looseObject({
  depth: count,
  width: count,
  activation: z.string(),
  learningRate: z.number(),
  batchSize: count,
  optimizer: z.string(),
  l2: z.number(),
  dropout: z.number(),
});

const jobShape = z.looseObject({
  rung: count,
  fromEpoch: count,
  toEpoch: count,
  fromCheckpoint: z.boolean(),
  attempts: count,
  status: z.enum(['training', 'done', 'diverged', 'failed', 'timed-out', 'cut-off']),
});

const trialShape = z.looseObject({
  id: count,
  configuration: configurationShape,
  seed: z.number(),
  status: z.enum(statuses),
  rung: count,
  bracket: count,
  epochsTrained: count,
  curve: z.array(z.looseObject({ epoch: count, validationLoss: figure, metrics: z.record(z.string(), figure) })),
  score: figure,
  rungScores: z.array(figure),
  workerSeconds: z.number(),
  retries: count,
  jobs: z.array(jobShape),
});

const repeatRunShape = z.looseObject({
  trialId: count,
  index: count,
  seed: z.int(),
  epochs: count,
  status: z.enum(['completed', 'diverged', 'failed']),
  score: figure,
  workerSeconds: z.number(),
});

const documentShape = z.looseObject({
  name: z.string(),
  state: z.enum(['running', 'interrupted', 'time-limit', 'finished']),
  goal: z.looseObject({ metric: z.string(), better: z.enum(['higher', 'lower']) }),
  definition: z.looseObject({
    name: z.string(),
    data: z.looseObject({ csv: z.string(), target: z.string(), task: z.enum(['binary', 'multiclass', 'regression']) }),
    budget: z.looseObject({ trials: count, maxEpochs: count }),
    sampler: z.looseObject({ kind: z.string() }),
    space: z.looseObject({}),
    repeats: z.looseObject({ top: count, seeds: count }).optional(),
  }),
  trials: z.array(trialShape),
  repeats: z.looseObject({ trialIds: z.array(count), seeds: count, runs: z.array(repeatRunShape) }).optional(),
  totals: z.looseObject({ epochsTrained: count, threadUtilisation: z.number(), wallSeconds: z.number(), threads: count }).optional(),
});

function found(value: unknown): string {
  if (value === undefined) return 'nothing';
  if (typeof value === 'string') return `"${value.length > 40 ? `${value.slice(0, 40)}...` : value}"`;
  return Array.isArray(value) ? 'a list' : value !== null && typeof value === 'object' ? 'an object' : String(value);
}

function valueAt(data: unknown, path: readonly PropertyKey[]): unknown {
  return path.reduce<unknown>((current, key) => (current !== null && typeof current === 'object' ? (current as Record<PropertyKey, unknown>)[key] : undefined), data);
}

/** What the field may hold, in words: "expected a number", "expected one of "running", "finished"". */
function allowedInWords(issue: z.core.$ZodIssue): string {
  if (issue.code === 'invalid_type') return `expected ${issue.expected === 'int' ? 'a whole number' : `a ${issue.expected}`}${figureField(issue.path) ? ' or null' : ''}`;
  if (issue.code === 'invalid_value') return `expected one of ${issue.values.map((v) => JSON.stringify(v)).join(', ')}`;
  if (issue.code === 'too_small') return `expected ${String(issue.minimum)} or more`;
  return issue.message;
}

/** Whether the field is a score or figure, which may be null. */
function figureField(path: readonly PropertyKey[]): boolean {
  return path.some((key) => key === 'score' || key === 'rungScores' || key === 'metrics' || key === 'validationLoss');
}

/**
 * The document when its fields have the types this rungwise reads; otherwise a {@link UserError}
 * (exit 2) in one line: the file, the first wrong field, what it holds, what is allowed.
 */
export function checkFieldTypes(doc: StudyDocument, file: string): StudyDocument {
  const result = documentShape.safeParse(doc);
  if (result.success) return doc;
  const [first, ...rest] = result.error.issues;
  const more = rest.length > 0 ? ` (and ${rest.length} more field${rest.length === 1 ? '' : 's'})` : '';
  const allowed = allowedInWords(first!);
  throw new UserError(
    'E_STUDY_CORRUPT',
    `${file}: ${formatPath(first!.path)}: found ${found(valueAt(doc, first!.path))}, ${allowed}${more}; the study file was edited or damaged: correct the field, or copy ${file}${PREVIOUS_SUFFIX} over it`,
  );
}
