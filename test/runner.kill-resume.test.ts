/**
 * Kill `rungwise run` with SIGKILL at many moments, resume after each, and check that the study file
 * always opens, no finished trial is lost, and the end result equals an uninterrupted run.
 */
import { spawn } from 'node:child_process';
import { existsSync } from 'node:fs';
import path from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { runStudy } from '../src/runner/run-study.js';
import { STORE_CRASH_VARIABLE } from '../src/runner/faults.js';
import { StudyStore, studyFilePath } from '../src/store/study-store.js';
import type { StudyDocument } from '../src/store/types.js';
import { BIN, runCli } from './helpers/cli.js';
import { longTinyStudy, writeTinyStudy } from './helpers/studies.js';

type Moment =
  | { kind: 'after-lines'; lines: number; delayMs: number }
  | { kind: 'store-crash'; point: 'after-unlink' | 'after-link'; write: number };

/** Start the CLI and SIGKILL it at the given moment; resolves when it has ended. */
function runAndKill(args: string[], moment: Moment): Promise<void> {
  return new Promise((resolve, reject) => {
    const env = { ...process.env };
    if (moment.kind === 'store-crash') env[STORE_CRASH_VARIABLE] = `${moment.point}:${moment.write}`;
    const child = spawn(process.execPath, [BIN, ...args], { env, stdio: ['ignore', 'pipe', 'pipe'] });
    let lines = 0;
    let killed = false;
    const kill = (): void => {
      if (killed) return;
      killed = true;
      child.kill('SIGKILL');
    };
    // Progress goes to stderr: one line per ended job.
    child.stderr.on('data', (chunk: Buffer) => {
      if (moment.kind !== 'after-lines') return;
      lines += chunk.toString().split('\n').filter((l) => /^\[\d+\/\d+ jobs, \d+\/\d+ epochs\] trial/.test(l)).length;
      if (lines >= moment.lines) setTimeout(kill, moment.delayMs);
    });
    if (moment.kind === 'after-lines' && moment.lines === 0) setTimeout(kill, moment.delayMs);
    child.on('error', reject);
    child.on('close', () => resolve());
  });
}

function finishedIds(doc: StudyDocument | undefined): number[] {
  return (doc?.trials ?? []).filter((t) => t.status === 'trained').map((t) => t.id).sort((a, b) => a - b);
}

const resultOf = (doc: StudyDocument) =>
  doc.trials
    .map((t) => ({ id: t.id, status: t.status, epochs: t.epochsTrained, objective: t.score, params: t.configuration, curve: t.curve.map(({ seconds: _s, ...p }) => p) }))
    .sort((a, b) => a.id - b.id);

describe('killing and resuming a study', () => {
  // Enough trials that the study outlives every kill moment below.
  const definition = longTinyStudy(40, 2);
  let studyFile: string;
  let reference: StudyDocument;

  beforeAll(async () => {
    studyFile = await writeTinyStudy(definition);
    reference = (await runStudy(studyFile, { out: path.join(path.dirname(studyFile), 'reference') })).doc;
  });

  it('never loses a finished trial and ends with the ranking of an uninterrupted run', async () => {
    const dir = path.join(path.dirname(studyFile), 'killed');
    const moments: Moment[] = [
      { kind: 'after-lines', lines: 0, delayMs: 150 }, // while starting, perhaps before the study file exists
      { kind: 'store-crash', point: 'after-unlink', write: 1 },
      { kind: 'after-lines', lines: 0, delayMs: 1500 }, // workers starting up
      { kind: 'after-lines', lines: 1, delayMs: 0 },
      { kind: 'store-crash', point: 'after-link', write: 2 },
      { kind: 'after-lines', lines: 1, delayMs: 5 },
      { kind: 'after-lines', lines: 1, delayMs: 60 },
      { kind: 'store-crash', point: 'after-unlink', write: 3 },
      { kind: 'after-lines', lines: 2, delayMs: 1 },
      { kind: 'after-lines', lines: 1, delayMs: 200 },
      { kind: 'store-crash', point: 'after-link', write: 4 },
      { kind: 'after-lines', lines: 2, delayMs: 20 },
    ];
    let before: number[] = [];
    let kills = 0;
    for (const moment of moments) {
      const args = existsSync(studyFilePath(dir)) ? ['resume', dir] : ['run', studyFile, '--out', dir];
      await runAndKill(args, moment);
      kills += 1;
      if (!existsSync(studyFilePath(dir))) {
        expect(before).toEqual([]); // only a kill before the first write leaves no study file
        continue;
      }
      const doc = (await StudyStore.open(dir)).doc; // the file opens after every kill
      const after = finishedIds(doc);
      expect(after).toEqual(expect.arrayContaining(before));
      before = after;
      if (doc.state === 'finished') break;
    }
    expect(kills).toBeGreaterThanOrEqual(10);

    const last = await runCli([...(existsSync(studyFilePath(dir)) ? ['resume', dir] : ['run', studyFile, '--out', dir]), '--quiet']);
    expect(last.stderr).toBe('');
    expect(last.code).toBe(0);
    const final = (await StudyStore.open(dir)).doc;
    expect(final.state).toBe('finished');
    expect(resultOf(final)).toEqual(resultOf(reference));

    const rankingOf = async (d: string) => JSON.parse((await runCli(['ranking', d, '--json'])).stdout).trials;
    expect(await rankingOf(dir)).toEqual(await rankingOf(path.join(path.dirname(studyFile), 'reference')));
  }, 600_000);
});
