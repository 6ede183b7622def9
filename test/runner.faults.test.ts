import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { runStudy } from '../src/runner/run-study.js';
import { faultPlan } from '../src/runner/faults.js';
import { tinyStudy, writeTinyStudy } from './helpers/studies.js';

/** Run the tiny study with faults injected into its trials (the library's test-only option). */
async function runTiny(fault: string, overrides: Parameters<typeof tinyStudy>[0] = {}) {
  const file = await writeTinyStudy(tinyStudy(overrides));
  return runStudy(file, { out: path.join(path.dirname(file), 'run'), faults: faultPlan(fault).faultFor });
}

const statuses = (outcome: Awaited<ReturnType<typeof runTiny>>) => outcome.doc.trials.map((t) => [t.id, t.status]).sort((a, b) => Number(a[0]) - Number(b[0]));

describe('faults in trials', () => {
  it('marks a trial whose worker throws as failed, with its message, and goes on with the study', async () => {
    const outcome = await runTiny('1:throw');
    expect(statuses(outcome)).toEqual([[0, 'trained'], [1, 'failed'], [2, 'trained'], [3, 'trained']]);
    expect(outcome.doc.trials.find((t) => t.id === 1)?.error).toBe('injected fault: trial 1 throws');
    expect(outcome.doc.state).toBe('finished');
    expect(outcome.ranking.map((r) => r.trial.id)).not.toContain(1);
  });

  it('marks a trial whose thread dies as failed; the pool replaces the thread and the study goes on', async () => {
    const outcome = await runTiny('0:exit,2:exit');
    expect(statuses(outcome)).toEqual([[0, 'failed'], [1, 'trained'], [2, 'failed'], [3, 'trained']]);
    expect(outcome.doc.trials.find((t) => t.id === 0)?.error).toMatch(/exit/i);
  });

  it('marks a trial that runs past trialTimeoutSeconds as timed-out', async () => {
    // Generous, so that trials that do return finish well inside it even on a loaded machine.
    const outcome = await runTiny('3:hang', { trialTimeoutSeconds: 20 });
    expect(statuses(outcome)).toEqual([[0, 'trained'], [1, 'trained'], [2, 'trained'], [3, 'timed-out']]);
    expect(outcome.doc.trials.find((t) => t.id === 3)?.error).toBe('ran longer than trialTimeoutSeconds (20 s)');
  });

  it('runs a failed trial again when retries allow, and counts the retry', async () => {
    const outcome = await runTiny('2:throw:1', { retries: 1 });
    const trial = outcome.doc.trials.find((t) => t.id === 2)!;
    expect(trial.status).toBe('trained');
    expect(trial.retries).toBe(1);
    expect(trial.jobs).toEqual([expect.objectContaining({ rung: 0, attempts: 2, status: 'done', fromCheckpoint: false })]);
  });

  it('gives up after the allowed retries', async () => {
    const outcome = await runTiny('2:throw:2', { retries: 1 });
    expect(outcome.doc.trials.find((t) => t.id === 2)?.status).toBe('failed');
  });

  it('gives a retried trial the same result as a trial that never failed', async () => {
    const clean = await runTiny('');
    const retried = await runTiny('2:exit:1', { retries: 1 });
    const curve = (o: typeof clean) => o.doc.trials.find((t) => t.id === 2)!.curve.map(({ seconds: _s, ...rest }) => rest);
    expect(curve(retried)).toEqual(curve(clean));
  });
});
