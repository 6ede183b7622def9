/**
 * Schemas of everything rungwise reads back from Redis (zod, as the study definition): worker
 * registry entries, jobs, results, epoch reports and data-set headers. Anyone who can write to the
 * server can put anything there, so nothing read from it is used before it passes one of these;
 * {@link describeIssue} turns the first problem into a short phrase naming the field.
 */
import { z } from 'zod';
import { ACTIVATIONS, BLOCKS, METRICS, NUMERIC_ENCODINGS, NUMERIC_INPUTS, OPTIMIZERS, SCHEDULES, SHAPES, TASKS, type TrialConfiguration } from '../../core/configuration.js';
import { earlyStoppingSchema } from '../../core/fields.js';
import { CLASS_WEIGHTINGS } from '../../core/class-weighting.js';

const count = z.int().min(0);
const positiveCount = z.int().min(1);
/** JSON has no NaN or Infinity: a figure that was not finite arrives as null. */
const figure = z.number().nullable();
const base64 = z.string().regex(/^[A-Za-z0-9+/]*={0,2}$/, 'base64 text');
const figures = z.partialRecord(z.enum(METRICS), figure);

/** What a worker announces with each heartbeat (`rungwise:worker-info`). */
export const workerInfoSchema = z.object({
  protocol: z.int(),
  threads: positiveCount.max(4096),
  name: z.string().min(1).max(200),
  /** Whether the worker holds a study key (signs its results). */
  signs: z.boolean().optional(),
});

/** A trial's configuration as a job carries it: every value a trainer can train (a batch size of 0 would never end an epoch). */
export const configurationSchema = z.strictObject({
  depth: positiveCount.max(64),
  width: positiveCount.max(65_536),
  activation: z.enum(ACTIVATIONS),
  learningRate: z.number().positive(),
  batchSize: positiveCount,
  optimizer: z.enum(OPTIMIZERS),
  l2: z.number().min(0),
  dropout: z.number().min(0).lt(1),
  schedule: z.enum(SCHEDULES).optional(),
  warmupEpochs: count.optional(),
  gamma: z.number().gt(0).max(1).optional(),
  stepEpochs: positiveCount.optional(),
  minFactor: z.number().min(0).lt(1).optional(),
  weightDecay: z.number().min(0).lt(1).optional(),
  maxGradientNorm: z.number().positive().optional(),
  shape: z.enum(SHAPES).optional(),
  block: z.enum(BLOCKS).optional(),
  numericInputs: z.enum(NUMERIC_INPUTS).optional(),
  poolCategoriesBelow: count.optional(),
  labelSmoothing: z.number().min(0).lt(1).optional(),
  classWeights: z.enum(CLASS_WEIGHTINGS).optional(),
  effectiveBeta: z.number().gt(0).lt(1).optional(),
  numericEncoding: z.enum(NUMERIC_ENCODINGS).optional(),
});

/** Compiles only while the schema and `TrialConfiguration` have the same fields (a strict schema would refuse a new one). */
type Same<A, B> = [A] extends [B] ? ([B] extends [A] ? true : false) : false;
type Configuration = z.output<typeof configurationSchema>;
const configurationMatches: Same<Configuration, TrialConfiguration> & Same<keyof Configuration, keyof TrialConfiguration> = true;
void configurationMatches;

const goalSchema = z.strictObject({ metric: z.enum(METRICS), better: z.enum(['higher', 'lower']) });

/** The job inside a queue entry (checkpoint as base64). */
export const wireJobSchema = z
  .strictObject({
    trialId: count,
    seed: z.int(),
    configuration: configurationSchema,
    datasetId: z.string().min(1).max(200),
    fromEpoch: count,
    toEpoch: positiveCount,
    checkpoint: base64.optional(),
    maxEpochs: positiveCount.optional(),
    earlyStopping: z.strictObject({ rule: earlyStoppingSchema, goal: goalSchema }).optional(),
    repeat: positiveCount.optional(),
    timeRows: z.boolean().optional(),
  })
  .refine((job) => job.toEpoch > job.fromEpoch, { message: 'must be above fromEpoch', path: ['toEpoch'] })
  .refine((job) => job.fromEpoch === 0 || job.checkpoint !== undefined, { message: 'no checkpoint, though fromEpoch is above 0', path: ['checkpoint'] });

