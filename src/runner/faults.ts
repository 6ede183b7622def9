import type { FaultKind } from '../transports/threads/transport.js';
import type { WriteStepHook } from '../store/file-adapter.js';

/**
 * Test-only fault switches, injected through options (`ExecuteOptions.faults`, the CLI's `main(argv,
 * { faults })`); production code never reads them from the environment. Tests start the CLI through
 * `test/fixtures/rungwise-test-bin.mjs`, which reads `RUNGWISE_FAULT="3:throw,5:exit:1"` (trial 3 throws
 * on every attempt, trial 5 ends its thread on its first) and injects it.
 */
export const FAULT_VARIABLE = 'RUNGWISE_FAULT';

/**
 * Test-only: `RUNGWISE_STORE_CRASH="after-link:3"` (read by the test entry point, never by `src/`) kills
 * the process at that step of the third study-file write, to prove that a kill while a write is under
 * way leaves a valid study file.
 */
export const STORE_CRASH_VARIABLE = 'RUNGWISE_STORE_CRASH';

/** The write-step hook that kills the process at `<step>:<write>`; an unset or empty switch gives none. */
export function storeCrash(value: string | undefined): WriteStepHook | undefined {
  if (!value) return undefined;
  const [step, write] = value.split(':');
  if ((step !== 'after-unlink' && step !== 'after-link') || !/^\d+$/.test(write ?? '')) {
    throw new Error(`${STORE_CRASH_VARIABLE}: cannot read '${value}'; expected <after-unlink|after-link>:<write number>`);
  }
  return (at, number) => {
    if (at === step && number === Number(write)) process.kill(process.pid, 'SIGKILL');
  };
}

export interface FaultPlan {
  /** The fault to inject into a trial's `attempt`-th run (1-based), if any. */
  faultFor(trialId: number, attempt: number): FaultKind | undefined;
}

const KINDS: readonly FaultKind[] = ['throw', 'hang', 'exit'];

/** Parse the fault switch; an unset or empty variable injects nothing. A malformed one is an internal error. */
export function faultPlan(value: string | undefined): FaultPlan {
  const rules = new Map<number, { kind: FaultKind; attempts: number }>();
  for (const part of (value ?? '').split(',').map((p) => p.trim()).filter(Boolean)) {
    const [id, kind, attempts] = part.split(':');
    if (!/^\d+$/.test(id ?? '') || !KINDS.includes(kind as FaultKind) || (attempts !== undefined && !/^\d+$/.test(attempts))) {
      throw new Error(`${FAULT_VARIABLE}: cannot read '${part}'; expected <trial id>:<${KINDS.join('|')}>[:<attempts>]`);
    }
    rules.set(Number(id), { kind: kind as FaultKind, attempts: attempts === undefined ? Infinity : Number(attempts) });
  }
  return {
    faultFor: (trialId, attempt) => {
      const rule = rules.get(trialId);
      return rule && attempt <= rule.attempts ? rule.kind : undefined;
    },
  };
}
