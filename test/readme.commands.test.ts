/**
 * The README's commands, typed in order on a fresh copy of the repository: every line of its `sh`
 * blocks (`npm install` and `npm test` aside: the copy shares this checkout's node_modules and build)
 * and every `js` block that is not one of examples/ (those run through their `sh` lines). The demo
 * studies are given small budgets in the copy so that the sequence takes seconds; the commands are the
 * README's own, `npx rungwise` run as `node bin/rungwise.js` (what npx resolves it to in a clone). A
 * block for several terminals (`# terminal N:` lines, the many-machines one) starts each command but
 * the last in the background and runs the last to its end, with a free port in place of 6379.
 */
import { execFile, execFileSync, spawn, type ChildProcess } from 'node:child_process';
import { connect, createServer, type AddressInfo } from 'node:net';
import { cp, mkdir, mkdtemp, readdir, readFile, symlink, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { documentation, unlinkedPages } from './helpers/docs.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const SKIPPED = new Set(['npm install', 'npm test']);

interface Step {
  /** `terminals`: an `sh` block of commands meant for separate terminals (`# terminal N:` lines). */
  kind: 'sh' | 'js' | 'terminals';
  text: string;
  /** For `terminals`: one command per terminal, in order; all but the last keep running. */
  commands?: string[];
}

/** Fenced `sh` lines (comments cut) and `js` blocks, in the order the README has them. */
function readmeSteps(readme: string, exampleTexts: readonly string[]): Step[] {
  const steps: Step[] = [];
  for (const match of readme.matchAll(/```(sh|js)\n([\s\S]*?)```/g)) {
    const [, kind, body] = match;
    if (kind === 'js') {
      if (!exampleTexts.includes(body!.trim())) steps.push({ kind: 'js', text: body! });
      continue;
    }
    const commands = body!
      .split('\n')
      .map((line) => line.replace(/(^|\s+)#.*$/, '').trim())
      .filter((command) => command && !SKIPPED.has(command));
    if (/^# terminal \d/m.test(body!)) steps.push({ kind: 'terminals', text: commands.join(' | '), commands });
    else for (const command of commands) steps.push({ kind: 'sh', text: command });
  }
  return steps;
}

/** A free loopback port, so the README's Redis port (6379) never reaches a server this machine runs. */
function freePort(): Promise<number> {
  return new Promise((resolve) => {
    const server = createServer().listen(0, '127.0.0.1', () => {
      const { port } = server.address() as AddressInfo;
      server.close(() => resolve(port));
    });
  });
}

async function listening(port: number): Promise<void> {
  for (;;) {
    const open = await new Promise<boolean>((resolve) => {
      const socket = connect(port, '127.0.0.1', () => {
        socket.end();
        resolve(true);
      }).on('error', () => resolve(false));
    });
    if (open) return;
    await new Promise((resolve) => setTimeout(resolve, 100));
  }
}

/** Argument list of a README command, `npx rungwise` run as `node bin/rungwise.js`. */
function commandLine(text: string): [string, string[]] {
  const words = (text.match(/'[^']*'|\S+/g) ?? []).map((word) => (word.startsWith("'") ? word.slice(1, -1) : word));
  if (words[0] === 'npx' && words[1] === 'rungwise') return [process.execPath, ['bin/rungwise.js', ...words.slice(2)]];
  return [words[0]!, words.slice(1)];
}

/** The commands of separate terminals: each but the last started and left running, the last run to its end. */
async function runTerminals(commands: readonly string[], cwd: string): Promise<{ code: number; stdout: string; stderr: string }> {
  const port = await freePort();
  const lines = commands.map((command) => command.replaceAll('6379', String(port)));
  const background: ChildProcess[] = [];
  try {
    for (const line of lines.slice(0, -1)) {
      const [command, args] = commandLine(line);
      background.push(spawn(command, args, { cwd, stdio: 'ignore' }));
      if (command === 'redis-server') await listening(port);
    }
    const [command, args] = commandLine(lines.at(-1)!);
    return await run(command, args, cwd);
  } finally {
    for (const child of background) child.kill('SIGTERM');
    await Promise.all(background.map((child) => (child.exitCode === null ? new Promise((resolve) => child.once('exit', resolve)) : undefined)));
  }
}

/** A command that runs until Ctrl-C (`--watch`): started, interrupted once it has written its first output, and expected to end cleanly. */
function runUntilWritten(command: string, args: string[], cwd: string): Promise<{ code: number; stdout: string; stderr: string }> {
  return new Promise((resolve) => {
    const child = spawn(command, args, { cwd, stdio: ['ignore', 'pipe', 'pipe'] });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (chunk: Buffer) => {
      stdout += chunk.toString();
      if (stdout.includes('\n')) child.kill('SIGINT');
    });
    child.stderr.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
    // Ctrl-C ends a watch with 130, as it ends every command; that is the clean end here.
    child.on('close', (code) => resolve({ code: code === 130 ? 0 : (code ?? 1), stdout, stderr }));
  });
}

function run(command: string, args: string[], cwd: string): Promise<{ code: number; stdout: string; stderr: string }> {
  return new Promise((resolve) => {
    execFile(command, args, { cwd, maxBuffer: 64 * 1024 * 1024 }, (error, stdout, stderr) =>
      resolve({ code: error ? (typeof error.code === 'number' ? error.code : 1) : 0, stdout, stderr }),
    );
  });
}

async function freshCopy(): Promise<string> {
  const copy = path.join(await mkdtemp(path.join(tmpdir(), 'rungwise-readme-')), 'rungwise');
  const tracked = execFileSync('git', ['ls-files', '--cached', '--others', '--exclude-standard'], { cwd: ROOT, encoding: 'utf8' }).split('\n').filter(Boolean);
  for (const file of tracked) {
    await mkdir(path.dirname(path.join(copy, file)), { recursive: true });
    await cp(path.join(ROOT, file), path.join(copy, file));
  }
  await cp(path.join(ROOT, 'dist'), path.join(copy, 'dist'), { recursive: true });
  await symlink(path.join(ROOT, 'node_modules'), path.join(copy, 'node_modules'), 'dir');
  // Small budgets, same data and search spaces, for every demo study.
  const demo = path.join(copy, 'studies/demo');
  for (const name of (await readdir(demo)).filter((f) => f.endsWith('.json'))) {
    const file = path.join(demo, name);
    await writeFile(file, JSON.stringify({ ...(JSON.parse(await readFile(file, 'utf8')) as object), budget: { trials: 3, maxEpochs: 3 } }, null, 2));
  }
  return copy;
}

// Every README command runs a real CLI process; on a loaded 2-core machine the whole walk takes minutes.
describe('the README and docs/, followed in order on a fresh copy of the repository', () => {
  it('every command and code block runs in order and exits 0', async () => {
    expect(unlinkedPages()).toEqual([]);
    const readme = documentation();
    const examples = await Promise.all(['predict.mjs', 'tfjs-node.mjs', 'encode-row.mjs'].map(async (f) => (await readFile(path.join(ROOT, 'examples', f), 'utf8')).trim()));
    const steps = readmeSteps(readme, examples);
    expect(steps.map((s) => s.text)).toContain('npm start');
    expect(steps.filter((s) => s.kind === 'js').length).toBeGreaterThanOrEqual(2);
    const copy = await freshCopy();
    for (const [i, step] of steps.entries()) {
      if (process.env.README_TEST_TRACE) console.log(`step ${i}: ${step.text}`);
      let result;
      if (step.kind === 'terminals') {
        result = await runTerminals(step.commands!, copy);
      } else if (step.kind === 'js') {
        const file = path.join(copy, `readme-block-${i}.mjs`);
        await writeFile(file, step.text);
        result = await run(process.execPath, [file], copy);
      } else {
        const [command, args] = commandLine(step.text);
        result = args.includes('--watch') ? await runUntilWritten(command, args, copy) : await run(command, args, copy);
      }
      expect({ step: step.text, code: result.code, stderr: result.code === 0 ? '' : result.stderr }).toEqual({ step: step.text, code: 0, stderr: '' });
      expect(result.stdout.length, step.text).toBeGreaterThan(0);
    }
  }, 900_000);
});
