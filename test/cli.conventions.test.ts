import { existsSync, readFileSync } from 'node:fs';
import { copyFile, mkdtemp, readFile, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { parse } from 'csv-parse/sync';
import { beforeAll, describe, expect, it } from 'vitest';
import { buildProgram } from '../src/cli/main.js';
import { studyResultText, type StudyResultJson } from '../src/report/study-result.js';
import { FAULT_VARIABLE } from '../src/runner/faults.js';
import { rankTrials } from '../src/core/ranking.js';
import { StudyStore, studyFilePath } from '../src/store/study-store.js';
import { runCli } from './helpers/cli.js';
import { writeTinyStudy } from './helpers/studies.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const HYPERBAND_FIXTURE = path.join(ROOT, 'test/fixtures/studies/hyperband-generated.json');
// Every command the program declares, so a new one cannot be left out.
const COMMANDS = buildProgram().commands.map((command) => command.name());

let studyFile: string;
let runDir: string;
let csv: string;
let quiet: Awaited<ReturnType<typeof runCli>>;

beforeAll(async () => {
  studyFile = await writeTinyStudy();
  runDir = path.join(path.dirname(studyFile), 'run');
  csv = path.join(path.dirname(studyFile), 'tiny.csv');
  quiet = await runCli(['run', studyFile, '--out', runDir, '--quiet']);
});

describe('rungwise version and help', () => {
  it('--version prints the version of package.json and exits 0', async () => {
    const { version } = JSON.parse(readFileSync(path.join(ROOT, 'package.json'), 'utf8')) as { version: string };
    for (const flag of ['--version', '-V']) {
      const result = await runCli([flag]);
      expect(result.code).toBe(0);
      expect(result.stdout).toBe(`${version}\n`);
    }
  });

  it('every command has an Examples section at the end of its --help, each example starting with rungwise <command>', async () => {
    expect(COMMANDS).toEqual(expect.arrayContaining(['run', 'resume', 'worker', 'ranking', 'plot', 'compare', 'export', 'predict', 'demo']));
    for (const command of COMMANDS) {
      const result = await runCli([command, '--help']);
      expect(result.code, command).toBe(0);
      const examples = result.stdout.split('\nExamples:\n')[1];
      // The section is the last thing the help prints.
      expect(result.stdout.trimEnd().split('\n').at(-1)!.trim().startsWith(`rungwise ${command}`), command).toBe(true);
      expect(examples, command).toBeDefined();
      const lines = examples!.trim().split('\n');
      expect(lines.length, command).toBeGreaterThanOrEqual(2);
      for (const line of lines) expect(line.trim().startsWith(`rungwise ${command}`), line).toBe(true);
    }
    const top = await runCli(['--help']);
    expect(top.stdout).toContain('\nExamples:\n');
  });
});

describe('results on stdout, progress and messages on stderr', () => {
  it('run --quiet writes nothing but the result on stdout and nothing on stderr', async () => {
    expect(quiet.code).toBe(0);
    expect(quiet.stderr).toBe('');
    const doc = await StudyStore.read(runDir);
    const expected = studyResultText(doc, rankTrials(doc.trials, doc.goal), studyFilePath(runDir));
    expect(quiet.stdout).toBe(`${expected}\n`);
  });

  it('run --json prints every trial as JSON, the ranking first, and a failed trial marked with its reason', async () => {
    const dir = path.join(path.dirname(studyFile), 'with-failure');
    const result = await runCli(['run', studyFile, '--out', dir, '--json'], { env: { [FAULT_VARIABLE]: '2:throw' } });
    expect(result.code).toBe(0);
    const parsed = JSON.parse(result.stdout) as StudyResultJson;
    expect(parsed.trialCount).toBe(4);
    expect(parsed.trials).toHaveLength(4);
    expect(parsed.trials.slice(0, 3).map((t) => t.rank)).toEqual([1, 2, 3]);
    const failed = parsed.trials[3]!;
    expect(failed).toMatchObject({ trial: 2, rank: null, ranked: false, status: 'failed' });
    expect(failed.reason).toMatch(/fault/i);
    expect(parsed.counts).toEqual({ trained: 3, failed: 1 });
    expect(result.stderr).toContain('trial 2 failed');
  });

  it('ranking --json is complete (diverged and failed trials marked), --top limits it', async () => {
    const dir = await mkdtemp(path.join(tmpdir(), 'rungwise-ranking-json-'));
    await copyFile(HYPERBAND_FIXTURE, path.join(dir, 'study.json'));
    const doc = await StudyStore.read(dir);
    const all = await runCli(['ranking', dir, '--json']);
    expect(all.code).toBe(0);
    const parsed = JSON.parse(all.stdout) as StudyResultJson;
    expect(parsed.trials).toHaveLength(doc.trials.length);
    expect(parsed.trials.filter((t) => t.status === 'diverged').every((t) => t.rank === null && t.reason?.startsWith('diverged at epoch'))).toBe(true);
    expect(parsed.trials.filter((t) => t.status === 'diverged')).toHaveLength(2);
    expect(parsed.trials.filter((t) => t.status === 'failed')).toHaveLength(1);
    const ranked = rankTrials(doc.trials, doc.goal);
    expect(parsed.trials.filter((t) => t.ranked).map((t) => t.trial)).toEqual(ranked.map((r) => r.trial.id));

    const top = JSON.parse((await runCli(['ranking', dir, '--json', '--top', '3'])).stdout) as StudyResultJson;
    expect(top.trials.map((t) => t.trial)).toEqual(ranked.slice(0, 3).map((r) => r.trial.id));
    expect(top).toMatchObject({ shown: 3, trialCount: doc.trials.length });
  });

  it('resume --json of a finished study says so on stderr and prints the result on stdout', async () => {
    const result = await runCli(['resume', runDir, '--json']);
    expect(result.code).toBe(0);
    expect(result.stderr).toContain('already finished');
    expect((JSON.parse(result.stdout) as StudyResultJson).state).toBe('finished');
  });

  it('export, plot and predict --json print parseable summaries', async () => {
    const exported = await runCli(['export', runDir, '--json', '--out', path.join(runDir, 'exported')]);
    expect(exported.code).toBe(0);
    const summary = JSON.parse(exported.stdout) as { out: string; rank: number; files: string[] };
    expect(summary.rank).toBe(1);
    for (const file of summary.files) expect(existsSync(path.join(summary.out, file))).toBe(true);

    const plotted = await runCli(['plot', runDir, '--json']);
    expect(plotted.code).toBe(0);
    const plots = JSON.parse(plotted.stdout) as { report: string; files: string[] };
    expect(existsSync(plots.report)).toBe(true);
    expect(plots.files.length).toBeGreaterThan(1);

    const output = path.join(runDir, 'p.csv');
    const predicted = await runCli(['predict', summary.out, csv, '--output', output, '--json']);
    expect(predicted.code).toBe(0);
    expect(JSON.parse(predicted.stdout)).toMatchObject({ output, rows: 120, task: 'binary', threshold: 0.5 });
  });

  it('predict --output - writes the CSV to stdout, --keep carries columns through, the summary goes to stderr', async () => {
    const exportDir = path.join(runDir, 'export', 'rank-1');
    if (!existsSync(exportDir)) expect((await runCli(['export', runDir])).code).toBe(0);
    const result = await runCli(['predict', exportDir, csv, '--output', '-', '--keep', 'site_type', 'bearing_temp_c']);
    expect(result.code).toBe(0);
    expect(existsSync(path.join(ROOT, '-'))).toBe(false);
    const rows = parse(result.stdout, { columns: true }) as Record<string, string>[];
    const input = parse(await readFile(csv, 'utf8'), { columns: true }) as Record<string, string>[];
    expect(Object.keys(rows[0]!)).toEqual(['line', 'site_type', 'bearing_temp_c', 'predicted', 'p_no', 'p_yes']);
    expect(rows.map((r) => r.site_type)).toEqual(input.map((r) => r.site_type));
    expect(rows.map((r) => r.bearing_temp_c)).toEqual(input.map((r) => r.bearing_temp_c));
    expect(result.stderr).toContain('to standard output');

    const unknown = await runCli(['predict', exportDir, csv, '--output', '-', '--keep', 'site_typ']);
    expect(unknown.code).toBe(2);
    expect(unknown.stdout).toBe('');
    expect(unknown.stderr.trim().split('\n')).toHaveLength(1);
    expect(unknown.stderr).toContain("--keep site_typ: no such column (did you mean 'site_type'?)");
  });

  it('demo --copy --json lists the copied files and refuses to overwrite them', async () => {
    const dir = path.join(await mkdtemp(path.join(tmpdir(), 'rungwise-demo-copy-')), 'mine');
    const result = await runCli(['demo', '--copy', dir, '--json']);
    expect(result.code).toBe(0);
    const { files } = JSON.parse(result.stdout) as { files: string[] };
    expect(files.map((f) => path.basename(f))).toEqual(['study.json', 'pump-logs.csv']);
    expect(readFileSync(files[1]!, 'utf8')).toBe(readFileSync(path.join(ROOT, 'studies/demo/pump-logs.csv'), 'utf8'));
    const again = await runCli(['demo', '--copy', dir]);
    expect(again.code).toBe(2);
  });

  it('export --retrain refuses a changed CSV in one line, and --allow-changed-data goes on', async () => {
    const folder = path.dirname(studyFile);
    const changedDir = path.join(folder, 'changed');
    expect((await runCli(['run', studyFile, '--out', changedDir, '--quiet'])).code).toBe(0);
    // The same rows with a blank line at the end: another file, the same data and recipe.
    await writeFile(csv, `${await readFile(csv, 'utf8')}\n`);
    const refused = await runCli(['export', changedDir, '--retrain', '--out', path.join(changedDir, 'r1')]);
    expect(refused.code).toBe(2);
    expect(refused.stderr.trim().split('\n')).toHaveLength(1);
    expect(refused.stderr).toContain('--allow-changed-data');
    const allowed = await runCli(['export', changedDir, '--retrain', '--allow-changed-data', '--out', path.join(changedDir, 'r2'), '--json']);
    expect(allowed.code).toBe(0);
    expect(JSON.parse(allowed.stdout)).toMatchObject({ retrained: true });
  });

  it('writes no colour codes into a pipe or under NO_COLOR', async () => {
    const result = await runCli(['ranking', runDir, '--top', '1'], { env: { NO_COLOR: '1' } });
    expect(result.stdout + result.stderr).not.toContain('\u001b[');
    const failing = await runCli(['ranking', path.join(runDir, 'nowhere')]);
    expect(failing.stderr).not.toContain('\u001b[');
  });
});
