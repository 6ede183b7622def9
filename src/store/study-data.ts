import { isDeepStrictEqual } from 'node:util';
import { prepareData } from '../data/index.js';
import type { PreparedData } from '../data/types.js';
import { UserError } from '../errors.js';
import type { StudyDocument } from './types.js';

/**
 * The study's data prepared again from its CSV, refused unless it gives the preprocessing recipe the
 * study recorded (same columns, categories, scaling and imputation, so the same split and encoding).
 * The one "data unchanged since the study" check: `resume` and `export --retrain` both use it.
 * @throws UserError (E_DATA_CHANGED) naming the CSV and the study file.
 */
export async function studyData(doc: StudyDocument, studyFile: string): Promise<PreparedData> {
  const { data } = await prepareData(doc.definition.data, doc.definitionFile);
  if (!isDeepStrictEqual(JSON.parse(JSON.stringify(data.recipe)), doc.recipe)) {
    throw new UserError(
      'E_DATA_CHANGED',
      `${studyFile}: the CSV ${doc.data.file} no longer gives the preprocessing the study recorded (the file changed since the study ran); restore the original CSV or start a new study`,
    );
  }
  return data;
}
