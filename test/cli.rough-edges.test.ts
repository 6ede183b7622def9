/**
 * The command line's rough edges found by trying it as a new user would, one test each: the exit code
 * of a stopped `plot --watch`, a hand-edited study file, more threads than cores, epochs in `ranking
 * --json` against the table, `predict --quiet`, the `$schema` of a copied demo, the utilisation's
 * digits and a complete `compare --json`.
 */
import { spawn } from 'node:child_process';
import { existsSync } from 'node:fs';
import { mkdtemp, readFile, writeFile } from 'node:fs/promises';
import { availableParallelism, tmpdir } from 'node:os';
import path from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { twoSignificantDigits } from '../src/report/summary.js';
import { studyFilePath } from '../src/store/study-store.js';
import { BIN, runCli } from './helpers/cli.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

let folder: string;
let runDir: string;
let ran: Awaited<ReturnType<typeof runCli>>;

beforeAll(async () => {
  const file = await writeTinyStudy();
  folder = path.dirname(file);
  runDir = path.join(folder, 'run');
  ran = await runCli(['run', file, '--out', runDir]);
  expect(ran.code).toBe(0);
});

describe('the run summary', () => {
  it('prints the thread utilisation with two significant digits', () => {
    expect(twoSignificantDigits(0.01215)).toBe('0.012');
    expect(twoSignificantDigits(0.1042)).toBe('0.10');
    expect(twoSignificantDigits(1)).toBe('1.0');
    expect(twoSignificantDigits(0)).toBe('0');
    const figure = /thread utilisation ([\d.]+)/.exec(ran.stdout)?.[1];
    expect(figure).toBeDefined();
    expect(figure!.replace(/^[0.]+/, '').replace('.', '')).toHaveLength(2);
  });
});

describe('plot --watch', () => {
  it('ends with exit code 130 when stopped with Ctrl-C, after writing the report', async () => {
    const child = spawn(process.execPath, [BIN, 'plot', runDir, '--watch', '--out', path.join(folder, 'watched')], { stdio: ['ignore', 'pipe', 'pipe'] });
    let stdout = '';
    child.stdout.on('data', (chunk: Buffer) => {
      stdout += chunk.toString();
      if (stdout.includes('\n')) child.kill('SIGINT');
    });
    const code = await new Promise<number | null>((resolve) => child.on('close', resolve));
    expect(stdout).toMatch(/^wrote \d+ files; open .*report\.html\n/);
    expect(code).toBe(130);
  });
});

describe('a hand-edited study file', () => {
  it('with a field of the wrong type: one line naming the file and the field, exit 2, nothing on stdout', async () => {
    const edited = path.join(folder, 'edited');
    await runCli(['run', await writeTinyStudy(), '--out', edited, '--quiet']);
    const file = studyFilePath(edited);
    const doc = JSON.parse(await readFile(file, 'utf8')) as { goal: { metric: unknown } };
    doc.goal.metric = 5;
    await writeFile(file, JSON.stringify(doc));
    for (const command of ['ranking', 'plot', 'resume']) {
      const result = await runCli([command, edited]);
      expect(result.code, command).toBe(2);
      expect(result.stdout, command).toBe('');
      expect(result.stderr.trimEnd().split('\n'), command).toEqual([`error: ${file}: goal.metric: found 5, expected a string; the study file was edited or damaged: correct the field, or copy ${file}.prev over it`]);
    }
  });
});

describe('more threads than cores', () => {
  it('warns in one line why the study will be slower, and still runs', async () => {
    const cores = availableParallelism();
    const result = await runCli(['run', await writeTinyStudy(), '--out', path.join(folder, 'crowded'), '--threads', String(cores + 1), '--quiet']);
    expect(result.code).toBe(0);
    expect(result.stderr.trimEnd().split('\n')).toEqual([
      `warning: ${cores + 1} threads on ${cores} core${cores === 1 ? '' : 's'}: the threads take turns on the cores, so every trial trains slower and the study ends later than with ${cores}; use --threads ${cores} or fewer`,
    ]);
    const fitting = await runCli(['run', await writeTinyStudy(), '--out', path.join(folder, 'fitting'), '--threads', String(cores), '--quiet']);
    expect(fitting.stderr).toBe('');
  });
});

