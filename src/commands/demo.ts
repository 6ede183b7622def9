import { existsSync } from 'node:fs';
import { copyFile, mkdir, readFile, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { UserError } from '../core/errors.js';
import { packageRoot } from '../files/package-files.js';
import type { StudyOutcome } from '../runner/run-study.js';
import { StudyStore, studyFilePath } from '../store/study-store.js';
import type { ProgressTarget } from './observe.js';
import { run } from './run.js';

/** Files of the demo study, shipped in the package (`studies/demo/`). */
export const DEMO_FILES = ['study.json', 'pump-logs.csv'] as const;
const DEMO_NAME = 'demo';

/** The demo study's folder: `studies/demo` of the package. */
export function demoFolder(): string {
  const folder = path.join(packageRoot(), 'studies', 'demo');
  if (!existsSync(path.join(folder, 'study.json'))) throw new Error(`the demo study is not in this installation of rungwise (${folder})`);
  return folder;
}

export interface DemoOptions extends ProgressTarget {
  /** Run directory. @default runs/demo */
  out?: string;
  /** Threads of this machine training jobs at once. @default the demo's (2) */
  threads?: number;
  signal?: AbortSignal;
}

/**
 * `rungwise demo`: runs the shipped demo study. An earlier demo run in the same folder is replaced;
 * a folder that holds another study is refused.
 * @example
 * import { runDemo } from 'rungwise';
 * const { ranking } = await runDemo({ out: 'runs/demo', progress: process.stderr });
 */
export async function runDemo(options: DemoOptions = {}): Promise<StudyOutcome> {
  const out = path.resolve(options.out ?? path.join('runs', DEMO_NAME));
  if (existsSync(studyFilePath(out))) {
    const earlier = await StudyStore.read(out).catch(() => undefined);
    if (earlier?.name !== DEMO_NAME) {
      throw new UserError('E_RUN_DIR_TAKEN', `${out}: holds a study other than the demo; choose another --out for the demo`);
    }
  }
  const { out: _out, ...rest } = options;
  return run({ ...rest, definition: path.join(demoFolder(), 'study.json'), out, force: true });
}

/** `rungwise demo --copy <dir>`: the demo's definition and CSV copied into `dir` to edit; returns the files written. */
export async function copyDemo(dir: string): Promise<string[]> {
  const target = path.resolve(dir);
  const taken = DEMO_FILES.map((name) => path.join(target, name)).filter((file) => existsSync(file));
  if (taken.length > 0) throw new UserError('E_DEMO_COPY', `${taken[0]}: already exists; --copy needs a folder without ${DEMO_FILES.join(' or ')}`);
  await mkdir(target, { recursive: true });
  const from = demoFolder();
  const files: string[] = [];
  for (const name of DEMO_FILES) {
    if (name === 'study.json') await writeFile(path.join(target, name), await definitionForFolder(path.join(from, name), target));
    else await copyFile(path.join(from, name), path.join(target, name));
    files.push(path.join(target, name));
  }
  return files;
}

/**
 * The demo definition's text with its `$schema` pointing from `folder` to the schema shipped in the
 * package, so an editor still finds it in the copy (the shipped file's path is relative to `studies/demo`).
 */
async function definitionForFolder(file: string, folder: string): Promise<string> {
  const text = await readFile(file, 'utf8');
  const schema = path.relative(folder, path.join(packageRoot(), 'schema', 'study.schema.json')).split(path.sep).join('/');
  return text.replace(/("\$schema"\s*:\s*)"[^"]*"/, (_whole, key: string) => `${key}${JSON.stringify(schema)}`);
}
