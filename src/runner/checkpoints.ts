import { readFile, rm } from 'node:fs/promises';
import path from 'node:path';

/** Checkpoints of the best few finished trials are kept, so `export --rank N` needs no retraining for them. */
export const KEPT_CHECKPOINTS = 3;

/** Where a trial's latest checkpoint lives (network weights and optimizer state after its last epoch). */
export function checkpointDir(runDir: string, trialId: number): string {
  return path.join(runDir, 'checkpoints', `trial-${trialId}`);
}

export async function deleteCheckpoint(runDir: string, trialId: number): Promise<void> {
  await rm(checkpointDir(runDir, trialId), { recursive: true, force: true });
}

/** The epoch a trial's checkpoint stands at, or undefined when there is none readable. */
export async function checkpointEpoch(runDir: string, trialId: number): Promise<number | undefined> {
  try {
    const manifest = JSON.parse(await readFile(path.join(checkpointDir(runDir, trialId), 'checkpoint.json'), 'utf8')) as { epoch?: unknown };
    return typeof manifest.epoch === 'number' ? manifest.epoch : undefined;
  } catch {
    return undefined;
  }
}
