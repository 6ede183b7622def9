import type { CheckpointStore } from './store.js';

/** Checkpoints held in memory: for tests, benchmarks and studies that need no run directory. */
export class MemoryCheckpointStore implements CheckpointStore {
  private readonly bytes = new Map<number, Uint8Array>();

  async read(trialId: number): Promise<Uint8Array | undefined> {
    return this.bytes.get(trialId);
  }

  async write(trialId: number, bytes: Uint8Array): Promise<void> {
    this.bytes.set(trialId, bytes.slice());
  }

  async delete(trialId: number): Promise<void> {
    this.bytes.delete(trialId);
  }

  async list(): Promise<number[]> {
    return [...this.bytes.keys()].sort((a, b) => a - b);
  }
}
