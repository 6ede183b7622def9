import { existsSync } from 'node:fs';
import { mkdir, readdir, rm } from 'node:fs/promises';
import path from 'node:path';
import { dataHashes } from '../data/dataset-id.js';
import { prepareData } from '../data/index.js';
import type { DataLoadOptions } from '../data/events.js';
import { UserError, studyStoppedError } from '../core/errors.js';
import { writeFailure } from '../files/write-cause.js';
import { checkCapacity } from '../study/capacity.js';
import { checkFootprint, mostInputs } from '../study/footprint.js';
import { resolveGoal } from '../study/definition.js';
import { encodingSettingsOf, isDefaultPreprocessing, searchesPreprocessing, type PreprocessingChoice } from '../core/configuration.js';
import { loadStudy, type LoadedStudy } from '../study/load.js';
import { LOCK_FILES, lockStudy } from '../store/lock.js';
import { writeFileDurably } from '../files/durable-write.js';
import { splitRecordOf, writeSplitRecord } from '../store/split-record.js';
import { StudyStore, studyFilePath } from '../store/study-store.js';
import { executeStudy, type ExecuteOptions, type StudyOutcome } from './execute-study.js';

export interface RunOptions extends ExecuteOptions, Pick<DataLoadOptions, 'onDataEvent'> {
  /** Run directory. @default `runs/<study name>` under the current directory */
  out?: string;
  /** Replace a run directory that already holds a study. @default false */
  force?: boolean;
  /**
   * Write the definition (as validated, every default spelled out) to its `file`, inside the run
   * directory, before the study starts: for a study rungwise defined from its data alone. @default false
   */
  writeDefinition?: boolean;
}

/**
 * Launch a study from its definition file (or one already loaded with `loadStudy`): validate it,
 * prepare the data, then search, record and rank. Bad input throws a {@link UserError} before
 * anything is written.
 */
export async function runStudy(study: string | LoadedStudy, options: RunOptions = {}): Promise<StudyOutcome> {
  const { definition, file, notes } = typeof study === 'string' ? await loadStudy(study) : study;
  for (const message of notes ?? []) options.onEvent?.({ type: 'note', message });
  const { data, summary, csvSha256 } = await prepareData(definition.data, file, {
    foldSeed: definition.sampler.seed,
    choices: searchesPreprocessing(definition.space),
    encoding: encodingSettingsOf(definition.space),
    ...(options.signal ? { signal: options.signal } : {}),
    ...(options.onDataEvent ? { onDataEvent: options.onDataEvent } : {}),
  });
  const outputCount = data.recipe.task === 'multiclass' ? (data.recipe.classes?.length ?? 0) : 1;
  // Each preprocessing choice's inputs (an encoding widens the first layer many times over): the largest network is sized by the most.
  const inputsOf = (choice: PreprocessingChoice): number => (isDefaultPreprocessing(choice) || !data.inputCountFor ? data.recipe.inputCount : data.inputCountFor(choice));
  const threads = options.threads !== undefined ? { threads: options.threads } : {};
  checkCapacity({ definition, inputCount: mostInputs(definition.space, data.recipe.inputCount, inputsOf), outputCount, ...threads }, file);
  checkFootprint(definition, { inputs: data.recipe.inputCount, outputs: outputCount }, file, inputsOf);
  const dir = path.resolve(options.out ?? path.join('runs', definition.name));
  const lock = await mkdir(dir, { recursive: true })
    .then(() => lockStudy(dir))
    .catch(async (error: unknown) => {
      throw studyStoppedError(await writeFailure(error, dir), dir, false) ?? error;
    });
  let saved = false;
  try {
    if (existsSync(studyFilePath(dir))) {
      if (!options.force) {
        throw new UserError('E_RUN_DIR_TAKEN', `${dir}: already holds a study; use \`rungwise resume ${dir}\` to continue it, or pass --force to replace it`);
      }
      await clearRunDir(dir);
    }
    if (options.writeDefinition) await writeFileDurably(file, `${JSON.stringify(definition, null, 2)}\n`);
    // Before the study file: a study file without its split record is one from before the record, which resume completes.
    await writeSplitRecord(dir, splitRecordOf(data, definition.data, { file: definition.data.csv, sha256: csvSha256 }));
    const now = new Date().toISOString();
    const store = await StudyStore.create(dir, {
      format: 'rungwise-study',
      version: 3,
      name: definition.name,
      definition,
      definitionFile: file,
      goal: resolveGoal(definition),
      data: summary,
      recipe: data.recipe,
      state: 'running',
      createdAt: now,
      updatedAt: now,
      trials: [],
      dataHashes: await dataHashes(path.resolve(path.dirname(file), definition.data.csv), data, csvSha256),
    }, options.onWriteStep);
    saved = true;
    return await executeStudy(store, data, options);
  } catch (error) {
    throw studyStoppedError(await writeFailure(error, dir), dir, saved) ?? error;
  } finally {
    // A vanished or read-only folder may refuse even this; the lock then goes stale and the next run takes it over.
    await lock.release().catch(() => undefined);
  }
}

/** Empty a run directory for `--force`, keeping this process's lock. */
async function clearRunDir(dir: string): Promise<void> {
  for (const entry of await readdir(dir)) {
    if (!LOCK_FILES.includes(entry)) await rm(path.join(dir, entry), { recursive: true, force: true });
  }
}

export type { StudyOutcome } from './execute-study.js';
