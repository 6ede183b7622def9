/**
 * Definitions and study files written with the sampler options' old names are read with the new
 * names and one note line; a file with both an old and its new name is refused as before.
 */
import { readFile, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { createSampler } from '../src/samplers/index.js';
import { runStudy } from '../src/runner/run-study.js';
import { StudyStore, studyFilePath } from '../src/store/study-store.js';
import { loadStudy } from '../src/study/load.js';
import { runCli } from './helpers/cli.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

const OLD_TPE = { kind: 'tpe', seed: 3, startupTrials: 4, candidates: 12, priorWeight: 2, candidateBandwidthFactor: 1.5, batchSize: 2 };

describe('old sampler option names', () => {
  it('a definition with them is read with the new names and one note naming each', async () => {
    const file = await writeTinyStudy(tinyStudy({ sampler: OLD_TPE as never }));
    const loaded = await loadStudy(file);
    expect(loaded.definition.sampler).toMatchObject({ kind: 'tpe', trialsBeforeModel: 4, drawsPerProposal: 12, wideKernelWeight: 2, drawWidening: 1.5, batchSize: 2 });
    expect(loaded.notes).toEqual([
      `${file}: sampler: read the old option names "startupTrials" as "trialsBeforeModel", "candidates" as "drawsPerProposal", "priorWeight" as "wideKernelWeight", "candidateBandwidthFactor" as "drawWidening"; rename them in the definition`,
    ]);
    const bohb = await writeTinyStudy(tinyStudy({ sampler: { kind: 'tpe-hyperband', seed: 1, eta: 3, minEpochs: 1, randomFraction: 0.5, minResults: 3 } as never }));
    expect((await loadStudy(bohb)).definition.sampler).toMatchObject({ randomShare: 0.5, smallestGroup: 3 });
  });

  it('a definition with an old name beside its new one is refused, naming the old one', async () => {
    const file = await writeTinyStudy(tinyStudy({ sampler: { ...OLD_TPE, trialsBeforeModel: 4 } as never }));
    const result = await runCli(['run', file, '--out', path.join(path.dirname(file), 'run')]);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('startupTrials');
  });

  it('a study file written with them opens with the new names and a note, and its sampler can be made again', async () => {
    const file = await writeTinyStudy(tinyStudy({ sampler: { kind: 'tpe', seed: 3, trialsBeforeModel: 4, batchSize: 2 }, budget: { trials: 4, maxEpochs: 2 }, threads: 1 }));
    const out = path.join(path.dirname(file), 'run');
    await runStudy(file, { out });
    // The study file as an earlier rungwise wrote it: the old name in the recorded definition.
    const studyFile = studyFilePath(out);
    const text = await readFile(studyFile, 'utf8');
    await writeFile(studyFile, text.replace('"trialsBeforeModel":4', '"startupTrials":4'));
    const store = await StudyStore.open(out);
    expect(store.doc.definition.sampler).toMatchObject({ kind: 'tpe', trialsBeforeModel: 4 });
    expect(store.doc.definition.sampler).not.toHaveProperty('startupTrials');
    expect(store.notes).toEqual([
      `${studyFile}: definition: sampler: read the old option name "startupTrials" as "trialsBeforeModel"; the study file keeps the old names until resume saves it`,
    ]);
    expect(() => createSampler(store.doc.definition)).not.toThrow();
    // Reading never writes: the file keeps its old name until a resume saves it.
    expect(await readFile(studyFile, 'utf8')).toContain('"startupTrials":4');
  });
});

describe('the old key and flag "workers" (now "threads": a worker is a `rungwise worker` process)', () => {
  it('a definition with "workers" is read as "threads", with one note saying what to rename', async () => {
    const { threads: _threads, ...rest } = tinyStudy({ threads: 1 });
    const file = await writeTinyStudy({ ...rest, workers: 3 } as never);
    const loaded = await loadStudy(file);
    expect(loaded.definition.threads).toBe(3);
    expect(loaded.definition).not.toHaveProperty('workers');
    expect(loaded.notes).toEqual([
      `${file}: read the old key "workers" as "threads" (threads of this machine; a worker is a rungwise worker process); rename it in the definition`,
    ]);
  });

  it('a definition with both "workers" and "threads" is refused, naming the old key', async () => {
    const file = await writeTinyStudy({ ...tinyStudy({ threads: 1 }), workers: 1 } as never);
    const result = await runCli(['run', file, '--out', path.join(path.dirname(file), 'run')]);
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('workers');
  });

  it('a study file with "workers" in its definition and totals opens with "threads", and its summary reads them', async () => {
    const file = await writeTinyStudy(tinyStudy({ budget: { trials: 2, maxEpochs: 1 }, threads: 1 }));
    const out = path.join(path.dirname(file), 'run');
    await runStudy(file, { out });
    const studyFile = studyFilePath(out);
    const doc = JSON.parse(await readFile(studyFile, 'utf8')) as { definition: Record<string, unknown>; totals: Record<string, unknown> };
    // As an earlier rungwise wrote it.
    const { threads, ...definition } = doc.definition;
    const { threads: sessionThreads, threadUtilisation, ...totals } = doc.totals;
    await writeFile(studyFile, JSON.stringify({ ...doc, definition: { ...definition, workers: threads }, totals: { ...totals, workers: sessionThreads, workerUtilisation: threadUtilisation } }));
    const store = await StudyStore.open(out);
    expect(store.doc.definition.threads).toBe(1);
    expect(store.doc.totals).toMatchObject({ threads: 1, threadUtilisation });
    expect(store.doc.totals).not.toHaveProperty('workers');
    expect(store.notes).toEqual([`${studyFile}: definition: read the old key "workers" as "threads" (threads of this machine; a worker is a rungwise worker process); the study file keeps the old names until resume saves it`]);
  });

  it('--workers on the command line is read as --threads, with a note', async () => {
    const file = await writeTinyStudy(tinyStudy({ budget: { trials: 1, maxEpochs: 1 } }));
    const result = await runCli(['run', file, '--out', path.join(path.dirname(file), 'run'), '--workers', '1']);
    expect(result.code).toBe(0);
    expect(result.stderr).toContain('--workers is the old name of --threads (a worker is a `rungwise worker` process); read as --threads');
    expect(result.stderr).toMatch(/running study \S+ on 1 thread:/);
  });
});
