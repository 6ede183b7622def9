/**
 * The README's commands, typed in order on a fresh copy of the repository: every line of its `sh`
 * blocks (`npm install` and `npm test` aside: the copy shares this checkout's node_modules and build)
 * and every `js` block that is not one of examples/ (those run through their `sh` lines). The demo
 * studies are given small budgets in the copy so that the sequence takes seconds; the commands are the
 * README's own, `npx rungwise` run as `node bin/rungwise.js` (what npx resolves it to in a clone).
 */
import { execFile, execFileSync } from 'node:child_process';
import { cp, mkdir, mkdtemp, readdir, readFile, symlink, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const SKIPPED = new Set(['npm install', 'npm test']);

interface Step {
  kind: 'sh' | 'js';
  text: string;
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
    for (const line of body!.split('\n')) {
      const command = line.replace(/\s+#.*$/, '').trim();
      if (command && !SKIPPED.has(command)) steps.push({ kind: 'sh', text: command });
    }
  }
  return steps;
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

describe('the README, followed on a fresh copy of the repository', () => {
  it('every command and code block runs in order and exits 0', async () => {
    const readme = await readFile(path.join(ROOT, 'README.md'), 'utf8');
    const examples = await Promise.all(['predict.mjs', 'tfjs-node.mjs', 'encode-row.mjs'].map(async (f) => (await readFile(path.join(ROOT, 'examples', f), 'utf8')).trim()));
    const steps = readmeSteps(readme, examples);
    expect(steps.map((s) => s.text)).toContain('npm start');
    expect(steps.filter((s) => s.kind === 'js').length).toBeGreaterThanOrEqual(2);
    const copy = await freshCopy();
    for (const [i, step] of steps.entries()) {
      let result;
      if (step.kind === 'js') {
        const file = path.join(copy, `readme-block-${i}.mjs`);
        await writeFile(file, step.text);
        result = await run(process.execPath, [file], copy);
      } else {
        const words = step.text.split(/\s+/);
        if (words[0] === 'npx' && words[1] === 'rungwise') result = await run(process.execPath, ['bin/rungwise.js', ...words.slice(2)], copy);
        else result = await run(words[0]!, words.slice(1), copy);
      }
      expect({ step: step.text, code: result.code, stderr: result.code === 0 ? '' : result.stderr }).toEqual({ step: step.text, code: 0, stderr: '' });
      expect(result.stdout.length, step.text).toBeGreaterThan(0);
    }
  });
});
