/**
 * What a study meets besides bad input: a full disk, a curve log cut in the middle of a line, lost
 * checkpoints, a CSV changed between runs, a run directory that is not a folder. Each ends with the
 * same result as an uninterrupted run, or stops with one line that says how to go on.
 */
import { execFileSync } from 'node:child_process';
import { readdirSync } from 'node:fs';
import { appendFile, copyFile, mkdir, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { prepareData } from '../src/data/index.js';
import { resumeStudy } from '../src/runner/resume-study.js';
import { loadStudy } from '../src/study/load.js';
import { runStudy, type StudyOutcome } from '../src/runner/run-study.js';
import type { StudyEvent } from '../src/runner/events.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import { StudyStore } from '../src/store/study-store.js';
import type { StudyDocument } from '../src/store/types.js';
import { runCli } from './helpers/cli.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

// Networks and rungs large enough that jobs are still running when the study is stopped, on the engine too.
const halving: StudyDefinitionInput = tinyStudy({
  space: { ...tinyStudy().space, depth: { min: 2, max: 3 }, width: { min: 64, max: 256, log: true } },
  budget: { trials: 12, maxEpochs: 90 },
  sampler: { kind: 'successive-halving', seed: 2, eta: 3, minEpochs: 10 },
});

/** Everything about the trials that must not depend on interruptions. */
const resultOf = (doc: StudyDocument) =>
  doc.trials
    .map((t) => ({ id: t.id, status: t.status, epochs: t.epochsTrained, objective: t.score, curve: t.curve.map(({ seconds: _s, ...p }) => p) }))
    .sort((a, b) => a.id - b.id);

let reference: StudyOutcome | undefined;
async function uninterrupted(): Promise<StudyOutcome> {
  const file = await writeTinyStudy(halving);
  reference ??= await runStudy(file, { out: path.join(path.dirname(file), 'reference') });
  return reference;
}

/** Run the halving study and stop it (as Ctrl-C would) at the first event `stopAt` picks. */
async function interruptedAt(stopAt: (event: StudyEvent) => boolean): Promise<{ file: string; dir: string }> {
  const file = await writeTinyStudy(halving);
  const dir = path.join(path.dirname(file), 'run');
  const abort = new AbortController();
  await runStudy(file, {
    out: dir,
    signal: abort.signal,
    onEvent: (event) => {
      if (!abort.signal.aborted && stopAt(event)) abort.abort();
    },
  });
  return { file, dir };
}

/** Stopped once `jobs` jobs have been saved (how far the study got by then depends on the machine's speed). */
const interruptedAfter = (jobs: number) => interruptedAt((e) => e.type === 'trial-finished' && e.progress.jobsDone >= jobs);
/**
 * Stopped as the first promotion starts: the whole first rung is saved and the other promoted trials
 * wait, paused at a checkpoint, whatever the machine's speed.
 */
const interruptedAtFirstPromotion = () => interruptedAt((e) => e.type === 'job-started' && e.job.rung === 1);

/**
 * Change one digit of one row that is not a training row: the preprocessing (learned from training rows
 * only) stays the same, so only the content hash can see the edit.
 */
async function editOutsideTheTrainingRows(csv: string, definitionFile: string): Promise<void> {
  const original = await readFile(csv, 'utf8');
  const { definition } = await loadStudy(definitionFile);
  const { data: before } = await prepareData(definition.data, definitionFile);
  const lines = original.split('\n');
  for (let row = lines.length - 1; row > 0; row--) {
    if (!/\d/.test(lines[row] ?? '')) continue;
    const edited = [...lines];
    edited[row] = lines[row]!.replace(/\d(?=[^\d]*$)/, (d) => String((Number(d) + 1) % 10));
    await writeFile(csv, edited.join('\n'));
    const { data: after } = await prepareData(definition.data, definitionFile);
    if (JSON.stringify(after.recipe) === JSON.stringify(before.recipe)) return;
  }
  throw new Error('no row could be edited without changing the preprocessing');
}

const notesOf = (events: StudyEvent[]): string[] => events.flatMap((e) => (e.type === 'note' ? [e.message] : []));

describe('a curve log cut in the middle of its last line', () => {
  it('is noted, cut off before the next append, and the resumed study ends as an uninterrupted one', async () => {
    const { dir } = await interruptedAfter(5);
    await appendFile(path.join(dir, 'curves.jsonl'), '{"trial":11,"curve":[{"epoch":1,"trainLo');
    const events: StudyEvent[] = [];
    const resumed = await resumeStudy(dir, { onEvent: (e) => events.push(e) });
    expect(notesOf(events)).toEqual([expect.stringMatching(/curves\.jsonl: line \d+ was cut short .* it is ignored and removed at the next write$/)]);
    expect(resultOf(resumed.doc)).toEqual(resultOf((await uninterrupted()).doc));
    const lines = (await readFile(path.join(dir, 'curves.jsonl'), 'utf8')).trimEnd().split('\n');
    for (const line of lines) expect(() => JSON.parse(line)).not.toThrow();
    const ranking = await runCli(['ranking', dir]);
    expect(ranking.code).toBe(0);
    expect((await StudyStore.open(dir)).notes).toEqual([]);
  });
});

describe("a curve log whose last whole line was cut after the study file recorded its job", () => {
  it("runs that trial's last job again on resume, says so, and ends as an uninterrupted study", async () => {
    const { dir } = await interruptedAfter(5);
    const log = path.join(dir, 'curves.jsonl');
    const lines = (await readFile(log, 'utf8')).trimEnd().split('\n');
    const lost = JSON.parse(lines.at(-1)!) as { trial: number; curve: { epoch: number }[] };
    // Cut the last line in its middle: the study file still records the job whose epochs it held.
    await writeFile(log, `${lines.slice(0, -1).join('\n')}\n${lines.at(-1)!.slice(0, 40)}`);
    const recorded = (await StudyStore.read(dir)).trials.find((t) => t.id === lost.trial)!;
    expect(recorded.curve.length).toBeLessThan(recorded.epochsTrained);
    const events: StudyEvent[] = [];
    const resumed = await resumeStudy(dir, { onEvent: (e) => events.push(e) });
    expect(notesOf(events)).toContainEqual(expect.stringMatching(new RegExp(`^trial ${lost.trial}: the curve log lost epochs \\d+-\\d+; that job runs again$`)));
    const rerun = events.filter((e) => e.type === 'job-started' && e.job.trialId === lost.trial);
    expect(rerun.length).toBeGreaterThan(0);
    expect(resultOf(resumed.doc)).toEqual(resultOf((await uninterrupted()).doc));
  });
});

describe('lost checkpoints', () => {
  it('are trained again from epoch 0, said once, with the same result as an uninterrupted run', async () => {
    const { dir } = await interruptedAtFirstPromotion();
    const before = (await StudyStore.read(dir)).trials.filter((t) => t.status === 'waiting');
    expect(before.length).toBeGreaterThan(0);
    await rm(path.join(dir, 'checkpoints'), { recursive: true, force: true });
    const events: StudyEvent[] = [];
    const resumed = await resumeStudy(dir, { onEvent: (e) => events.push(e) });
    expect(notesOf(events)).toEqual([expect.stringMatching(/has no checkpoint at epoch \d+; trials whose checkpoint is missing are trained again from epoch 0/)]);
    expect(resultOf(resumed.doc)).toEqual(resultOf((await uninterrupted()).doc));
    expect(resumed.doc.trials.filter((t) => t.status === 'failed')).toEqual([]);
    const retrained = resumed.doc.trials.filter((t) => t.jobs.some((j) => j.rung > 0 && !j.fromCheckpoint));
    expect(retrained.map((t) => t.id).sort()).toEqual(expect.arrayContaining(before.map((t) => t.id).filter((id) => retrained.some((r) => r.id === id))));
    expect(retrained.length).toBeGreaterThan(0);
  });
});

describe('a CSV changed between runs', () => {
  it('is refused on resume with one line naming it, unless told; going on is recorded in the study file', async () => {
    const { file, dir } = await interruptedAfter(4);
    const csv = path.join(path.dirname(file), 'tiny.csv');
    await editOutsideTheTrainingRows(csv, file);
    const refused = await runCli(['resume', dir]);
    expect(refused.code).toBe(2);
    expect(refused.stderr.trim().split('\n')).toEqual([expect.stringMatching(new RegExp(`^error: ${csv.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}: the file changed since the study started .*--allow-changed-data`))]);
    const resumed = await resumeStudy(dir, { allowChangedData: true });
    expect(resumed.doc.dataChanges).toEqual([expect.objectContaining({ command: 'resume', csv: expect.stringMatching(/^sha256:/) })]);
    expect((await StudyStore.read(dir)).dataChanges).toHaveLength(1);
  });
});

describe('a run directory that is not a folder', () => {
  it('gets one line naming it and the cause', async () => {
    const root = await mkdtemp(path.join(tmpdir(), 'rungwise-notdir-'));
    const file = path.join(root, 'plain-file');
    await writeFile(file, 'not a study');
    const result = await runCli(['resume', file]);
    expect(result.code).not.toBe(0);
    expect(result.stderr.trim().split('\n')).toHaveLength(1);
    expect(result.stderr).toContain(file);
    expect(result.stderr).not.toMatch(/internal error|ENOTDIR .*study\.owner\.json/);
  });
});

/** A real small file system where this machine allows mounting one (root with the right to mount). */
function mountTmpfs(dir: string, size: string): boolean {
  try {
    execFileSync('mount', ['-t', 'tmpfs', '-o', `size=${size}`, 'tmpfs', dir], { stdio: 'ignore' });
    return true;
  } catch {
    return false;
  }
}

describe('a full disk', () => {
  const mountPoint = path.join(tmpdir(), `rungwise-full-disk-${process.pid}`);
  let mounted = false;
  afterAll(() => {
    if (mounted) execFileSync('umount', [mountPoint], { stdio: 'ignore' });
  });

  it('stops the study with one line and the resume command, fails no trial, and a resume after freeing space ends as an uninterrupted run', async (context) => {
    await mkdir(mountPoint, { recursive: true });
    mounted = mountTmpfs(mountPoint, '32k');
    if (!mounted) context.skip('this machine does not allow mounting a small tmpfs (needs root with mount rights)');
    const file = await writeTinyStudy(halving);
    const dir = path.join(mountPoint, 'run');
    const stopped = await runCli(['run', file, '--out', dir]);
    expect(stopped.code).toBe(1);
    const errors = stopped.stderr.split('\n').filter((line) => line.startsWith('error:'));
    expect(errors).toEqual([`error: ${dir}: no space left on the device (ENOSPC); the study stopped and every trial saved so far is kept; fix that, then continue it with: rungwise resume ${dir}`]);
    const saved = await StudyStore.read(dir);
    expect(saved.trials.filter((t) => t.status === 'failed')).toEqual([]);
    // Free space: the same folder on a file system with room.
    execFileSync('mount', ['-o', 'remount,size=8m', mountPoint]);
    const resumed = await runCli(['resume', dir]);
    expect(resumed.code).toBe(0);
    expect(resultOf(await StudyStore.read(dir))).toEqual(resultOf((await uninterrupted()).doc));
  });
});

describe('a folder it may not write, and a disk full before the first save', () => {
  const mountPoint = path.join(tmpdir(), `rungwise-read-only-${process.pid}`);
  let mounted = false;
  afterAll(() => {
    if (mounted) execFileSync('umount', [mountPoint], { stdio: 'ignore' });
  });

  it('run, plot and export name the folder and the cause in one line, exit 2, say to run again (not resume), and write nothing', async (context) => {
    await mkdir(mountPoint, { recursive: true });
    mounted = mountTmpfs(mountPoint, '64k');
    if (!mounted) context.skip('this machine does not allow mounting a small tmpfs (needs root with mount rights)');
    const file = await writeTinyStudy(tinyStudy());
    const finished = path.join(path.dirname(file), 'finished');
    expect((await runCli(['run', file, '--out', finished, '--quiet'])).code).toBe(0);
    execFileSync('mount', ['-o', 'remount,ro', mountPoint]);
    const dir = path.join(mountPoint, 'run');
    const run = await runCli(['run', file, '--out', dir]);
    expect(run.code).toBe(2);
    const errors = run.stderr.split('\n').filter((line) => line.startsWith('error:'));
    expect(errors).toEqual([`error: ${mountPoint}: the file system is read-only (EROFS); nothing was saved; fix that or choose another --out, then run the study again`]);
    for (const command of ['plot', 'export']) {
      const out = path.join(mountPoint, command);
      const result = await runCli([command, finished, '--out', out]);
      expect(result.code, command).toBe(2);
      expect(result.stderr.trim().split('\n'), command).toEqual([`error: ${out}: the file system is read-only (EROFS); nothing was written; choose another --out`]);
    }
    expect(readdirSync(mountPoint)).toEqual([]);
  });

  it('a disk that fills before the study file is first saved: run says to run it again, exit 2', async (context) => {
    const full = `${mountPoint}-full`;
    await mkdir(full, { recursive: true });
    if (!mountTmpfs(full, '64k')) context.skip('this machine does not allow mounting a small tmpfs (needs root with mount rights)');
    try {
      // Leave almost no room: the split record cannot be written.
      await writeFile(path.join(full, 'filler'), Buffer.alloc(60 * 1024)).catch(() => undefined);
      const file = await writeTinyStudy(tinyStudy());
      const dir = path.join(full, 'run');
      const run = await runCli(['run', file, '--out', dir]);
      expect(run.code).toBe(2);
      const errors = run.stderr.split('\n').filter((line) => line.startsWith('error:'));
      expect(errors).toHaveLength(1);
      expect(errors[0]).toMatch(/no space left on the device \(ENOSPC\); nothing was saved; fix that or choose another --out, then run the study again$/);
      expect(errors[0]).not.toContain('resume');
    } finally {
      execFileSync('umount', [full], { stdio: 'ignore' });
    }
  });
});

describe('copies', () => {
  it('a study copied elsewhere still resumes (paths are kept relative to the definition)', async () => {
    const { file, dir } = await interruptedAfter(3);
    const elsewhere = await mkdtemp(path.join(tmpdir(), 'rungwise-copied-'));
    await copyFile(file, path.join(elsewhere, 'unused.json'));
    const resumed = await resumeStudy(dir);
    expect(resumed.doc.state).toBe('finished');
  });
});
