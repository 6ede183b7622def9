import { rm } from 'node:fs/promises';
import path from 'node:path';

/** Checkpoints of the best few finished trials are kept, so `export --rank N` needs no retraining for them. */
export const KEPT_CHECKPOINTS = 3;

export function checkpointDir(runDir: string, trialId: number): string {
  return path.join(runDir, 'checkpoints', `trial-${trialId}`);
}

export async function deleteCheckpoint(runDir: string, trialId: number): Promise<void> {
  await rm(checkpointDir(runDir, trialId), { recursive: true, force: true });
}
