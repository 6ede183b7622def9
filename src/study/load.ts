import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { parse as parseLenient, printParseErrorCode, type ParseError } from 'jsonc-parser';
import { UserError } from '../core/errors.js';
import { BINARY_METRICS, CLASSIFICATION_METRICS, REGRESSION_METRICS, type MetricName } from '../core/configuration.js';
import { dataOnlyStudySchema, resolveGoal, studySchema, type DataOnlyStudy, type StudyDefinition } from './definition.js';
import { samplerBudgetProblem } from '../samplers/index.js';
import { utf16Kind } from '../text/encoding.js';
import { formatIssue } from './issues.js';
import { earlyStoppingProblem } from '../core/early-stopping.js';
import { renamedDefinitionNote, renamedKeysNote, renameDefinitionKeys, renameSamplerKeys } from './renamed-keys.js';
import { listedClassWeightProblem, listedPreprocessingProblem, listedScheduleProblem } from '../space/schema.js';
import { listedRegulariserProblem } from '../space/regularisers.js';

export interface LoadedStudy {
  definition: StudyDefinition;
  /** Absolute path of the definition file. */
  file: string;
  /** What reading found that the user should know, one line each: old key names that were translated. */
  notes?: readonly string[];
}

/** Format 2's names for `better`'s values. */
const OLD_DIRECTIONS: Readonly<Record<string, StudyGoal['better']>> = { maximize: 'higher', minimize: 'lower' };

type StudyGoal = NonNullable<StudyDefinition['goal']>;

/**
 * Old key names, read as the new ones with a note saying what to rename (the JSON Schema shows only
 * the new names): top-level keys and sampler options of `renamed-keys.ts`, and the goal (below).
 */
function translateOldKeys(raw: unknown, file: string): { raw: unknown; notes: string[] } {
  const top = renameDefinitionKeys(raw);
  const topNote = renamedDefinitionNote(file, top.renamed);
  const goal = translateOldGoal(top.definition, file);
  if (topNote) goal.notes.unshift(topNote);
  if (goal.raw === null || typeof goal.raw !== 'object' || Array.isArray(goal.raw) || !('sampler' in goal.raw)) return goal;
  const { sampler, renamed } = renameSamplerKeys((goal.raw as { sampler: unknown }).sampler);
  const note = renamedKeysNote(file, renamed);
  return note ? { raw: { ...goal.raw, sampler }, notes: [...goal.notes, note] } : goal;
}

/**
 * Definitions written for format 2 name the goal `objective: { metric, direction }`. Such a definition
 * is read as `goal: { metric, better }` (direction "maximize" is better "higher", "minimize" "lower").
 * A definition that has both keys is left as it is, so validation names the old one as unknown.
 */
function translateOldGoal(raw: unknown, file: string): { raw: unknown; notes: string[] } {
  if (raw === null || typeof raw !== 'object' || Array.isArray(raw) || !('objective' in raw) || 'goal' in raw) return { raw, notes: [] };
  const { objective, ...rest } = raw as Record<string, unknown>;
  let goal = objective;
  let direction = '';
  if (objective !== null && typeof objective === 'object' && !Array.isArray(objective) && 'direction' in objective) {
    const { direction: old, ...others } = objective as Record<string, unknown>;
    const better = typeof old === 'string' ? OLD_DIRECTIONS[old] : undefined;
    goal = { ...others, better: better ?? old };
    direction = better ? ` and its "direction": "${String(old)}" to "better": "${better}"` : ' and its "direction" to "better" ("higher" or "lower")';
  }
  return {
    raw: { ...rest, goal },
    notes: [`${file}: "objective" is the key's old name; it was read as "goal"; rename it to "goal"${direction}`],
  };
}

function lineAndColumn(text: string, offset: number): { line: number; column: number } {
  const before = text.slice(0, offset);
  const line = before.split('\n').length;
  return { line, column: offset - before.lastIndexOf('\n') };
}