describe('ranking with early stopping', () => {
  it('gives every trial the same epochs in --json as in the table', async () => {
    const definition = tinyStudy({
      budget: { trials: 9, maxEpochs: 27 },
      sampler: { kind: 'successive-halving', seed: 7, eta: 3, minEpochs: 1 },
      earlyStopping: { rule: 'patience', patience: 2 },
    });
    const dir = path.join(folder, 'stopping');
    expect((await runCli(['run', await writeTinyStudy(definition), '--out', dir, '--quiet'])).code).toBe(0);
    const table = await runCli(['ranking', dir, '--top', '100']);
    const rows = table.stdout.split('\n').filter((line) => /^\s+\d+\s+\d+\s+\d+\s+\d+/.test(line));
    const fromTable = rows.map((line) => line.trim().split(/\s+/)).map(([, trial, , epochs]) => [Number(trial), Number(epochs)]);
    const json = JSON.parse((await runCli(['ranking', dir, '--json'])).stdout) as { trials: { trial: number; epochs: number; ranked: boolean }[] };
    const fromJson = json.trials.filter((t) => t.ranked).map((t) => [t.trial, t.epochs]);
    expect(fromTable.length).toBeGreaterThan(0);
    expect(fromJson).toEqual(fromTable);
    expect(table.stdout).toContain('(stopped)');
  });
});

describe('predict --quiet', () => {
  it('writes the predictions file and nothing on stdout or stderr', async () => {
    expect((await runCli(['export', runDir, '--quiet'])).code).toBe(0);
    const output = path.join(folder, 'quiet-predictions.csv');
    const result = await runCli(['predict', path.join(runDir, 'export', 'rank-1'), path.join(folder, 'tiny.csv'), '--output', output, '--quiet']);
    expect(result.code).toBe(0);
    expect(result.stdout).toBe('');
    expect(result.stderr).toBe('');
    expect(existsSync(output)).toBe(true);
    const noisy = await runCli(['predict', path.join(runDir, 'export', 'rank-1'), path.join(folder, 'tiny.csv'), '--output', output]);
    expect(noisy.stdout).toBe('');
    expect(noisy.stderr).toMatch(/^wrote 120 predictions \(line, predicted, p_no, p_yes\) to /);
  });
});

describe('demo --copy', () => {
  it('writes a $schema that points at a schema file that exists from the copied folder', async () => {
    const dir = path.join(await mkdtemp(path.join(tmpdir(), 'rungwise-copy-')), 'deep', 'mine');
    expect((await runCli(['demo', '--copy', dir, '--quiet'])).code).toBe(0);
    const copied = JSON.parse(await readFile(path.join(dir, 'study.json'), 'utf8')) as { $schema: string; name: string };
    expect(copied.name).toBe('demo');
    const schema = path.resolve(dir, copied.$schema);
    expect(existsSync(schema), schema).toBe(true);
    expect((JSON.parse(await readFile(schema, 'utf8')) as { title?: string; $schema?: string }).$schema).toMatch(/json-schema\.org/);
  });
});

describe('compare --json', () => {
  it('gives every answer of every study, in words and as numbers, beside the report', async () => {
    const other = path.join(folder, 'other');
    await runCli(['run', await writeTinyStudy(tinyStudy({ name: 'tiny-halving', sampler: { kind: 'successive-halving', seed: 2, eta: 3, minEpochs: 1 }, budget: { trials: 9, maxEpochs: 9 } })), '--out', other, '--quiet']);
    const result = await runCli(['compare', runDir, other, '--json', '--out', path.join(folder, 'compared')]);
    expect(result.code).toBe(0);
    const parsed = JSON.parse(result.stdout) as { report: string; goal: { metric: string }; studies: Record<string, unknown>[] };
    expect(existsSync(parsed.report)).toBe(true);
    expect(parsed.goal.metric).toBe('auc');
    expect(parsed.studies.map((s) => s.name)).toEqual(['tiny', 'tiny-halving']);
    for (const study of parsed.studies) {
      expect(Object.keys(study).sort()).toEqual(
        ['answers', 'compute', 'dir', 'importance', 'name', 'rungAgreements', 'rungShares', 'sampler', 'state', 'trials', 'unscoredTrials', 'winner', 'winnerAtRungs', 'winnerLeadsFromEpoch'].sort(),
      );
      expect(Object.keys(study.answers as object).sort()).toEqual(['baseline', 'health', 'importance', 'noise', 'rungAgreement', 'rungShares', 'sampler', 'spent', 'unscored', 'winner', 'winnerAtRungs', 'winnerFound'].sort());
    }
    const halving = parsed.studies[1] as { rungShares: { share: number }[]; winner: { trial: number } };
    expect(halving.rungShares.reduce((sum, r) => sum + r.share, 0)).toBeCloseTo(1, 9);
    const table = await runCli(['compare', runDir, other, '--out', path.join(folder, 'compared')]);
    expect(table.stdout).toContain(`trial ${halving.winner.trial}: `);
  });
});
