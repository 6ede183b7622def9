/**
 * Every name a user meets in the study definition, on the command line and in the study file is on
 * the reviewed list `NAMES.md`, with the trade or paper term it comes from (or "ours"). A new key or
 * flag fails here until it is reviewed and listed; a retired name may not come back.
 */
import { readFile } from 'node:fs/promises';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import type { z } from 'zod';
import { beforeAll, describe, expect, it } from 'vitest';
import { buildProgram } from '../src/cli/main.js';
import { runStudy } from '../src/runner/run-study.js';
import { studySchema } from '../src/study/definition.js';
import { RENAMED_DEFINITION_KEYS, RENAMED_SAMPLER_KEYS } from '../src/study/renamed-keys.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const RETIRED = [...Object.keys(RENAMED_SAMPLER_KEYS), ...Object.keys(RENAMED_DEFINITION_KEYS), 'workerUtilisation', 'objective', 'direction'];

/** The reviewed names of one section of NAMES.md, with their origins. */
async function reviewed(section: string): Promise<Map<string, string>> {
  const text = await readFile(path.join(ROOT, 'NAMES.md'), 'utf8');
  const body = text.split(`\n## ${section}\n`)[1]?.split('\n## ')[0];
  if (body === undefined) throw new Error(`NAMES.md has no section "${section}"`);
  const rows = body.split('\n').map((line) => /^\| `([^`]+)` \| (.*) \|$/.exec(line)).filter((m): m is RegExpExecArray => m !== null);
  return new Map(rows.map((m) => [m[1]!, m[2]!.trim()]));
}

type Schema = z.core.$ZodType;
type Def = { type: string; shape?: Record<string, Schema>; innerType?: Schema; in?: Schema; out?: Schema; options?: Schema[]; element?: Schema; valueType?: Schema; left?: Schema; right?: Schema; catchall?: Schema };

/** Every object key anywhere in a zod schema (through optional, default, union, array, record, pipe). */
function schemaKeys(schema: Schema, keys = new Set<string>(), seen = new Set<Schema>()): Set<string> {
  if (seen.has(schema)) return keys;
  seen.add(schema);
  const def = schema._zod.def as Def;
  for (const [key, inner] of Object.entries(def.shape ?? {})) {
    keys.add(key);
    schemaKeys(inner, keys, seen);
  }
  const children = [def.innerType, def.in, def.out, def.element, def.valueType, def.left, def.right, def.catchall, ...(def.options ?? [])];
  for (const child of children) if (child) schemaKeys(child, keys, seen);
  return keys;
}

/** Keys of a JSON value, not descending into maps keyed by data (class labels, metric and hyperparameter names). */
function jsonKeys(value: unknown, keys: Set<string>): Set<string> {
  const dataKeyed = new Set(['classCounts', 'metrics', 'standardErrors', 'configuration', 'definition']);
  if (Array.isArray(value)) for (const item of value) jsonKeys(item, keys);
  else if (value !== null && typeof value === 'object') {
    for (const [key, inner] of Object.entries(value)) {
      keys.add(key);
      if (!dataKeyed.has(key)) jsonKeys(inner, keys);
    }
  }
  return keys;
}

function unreviewed(names: Iterable<string>, list: Map<string, string>): string[] {
  return [...names].filter((name) => !list.has(name)).sort();
}

describe('the reviewed list of names (NAMES.md)', () => {
  let studyFileKeys: Set<string>;

  beforeAll(async () => {
    // A halving study with early stopping, so trials carry rungs, jobs, best and stopped epochs.
    const file = await writeTinyStudy(
      tinyStudy({ budget: { trials: 9, maxEpochs: 9 }, sampler: { kind: 'successive-halving', seed: 7, eta: 3, minEpochs: 1 }, earlyStopping: { rule: 'patience', patience: 1 }, threads: 1 }),
    );
    const out = path.join(path.dirname(file), 'run');
    await runStudy(file, { out });
    studyFileKeys = jsonKeys(JSON.parse(await readFile(path.join(out, 'study.json'), 'utf8')), new Set());
    for (const line of (await readFile(path.join(out, 'curves.jsonl'), 'utf8')).trim().split('\n')) jsonKeys(JSON.parse(line), studyFileKeys);
  });

  it('gives every listed name an origin', async () => {
    for (const section of ['Study definition', 'Command line', 'Study file']) {
      const list = await reviewed(section);
      expect(list.size, section).toBeGreaterThan(10);
      for (const [name, origin] of list) expect(origin.length, `${section}: ${name}`).toBeGreaterThan(3);
    }
  });

  it('lists every key of the study definition (walked from its zod schema), and none is a retired name', async () => {
    const keys = schemaKeys(studySchema);
    expect(keys).toContain('trialsBeforeModel');
    expect(unreviewed(keys, await reviewed('Study definition'))).toEqual([]);
    expect([...keys].filter((key) => RETIRED.includes(key))).toEqual([]);
  });

  it('lists every command and flag of the command line', async () => {
    const program = buildProgram();
    const names = [...program.options, ...program.commands.flatMap((command) => command.options)].map((option) => option.long!);
    names.push(...program.commands.map((command) => command.name()));
    expect(names).toContain('--threads');
    expect(unreviewed(new Set(names), await reviewed('Command line'))).toEqual([]);
  });

  it('lists every key of a study file and its curve log, and none is a retired name', async () => {
    expect(studyFileKeys).toContain('stoppedAtEpoch');
    expect(unreviewed(studyFileKeys, await reviewed('Study file'))).toEqual([]);
    expect([...studyFileKeys].filter((key) => RETIRED.includes(key))).toEqual([]);
  });
});
