import { mkdtemp, readFile, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { StudyStore, studyFilePath } from '../src/store/study-store.js';
import type { StudyDocument } from '../src/store/types.js';

function documentNamed(name: string): StudyDocument {
  return {
    format: 'rungwise-study',
    version: 1,
    name,
    definition: {} as StudyDocument['definition'],
    definitionFile: '/x/study.json',
    objective: { metric: 'accuracy', direction: 'maximize' },
    data: { file: 'x.csv', rows: 0, columns: 0, trainRows: 0, validationRows: 0, testRows: 0, inputCount: 0, missingValues: 0 },
    recipe: { task: 'binary', target: 'y', features: [], inputCount: 0 },
    state: 'running',
    createdAt: '2026-01-01T00:00:00.000Z',
    updatedAt: '2026-01-01T00:00:00.000Z',
    trials: [],
  };
}

describe('the study file', () => {
  it('round-trips a document and keeps the previous version beside it', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-store-'));
    const store = await StudyStore.create(dir, documentNamed('first'));
    store.doc.name = 'second';
    await store.save();
    expect((await StudyStore.read(dir)).name).toBe('second');
    const previous = JSON.parse(await readFile(`${studyFilePath(dir)}.prev`, 'utf8')) as StudyDocument;
    expect(previous.name).toBe('first');
  });

  it('coalesces saves requested while a write is under way, and loses none', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-store-'));
    const store = await StudyStore.create(dir, documentNamed('s'));
    const saves: Promise<void>[] = [];
    for (let i = 0; i < 20; i++) {
      store.doc.trials.push({ id: i } as StudyDocument['trials'][number]);
      saves.push(store.save());
    }
    await Promise.all(saves);
    expect((await StudyStore.read(dir)).trials).toHaveLength(20);
  });

  it('refuses a truncated file with one line naming it and the kept previous version, and leaves it untouched', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-store-'));
    await StudyStore.create(dir, documentNamed('s'));
    const file = studyFilePath(dir);
    const text = await readFile(file, 'utf8');
    await writeFile(file, text.slice(0, 40));
    await expect(StudyStore.open(dir)).rejects.toThrow(
      new RegExp(`^${file.replaceAll('.', '\\.')}: cannot open the study file: it is not valid JSON \\(40 bytes, truncated or corrupted\\).*${'\\.prev'}`),
    );
    expect(await readFile(file, 'utf8')).toBe(text.slice(0, 40));
  });

  it('refuses a JSON file that is not a study file', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-store-'));
    await writeFile(studyFilePath(dir), '{"hello": 1}');
    await expect(StudyStore.open(dir)).rejects.toThrow('not a rungwise study file');
  });

  it('tells how to create a study when the directory holds none', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-store-'));
    await expect(StudyStore.open(dir)).rejects.toThrow('no study file here; run `rungwise run <study.json>');
  });
});