/** Parse JSON; a syntax error names the line and column. */
export function parseJson(text: string, file: string): unknown {
  try {
    return JSON.parse(text) as unknown;
  } catch {
    const errors: ParseError[] = [];
    parseLenient(text, errors, { allowTrailingComma: false, disallowComments: true });
    const first = errors[0];
    if (!first) throw new UserError('E_STUDY_JSON', `${file}: not valid JSON`);
    const { line, column } = lineAndColumn(text, first.offset);
    throw new UserError('E_STUDY_JSON', `${file}: line ${line}, column ${column}: not valid JSON (${printParseErrorCode(first.error)})`);
  }
}

function metricsAllowed(task: StudyDefinition['data']['task'], withCosts: boolean): readonly MetricName[] {
  const base = task === 'binary' ? BINARY_METRICS : task === 'multiclass' ? CLASSIFICATION_METRICS : REGRESSION_METRICS;
  return [...base, 'validationLoss', ...(withCosts ? (['cost'] as const) : [])];
}

/** Problems of `data.costs` the schema cannot see: a regression task, a cell given twice, a least-cost rule or cost goal without costs. */
function costProblems(definition: StudyDefinition): [string, string][] {
  const { data } = definition;
  const problems: [string, string][] = [];
  if (data.costs && data.task === 'regression') problems.push(['data.costs', 'is for classification; a regression task takes no costs']);
  const seen = new Set<string>();
  data.costs?.cells.forEach((cell, i) => {
    const key = JSON.stringify([cell.actual, cell.predicted]);
    if (seen.has(key)) problems.push([`data.costs.cells[${i}]`, `gives actual "${cell.actual}", predicted "${cell.predicted}" a second time; give each cell once`]);
    seen.add(key);
  });
  if (definition.decisionThreshold?.choose === 'least-cost' && !data.costs) {
    problems.push(['decisionThreshold.choose', '"least-cost" needs data.costs (the cost of each kind of decision)']);
  }
  if (definition.goal?.metric === 'cost' && !data.costs && data.task !== 'regression') {
    problems.push(['goal.metric', '"cost" needs data.costs (the cost of each kind of decision)']);
  }
  return problems;
}

/** Rules that span several fields, each as `[json path, message]`. */
function crossFieldProblems(definition: StudyDefinition): [string, string][] {
  const problems: [string, string][] = [];
  const { data, sampler, budget, goal } = definition;
  if (data.validationFraction + data.testFraction > 0.9) {
    problems.push([
      'data.validationFraction',
      `validation (${data.validationFraction}) and test (${data.testFraction}) fractions add up to more than 0.9; leave at least 10% for training`,
    ]);
  }
  if (goal) {
    const allowed = metricsAllowed(data.task, data.costs !== undefined);
    if (!allowed.includes(goal.metric) && !(goal.metric === 'cost' && data.task !== 'regression')) {
      problems.push(['goal.metric', `found "${goal.metric}", expected for a ${data.task} task one of ${allowed.map((m) => `"${m}"`).join(', ')}`]);
    }
  }
  if ('minEpochs' in sampler && sampler.minEpochs > budget.maxEpochs) {
    problems.push(['sampler.minEpochs', `found ${sampler.minEpochs}, expected at most budget.maxEpochs (${budget.maxEpochs})`]);
  }
  const budgetProblem = samplerBudgetProblem(definition);
  if (budgetProblem) problems.push(budgetProblem);
  if (data.task === 'regression' && data.classWeights !== undefined && data.classWeights !== 'none') {
    problems.push(['data.classWeights', `is for classification; a regression task takes "none" or no classWeights`]);
  }
  if (definition.space.labelSmoothing && data.task === 'regression') {
    problems.push(['space.labelSmoothing', `is for classification; a regression task has no labels to smooth, leave it out`]);
  }
  if (definition.decisionThreshold && data.task !== 'binary') {
    problems.push(['decisionThreshold', `is for binary tasks; this study's task is ${data.task}`]);
  }
  problems.push(...costProblems(definition));
  const stopping = earlyStoppingProblem(definition.earlyStopping, resolveGoal(definition));
  if (stopping) problems.push(['earlyStopping.rule', stopping]);
  if (definition.earlyStopping && data.folds !== undefined) {
    // Each fold would stop at an epoch of its own, and the fold mean needs one curve; not built yet.
    problems.push(['earlyStopping', `cannot be combined with data.folds yet (each fold would stop at its own epoch); use one or the other`]);
  }
  definition.tryFirst?.forEach((entry, index) => {
    const problem = listedScheduleProblem(entry, definition.space) ?? listedRegulariserProblem(entry, definition.space) ?? listedPreprocessingProblem(entry, definition.space) ?? listedClassWeightProblem(entry, definition.space);
    if (problem) problems.push([`tryFirst[${index}]`, problem]);
  });
  problems.push(...spaceClassWeightProblems(definition));
  problems.push(...encodingSettingProblems(definition));
  if (data.features?.includes(data.target)) {
    problems.push(['data.features', `lists the target column "${data.target}"; the target cannot be an input`]);
  }
  return problems;
}

