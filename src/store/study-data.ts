import path from 'node:path';
import { isDeepStrictEqual } from 'node:util';
import { dataHashes } from '../data/dataset-id.js';
import type { DataLoadOptions } from '../data/events.js';
import { prepareData } from '../data/index.js';
import type { PreparedData } from '../data/types.js';
import { UserError } from '../core/errors.js';
import type { StudyDocument } from './types.js';
import { encodingSettingsOf, searchesPreprocessing } from '../core/configuration.js';

/** The CSV a study definition names, as an absolute path. */
export function studyCsvPath(doc: Pick<StudyDocument, 'definition' | 'definitionFile'>): string {
  return path.resolve(path.dirname(doc.definitionFile), doc.definition.data.csv);
}

export interface StudyDataOptions extends DataLoadOptions {
  /** Go on although the CSV's content hash differs from the recorded one (recorded in `doc.dataChanges`). @default false */
  allowChangedData?: boolean;
  /** The command that asked, for the record, e.g. `resume`. */
  command: string;
}

/**
 * The study's data prepared again from its CSV. The one "data unchanged since the study" check:
 * `resume` and `export --retrain` both use it. A CSV whose content hash differs from the recorded one
 * is refused unless `allowChangedData` (then the change is recorded in the document); data that no
 * longer gives the recorded preprocessing recipe is refused always.
 * @throws UserError (E_DATA_CHANGED) naming the CSV and the study file.
 */
export async function studyData(doc: StudyDocument, studyFile: string, options: StudyDataOptions): Promise<PreparedData & { csvSha256: string }> {
  const csv = studyCsvPath(doc);
  const { data, csvSha256 } = await prepareData(doc.definition.data, doc.definitionFile, {
    started: true,
    foldSeed: doc.definition.sampler.seed,
    choices: searchesPreprocessing(doc.definition.space),
    encoding: encodingSettingsOf(doc.definition.space),
    ...(options.signal ? { signal: options.signal } : {}),
    ...(options.onDataEvent ? { onDataEvent: options.onDataEvent } : {}),
  });
  const hashes = await dataHashes(csv, data, csvSha256);
  if (doc.dataHashes && hashes.csv !== doc.dataHashes.csv) {
    if (!options.allowChangedData) {
      throw new UserError(
        'E_DATA_CHANGED',
        `${csv}: the file changed since the study started (content hash ${hashes.csv.slice(7, 19)}, recorded ${doc.dataHashes.csv.slice(7, 19)} in ${studyFile}); restore it, or pass --allow-changed-data to go on with it (the study file will record that)`,
      );
    }
    (doc.dataChanges ??= []).push({ at: new Date().toISOString(), csv: hashes.csv, command: options.command });
  }
  if (!isDeepStrictEqual(JSON.parse(JSON.stringify(data.recipe)), doc.recipe)) {
    throw new UserError(
      'E_DATA_CHANGED',
      `${csv}: the data no longer give the preprocessing recorded in ${studyFile} (columns, categories or scaling changed since the study started); restore the original CSV or start a new study`,
    );
  }
  return Object.assign(data, { csvSha256 });
}
