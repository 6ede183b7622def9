/**
 * A study without `shape` or `block` trains exactly as before they existed: the demo study (its
 * space, seed and split; 4 trials of 3 epochs) gives, bit for bit, the curves that commit 8959faf
 * (main before per-layer widths and residual blocks) wrote for the same definition.
 */
import { readFileSync } from 'node:fs';
import { mkdtemp, readFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { run } from '../src/commands/run.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';

const DEMO = fileURLToPath(new URL('../studies/demo/', import.meta.url));
/** Recorded with `rungwise run` at commit 8959faf (a regression record of the previous engine, not an outside value). */
const BEFORE = fileURLToPath(new URL('./fixtures/demo-curves-before-shapes.json', import.meta.url));

type Curves = Record<string, Record<string, { trainLoss: number; validationLoss: number; auc: number }>>;

describe('a study without shape or block', () => {
  it('gives the demo study the training and validation losses and AUC of every epoch bit for bit as before', async () => {
    const definition = JSON.parse(readFileSync(path.join(DEMO, 'study.json'), 'utf8')) as StudyDefinitionInput & { $schema?: string };
    delete definition.$schema;
    const out = path.join(await mkdtemp(path.join(tmpdir(), 'rungwise-unchanged-')), 'demo');
    await run({ definition: { ...definition, budget: { trials: 4, maxEpochs: 3 } }, baseDir: DEMO, out, progress: false });
    const lines = (await readFile(path.join(out, 'curves.jsonl'), 'utf8')).trim().split('\n');
    const curves: Curves = {};
    for (const line of lines) {
      const { trial, curve } = JSON.parse(line) as { trial: number; curve: { epoch: number; trainLoss: number; validationLoss: number; metrics: { auc: number } }[] };
      for (const point of curve) (curves[trial] ??= {})[point.epoch] = { trainLoss: point.trainLoss, validationLoss: point.validationLoss, auc: point.metrics.auc };
    }
    const before = JSON.parse(readFileSync(BEFORE, 'utf8')) as Curves;
    expect(Object.keys(before)).toHaveLength(4);
    expect(curves).toEqual(before);
  });
});
