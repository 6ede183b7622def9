import type { CheckpointStore } from '../checkpoints/store.js';
import { decodeFoldBundle, isFoldBundle } from '../checkpoints/fold-bundle.js';
import { checkpointManifest } from '../checkpoints/format.js';

/** Checkpoints of the best few ranked trials are kept, so `export --rank N` needs no retraining for them. */
export const KEPT_CHECKPOINTS = 3;

/**
 * The run loop's view of the checkpoint store. A checkpoint a result brings back is usable at once
 * (held in memory until its write lands), so the next job never waits for a disk; writes and deletes of
 * one trial run in the order they were asked for.
 */
export class CheckpointKeeper {
  private readonly fresh = new Map<number, Uint8Array>();
  private readonly chains = new Map<number, Promise<void>>();
  private failure: unknown;

  constructor(private readonly store: CheckpointStore) {}

  /** Keep `bytes` as the trial's checkpoint; the write goes on in the background. */
  put(trialId: number, bytes: Uint8Array): void {
    this.fresh.set(trialId, bytes);
    this.chain(trialId, async () => {
      await this.store.write(trialId, bytes);
      if (this.fresh.get(trialId) === bytes) this.fresh.delete(trialId);
    });
  }

  /** The trial's checkpoint if it stands at `epoch`, else undefined (none, unreadable, or at another epoch). */
  async at(trialId: number, epoch: number): Promise<Uint8Array | undefined> {
    const bytes = this.fresh.get(trialId) ?? (await this.store.read(trialId).catch(() => undefined));
    if (!bytes) return undefined;
    try {
      // A k-fold trial's checkpoint is a bundle of its folds' checkpoints, all at the same epoch.
      const manifest = checkpointManifest(isFoldBundle(bytes) ? decodeFoldBundle(bytes)[0]! : bytes);
      return manifest.trialId === trialId && manifest.epoch === epoch ? bytes : undefined;
    } catch {
      return undefined;
    }
  }

  /** Forget the trial's checkpoint. */
  remove(trialId: number): void {
    this.fresh.delete(trialId);
    this.chain(trialId, () => this.store.delete(trialId));
  }

  /** Trial ids with a checkpoint in the store or on its way there. */
  async list(): Promise<number[]> {
    await this.settled();
    return this.store.list();
  }

  /** Wait for every write and delete asked for so far; rethrows the first that failed. */
  async settled(): Promise<void> {
    while (this.chains.size > 0) await Promise.all([...this.chains.values()]);
    if (this.failure) throw this.failure;
  }

  private chain(trialId: number, operation: () => Promise<void>): void {
    const previous = this.chains.get(trialId) ?? Promise.resolve();
    const next = previous.then(operation).catch((error: unknown) => {
      this.failure ??= error;
    });
    this.chains.set(trialId, next);
    void next.finally(() => {
      if (this.chains.get(trialId) === next) this.chains.delete(trialId);
    });
  }
}
