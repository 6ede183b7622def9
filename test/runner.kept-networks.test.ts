/** `keptNetworks`: how many of the best trials keep their checkpoint when the study ends (the library of `export --ensemble`). */
import { readdir } from 'node:fs/promises';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { runStudy } from '../src/runner/run-study.js';
import type { StudyDefinitionInput } from '../src/study/definition.js';
import { ClosedFormTransport } from '../src/transports/closed-form.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

async function keptAfterRun(kind: 'random' | 'successive-halving', keptNetworks?: number): Promise<{ kept: string[]; best: string[] }> {
  const definition: StudyDefinitionInput = tinyStudy({
    budget: { trials: 12, maxEpochs: 9 },
    sampler: { kind, seed: 2 } as StudyDefinitionInput['sampler'],
    space: { depth: { min: 1, max: 2 }, width: { min: 4, max: 64, log: true }, activation: ['relu'], learningRate: { min: 0.001, max: 0.1 } },
    ...(keptNetworks !== undefined ? { keptNetworks } : {}),
  });
  const file = await writeTinyStudy(definition);
  const outcome = await runStudy(file, {
    out: path.join(path.dirname(file), `run-${kind}-${keptNetworks ?? 'default'}`),
    // Better near learning rate 0.01 and with more width: a ranking with no ties.
    transport: () =>
      new ClosedFormTransport({
        capacity: 2,
        millisecondsPerEpoch: 0,
        evaluate: (params, epoch) => {
          const loss = Math.abs(Math.log10(params.learningRate) + 2) + 4 / params.width + 2 / epoch;
          return { validationLoss: loss, metrics: { auc: 0.5 + 0.5 / (1 + loss) } };
        },
      }),
  });
  const kept = (await readdir(path.join(outcome.dir, 'checkpoints'))).sort();
  return { kept, best: outcome.ranking.map((r) => `trial-${r.trial.id}.ckpt`) };
}

describe('keptNetworks', () => {
  it.each(['random', 'successive-halving'] as const)('keeps exactly the checkpoints of the best n trials (%s)', async (kind) => {
    const five = await keptAfterRun(kind, 5);
    expect(five.kept).toEqual(five.best.slice(0, 5).sort());
    const fallback = await keptAfterRun(kind);
    expect(fallback.kept).toEqual(fallback.best.slice(0, 3).sort());
  });
});