/** An encoding setting without the encoding it sets is refused, as a setting that would do nothing. */
function encodingSettingProblems(definition: StudyDefinition): [string, string][] {
  const { space } = definition;
  const uses = (kind: 'piecewise-linear' | 'periodic'): boolean => space.numericEncoding?.includes(kind) ?? false;
  const problems: [string, string][] = [];
  if (space.encodingBins !== undefined && !uses('piecewise-linear')) problems.push(['space.encodingBins', 'sets the piecewise-linear encoding; give space.numericEncoding with "piecewise-linear", or leave it out']);
  for (const key of ['periodicFrequencies', 'periodicScale'] as const) {
    if (space[key] !== undefined && !uses('periodic')) problems.push([`space.${key}`, 'sets the periodic encoding; give space.numericEncoding with "periodic", or leave it out']);
  }
  return problems;
}

/** The space's class weightings: classification only, and not together with `data.classWeights`. */
function spaceClassWeightProblems(definition: StudyDefinition): [string, string][] {
  const { space, data } = definition;
  if (!space.classWeights) return space.effectiveBeta !== undefined ? [['space.effectiveBeta', 'is the beta of the "effective" class weighting; give space.classWeights with "effective", or leave it out']] : [];
  if (data.task === 'regression') return [['space.classWeights', 'is for classification; leave it out for a regression task']];
  if (data.classWeights !== undefined) return [['space.classWeights', 'and data.classWeights both set the class weights; keep one (space.classWeights lets the goal choose)']];
  return [];
}

/**
 * The warning when the goal is accuracy and the class weights are fixed to balanced (by
 * `data.classWeights`, or a space whose only weighting is balanced): balanced weights buy the rare
 * classes' recall with accuracy, so the goal and the training loss pull apart.
 */
function weightNotes(definition: StudyDefinition, file: string): string[] {
  if (resolveGoal(definition).metric !== 'accuracy') return [];
  const spaceChoices = definition.space.classWeights;
  const key = definition.data.classWeights === 'balanced' ? 'data.classWeights is "balanced"' : spaceChoices?.length === 1 && spaceChoices[0] === 'balanced' ? 'space.classWeights is only "balanced"' : undefined;
  if (!key) return [];
  return [
    `${file}: warning: ${key} while the goal is accuracy; balanced weights trade accuracy for the rare classes' recall, so the study may rank networks by a score their weights work against: use "none", a choice of weightings in space.classWeights, or a goal such as macroF1`,
  ];
}

