import { readFileSync } from 'node:fs';
import { migrateStudyDocument } from '../../src/store/migrate.js';
import type { StudyDocument } from '../../src/store/types.js';

/**
 * A study document of `test/fixtures/studies/<name>.json`, in the current format. The fixtures are
 * version 1 files (no job records); they are migrated exactly as opening them with the store does.
 */
export function studyFixture(name: string): StudyDocument {
  const doc = JSON.parse(readFileSync(new URL(`../fixtures/studies/${name}.json`, import.meta.url), 'utf8')) as { version: number };
  return migrateStudyDocument(doc);
}
