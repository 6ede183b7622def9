/**
 * A study from a CSV and a target alone (`rungwise run data.csv --target y`, or a definition that gives
 * only `data`): read the target to infer the task, build the default study for the data's size
 * (`study/defaults.ts`), and say what was decided and where the full definition is written.
 */
import path from 'node:path';
import type { Task } from '../core/configuration.js';
import { inspectTarget } from '../data/infer-task.js';
import { runPaths } from '../store/run-dir.js';
import { defaultStudy, studyNameFor } from '../study/defaults.js';
import type { LoadedStudy } from '../study/load.js';
import { validateDataOnly, validateStudy } from '../study/load.js';
import type { StudyDefinition } from '../study/definition.js';

/** What a study from its data alone starts from. */
export interface DataOnlyRequest {
  /** The data-only definition as parsed (`{ data: { csv, target, task?, splitSeed? }, name?, budget? }`). */
  raw: unknown;
  /** The definition's file, or what messages call it; `data.csv` is relative to `baseDir`. */
  label: string;
  baseDir: string;
  /** Run directory. @default `runs/<name>` */
  out?: string;
}

/** The CLI's `run data.csv --target y [--task t] [--split-seed n]` as a data-only definition (paths relative to the working directory). */
export function dataOnlyDefinition(csv: string, target: string, extra: { task?: Task; splitSeed?: number } = {}): { data: Record<string, unknown> } {
  return { data: { csv, target, ...(extra.task ? { task: extra.task } : {}), ...(extra.splitSeed !== undefined ? { splitSeed: extra.splitSeed } : {}) } };
}

/**
 * The full study for a data-only definition, to be written into its run directory
 * (`runStudy(..., { writeDefinition: true })`), with notes saying how the task was decided, what the
 * default study is and where its definition goes.
 * @throws UserError for a bad definition, an unreadable CSV, a missing target or an ambiguous task.
 */
export async function studyFromData(request: DataOnlyRequest): Promise<LoadedStudy> {
  const short = validateDataOnly(request.raw, request.label);
  const csvFile = path.resolve(request.baseDir, short.data.csv);
  const inspection = await inspectTarget(csvFile, short.data.target, `${request.label}: data`, short.data.task);
  const name = short.name ?? studyNameFor(short.data.csv);
  const dir = path.resolve(request.out ?? path.join('runs', name));
  const file = runPaths.writtenDefinition(dir);
  const input = defaultStudy({
    csv: path.relative(dir, csvFile).split(path.sep).join('/'),
    target: short.data.target,
    task: inspection.task,
    rows: inspection.rows,
    columns: inspection.columns,
    name,
    ...(short.data.splitSeed !== undefined ? { splitSeed: short.data.splitSeed } : {}),
    ...(short.budget ? { budget: short.budget } : {}),
  });
  const definition = validateStudy(input, file);
  const shown = displayPath(file);
  const notes = [
    `${short.data.csv}: task ${inspection.task} (${inspection.reason}); ${inspection.rows} rows, ${inspection.columns} columns`,
    defaultStudyInWords(definition),
    `the definition used is written to ${shown}: edit it and pass it to \`rungwise run\`, or \`rungwise resume ${displayPath(dir)}\` to continue this study`,
  ];
  return { definition, file, notes };
}

/** One line: the sampler, the budget and the first configuration of a default study. */
function defaultStudyInWords(definition: StudyDefinition): string {
  const sampler = definition.sampler;
  const minEpochs = 'minEpochs' in sampler ? sampler.minEpochs : 1;
  const first = definition.tryFirst?.[0];
  const recipe = first ? [first.numericInputs && `${first.numericInputs} inputs`, first.schedule && `${first.schedule} schedule`, first.labelSmoothing !== undefined && `label smoothing ${first.labelSmoothing}`].filter(Boolean) : [];
  const start = first ? `, starting from ${first.depth} x ${first.width} ${first.activation}, adam at ${first.learningRate}, dropout ${first.dropout}${recipe.map((part) => `, ${part}`).join('')} (RealMLP-TD's recipe, Holzmüller et al. 2024)` : '';
  return `default study: ${definition.budget.trials} configurations by successive halving, ${minEpochs} to ${definition.budget.maxEpochs} epochs${start}; sources in docs/study-definition.md ("A study from a CSV and a target")`;
}

/** A path relative to the working directory when inside it, else absolute. */
function displayPath(file: string): string {
  const relative = path.relative(process.cwd(), file);
  return relative !== '' && !relative.startsWith('..') && !path.isAbsolute(relative) ? relative : file;
}