/** A queue entry's data: the job, the SHA-256 of its data set's message, and the study key's signature when there is one. */
export const queuedJobSchema = z.object({
  protocol: z.int(),
  job: wireJobSchema,
  /** Hex SHA-256 of the data set's Redis value, as the coordinator published it. */
  datasetSha256: z.string().regex(/^[0-9a-f]{64}$/, '64 hex digits'),
  signature: z.string().optional(),
});

export const epochReportSchema = z.object({
  trialId: count,
  epoch: positiveCount,
  trainLoss: figure,
  validationLoss: figure,
  metrics: figures,
  standardErrors: figures.optional(),
  seconds: z.number().min(0),
});

const classFiguresSchema = z.object({
  epoch: count,
  confusion: z.array(z.array(count)),
  averagePrecision: z.array(z.number().nullable()),
  threshold: z.number().optional(),
});

const stop = z.object({ epoch: count, reason: z.string() });

/** The result inside a job's return value (checkpoint as base64). */
export const wireResultSchema = z.object({
  trialId: count,
  status: z.enum(['completed', 'diverged']),
  epochs: z.array(epochReportSchema),
  divergence: stop.optional(),
  checkpoint: base64.optional(),
  bestEpoch: positiveCount.optional(),
  stoppedAtEpoch: count.optional(),
  divergedAfterBest: stop.optional(),
  classFigures: classFiguresSchema.optional(),
  workerSeconds: z.number().min(0),
  ranOn: z.string().max(300).optional(),
  rowMicroseconds: z.number().positive().finite().optional(),
  tensorsBefore: count.optional(),
  tensorsAfter: count.optional(),
});

export const queuedResultSchema = z.object({
  protocol: z.int(),
  result: wireResultSchema,
  signature: z.string().optional(),
});

/** A progress message: one epoch report, signed when the worker holds a study key. */
export const queuedProgressSchema = z.object({ report: epochReportSchema, signature: z.string().optional() });

/** The JSON header of a data-set message; the sizes must agree with the rows and the input count. */
export const datasetHeaderSchema = z
  .strictObject({
    protocol: z.int(),
    id: z.string().min(1),
    task: z.enum(TASKS),
    inputCount: positiveCount,
    outputCount: positiveCount,
    targetScaling: z.strictObject({ mean: z.number(), std: z.number().min(0) }).optional(),
    classWeights: z.array(z.number().min(0)).optional(),
    costMatrix: z.array(z.array(z.number().finite())).optional(),
    splits: z.tuple([
      z.strictObject({ rows: positiveCount, x: count, y: count }),
      z.strictObject({ rows: positiveCount, x: count, y: count }),
    ]),
  })
  .superRefine((header, ctx) => {
    header.splits.forEach((split, index) => {
      if (split.x !== split.rows * header.inputCount) ctx.addIssue({ code: 'custom', path: ['splits', index, 'x'], message: `${split.x} values, expected rows x inputCount = ${split.rows * header.inputCount}` });
      if (split.y !== split.rows) ctx.addIssue({ code: 'custom', path: ['splits', index, 'y'], message: `${split.y} values, expected one per row (${split.rows})` });
    });
    if (header.task === 'binary' && header.outputCount !== 1) ctx.addIssue({ code: 'custom', path: ['outputCount'], message: 'must be 1 for a binary task' });
    if (header.classWeights && header.task !== 'regression' && header.classWeights.length !== (header.task === 'binary' ? 2 : header.outputCount)) {
      ctx.addIssue({ code: 'custom', path: ['classWeights'], message: 'must hold one weight per class' });
    }
  });

export type DatasetHeader = z.output<typeof datasetHeaderSchema>;

/** The first problem of a failed parse as `field: what is wrong`. */
export function describeIssue(error: z.ZodError): string {
  const issue = error.issues[0];
  if (!issue) return 'not readable';
  const where = issue.path.length > 0 ? issue.path.map(String).join('.') : 'the entry';
  return `${where}: ${issue.message}`;
}

/** Parse JSON text (or take an already parsed value) and check it against `schema`; the problem in one phrase on failure. */
export function readEntry<T>(schema: z.ZodType<T>, value: unknown): { ok: true; value: T } | { ok: false; problem: string } {
  let data = value;
  if (typeof value === 'string') {
    try {
      data = JSON.parse(value) as unknown;
    } catch {
      return { ok: false, problem: 'not valid JSON' };
    }
  }
  const parsed = schema.safeParse(data);
  return parsed.success ? { ok: true, value: parsed.data } : { ok: false, problem: describeIssue(parsed.error) };
}