/** Validate a data-only definition (see `dataOnlyStudySchema`); `file` is used in messages only. */
export function validateDataOnly(raw: unknown, file: string): DataOnlyStudy {
  const result = dataOnlyStudySchema.safeParse(raw);
  if (!result.success) throw new UserError('E_STUDY_INVALID', result.error.issues.map((issue) => formatIssue(file, issue, raw, dataOnlyStudySchema)).join('\n'));
  return result.data;
}

/** Validate an already parsed definition; `file` is used in messages only. Old key names are translated silently. */
export function validateStudy(raw: unknown, file: string): StudyDefinition {
  return validated(translateOldKeys(raw, file).raw, file);
}

function validated(raw: unknown, file: string): StudyDefinition {
  const result = studySchema.safeParse(raw);
  if (!result.success) {
    const lines = result.error.issues.map((issue) => formatIssue(file, issue, raw, studySchema));
    throw new UserError('E_STUDY_INVALID', lines.join('\n'));
  }
  const problems = crossFieldProblems(result.data);
  if (problems.length > 0) {
    throw new UserError('E_STUDY_INVALID', problems.map(([where, what]) => `${file}: ${where}: ${what}`).join('\n'));
  }
  return result.data;
}

/** Read, parse and validate a study definition file. Throws a {@link UserError} on any problem. */
export async function loadStudy(file: string): Promise<LoadedStudy> {
  const { raw, absolute } = await readStudyJson(file);
  const translated = translateOldKeys(raw, file);
  const definition = validated(translated.raw, file);
  return { definition, file: absolute, notes: [...translated.notes, ...weightNotes(definition, file)] };
}

/** Read and parse a study definition file as JSON, not yet validated. Throws a {@link UserError} on an unreadable or malformed file. */
export async function readStudyJson(file: string): Promise<{ raw: unknown; absolute: string }> {
  const absolute = path.resolve(file);
  let bytes: Buffer;
  try {
    bytes = await readFile(absolute);
  } catch (error) {
    const reason = (error as NodeJS.ErrnoException).code === 'ENOENT' ? 'no such file' : (error as Error).message;
    throw new UserError('E_STUDY_FILE', `${file}: cannot read the study definition (${reason})`);
  }
  const utf16 = utf16Kind(bytes.subarray(0, 4));
  if (utf16 !== undefined) throw new UserError('E_STUDY_JSON', `${file}: is ${utf16} text; save the study definition as UTF-8`);
  // A byte order mark is not JSON, but editors write one; it is dropped as it is for a CSV.
  let text = bytes.toString('utf8');
  if (text.startsWith('\ufeff')) text = text.slice(1);
  if (text.trim() === '') throw new UserError('E_STUDY_JSON', `${file}: the file is empty; expected a JSON study definition`);
  // A NUL byte never occurs in JSON text; name the likely cause instead of a JSON parse code.
  const nul = text.indexOf('\u0000');
  if (nul >= 0) {
    const { line } = lineAndColumn(text, nul);
    throw new UserError('E_STUDY_JSON', `${file}: line ${line}: contains a NUL byte; this looks like a binary file, expected a JSON study definition (UTF-8 text)`);
  }
  return { raw: parseJson(text, file), absolute };
}

/** What messages call a definition given as an object rather than a file. */
export const DEFINITION_OBJECT_LABEL = 'study definition (object)';

/**
 * Validate a definition given as an object (the library's alternative to a file). Its `data.csv` is
 * relative to `baseDir`; messages name it {@link DEFINITION_OBJECT_LABEL}.
 * @throws UserError on any problem, exactly as {@link loadStudy} would for the same JSON in a file.
 */
export function studyFromObject(definition: unknown, baseDir: string): LoadedStudy {
  const { raw, notes } = translateOldKeys(definition, DEFINITION_OBJECT_LABEL);
  const checked = validated(raw, DEFINITION_OBJECT_LABEL);
  return { definition: checked, file: path.join(path.resolve(baseDir), DEFINITION_OBJECT_LABEL), notes: [...notes, ...weightNotes(checked, DEFINITION_OBJECT_LABEL)] };
}
