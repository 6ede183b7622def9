import { mkdtemp, readFile, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { StudyStore, studyFilePath } from '../src/store/study-store.js';
import type { StudyDocument } from '../src/store/types.js';

/** A trial record with every field the study file's check reads; `fields` overrides some. */
function trialRecord(id: number, fields: Partial<StudyDocument['trials'][number]> = {}): StudyDocument['trials'][number] {
  return {
    id,
    configuration: { depth: 1, width: 4, activation: 'relu', learningRate: 0.01, batchSize: 16, optimizer: 'adam', l2: 0, dropout: 0 },
    seed: 1,
    status: 'waiting',
    rung: 0,
    bracket: 0,
    epochsTrained: 0,
    curve: [],
    score: null,
    rungScores: [],
    workerSeconds: 0,
    retries: 0,
    jobs: [],
    ...fields,
  };
}

function documentNamed(name: string): StudyDocument {
  return {
    format: 'rungwise-study',
    version: 3,
    name,
    definition: {
      name,
      data: { csv: 'x.csv', target: 'y', task: 'binary' },
      budget: { trials: 4, maxEpochs: 3 },
      sampler: { kind: 'random' },
      space: {},
    } as unknown as StudyDocument['definition'],
    definitionFile: '/x/study.json',
    goal: { metric: 'accuracy', better: 'higher' },
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

  it('calls an injected write-step hook at each step of every write (how tests kill a write half-way)', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-store-'));
    const steps: string[] = [];
    const store = await StudyStore.create(dir, documentNamed('s'), (step, write) => steps.push(`${step}:${write}`));
    await store.save();
    expect(steps).toEqual(['after-unlink:1', 'after-link:1', 'after-unlink:2', 'after-link:2']);
    const reopened = await StudyStore.open(dir, (step, write) => steps.push(`reopened ${step}:${write}`));
    await reopened.save();
    expect(steps.slice(4)).toEqual(['reopened after-unlink:1', 'reopened after-link:1']);
  });

  it('coalesces saves requested while a write is under way, and loses none', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-store-'));
    const store = await StudyStore.create(dir, documentNamed('s'));
    const saves: Promise<void>[] = [];
    for (let i = 0; i < 20; i++) {
      store.doc.trials.push(trialRecord(i));
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

  it('refuses a study file of a version it does not know, naming the versions it reads', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-store-'));
    await writeFile(studyFilePath(dir), JSON.stringify({ ...documentNamed('s'), version: 4 }));
    await expect(StudyStore.open(dir)).rejects.toThrow(`${studyFilePath(dir)}: study file version 4 is not supported (this rungwise reads versions 1, 2, 3)`);
  });

  it('refuses a hand-edited field of the wrong type in one line naming the file and the field (exit code 2), and leaves the file as it was', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-store-'));
    const store = await StudyStore.create(dir, documentNamed('s'));
    store.doc.trials.push(trialRecord(0, { score: 0.5, rungScores: [0.5] }));
    await store.save();
    const file = studyFilePath(dir);
    const edited = (await readFile(file, 'utf8')).replace('"score":0.5', '"score":"high"');
    await writeFile(file, edited);
    const error = await StudyStore.open(dir).then(
      () => undefined,
      (caught: unknown) => caught as { message: string; exitCode: number },
    );
    expect(error?.exitCode).toBe(2);
    expect(error?.message.split('\n')).toEqual([
      `${file}: trials[0].score: found "high", expected a number or null; the study file was edited or damaged: correct the field, or copy ${file}.prev over it`,
    ]);
    expect(await readFile(file, 'utf8')).toBe(edited);
  });

  it('tells how to create a study when the directory holds none', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-store-'));
    await expect(StudyStore.open(dir)).rejects.toThrow('no study file here; run `rungwise run <study.json>');
  });
});

describe('the curve log', () => {
  const point = (epoch: number) => ({ epoch, trainLoss: 1 / epoch, validationLoss: 1 / epoch, metrics: { accuracy: epoch / 10 }, seconds: 0.1 });
  const trialWith = (id: number, epochs: number) =>
    trialRecord(id, { epochsTrained: epochs, curve: Array.from({ length: epochs }, (_, i) => point(i + 1)) });

  it('keeps curves out of study.json and gives them back on reading', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-store-'));
    const store = await StudyStore.create(dir, documentNamed('s'));
    store.doc.trials.push(trialWith(0, 3), trialWith(1, 2));
    await store.save();
    const raw = JSON.parse(await readFile(studyFilePath(dir), 'utf8')) as { trials: Record<string, unknown>[] };
    expect(raw.trials.every((t) => !('curve' in t))).toBe(true);
    const read = await StudyStore.read(dir);
    expect(read.trials.map((t) => t.curve.length)).toEqual([3, 2]);
    expect(read.trials[0]!.curve[2]).toEqual(point(3));
  });

  it('appends only the curves that changed since the last write', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-store-'));
    const store = await StudyStore.create(dir, documentNamed('s'));
    store.doc.trials.push(trialWith(0, 1), trialWith(1, 1));
    await store.save();
    store.doc.trials[1]!.curve.push(point(2));
    await store.save();
    await store.save();
    const lines = (await readFile(path.join(dir, 'curves.jsonl'), 'utf8')).trim().split('\n');
    expect(lines.map((l) => (JSON.parse(l) as { trial: number }).trial)).toEqual([0, 1, 1]);
  });

  it('ignores a last line cut short by a kill', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-store-'));
    const store = await StudyStore.create(dir, documentNamed('s'));
    store.doc.trials.push(trialWith(0, 2));
    await store.save();
    await writeFile(path.join(dir, 'curves.jsonl'), `${await readFile(path.join(dir, 'curves.jsonl'), 'utf8')}{"trial":0,"curve":[{"ep`);
    expect((await StudyStore.read(dir)).trials[0]!.curve).toHaveLength(2);
  });
});

describe('a write under way', () => {
  it('records the document as it was when the write began, even if it changes while the write waits', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-store-'));
    const store = await StudyStore.create(dir, documentNamed('s'));
    const trial = trialRecord(0, { status: 'training' });
    store.doc.trials.push(trial);
    const saving = store.save();
    // The run loop settles the trial while the save waits for the disk.
    trial.rungScores.push(0.9);
    trial.epochsTrained = 4;
    await saving;
    const written = JSON.parse(await readFile(studyFilePath(dir), 'utf8')) as StudyDocument;
    expect(written.trials[0]).toMatchObject({ status: 'training', epochsTrained: 0, rungScores: [] });
  });
});
