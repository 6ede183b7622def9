/**
 * Where checkpoints live between jobs. Only the coordinating process uses it: it reads a trial's
 * checkpoint into the job that continues the trial and writes the one the result brings back, so
 * workers need no file system of the run directory. The default is {@link FolderCheckpointStore};
 * every implementation runs the contract suite in `test/checkpoints.contract.test.ts`.
 */
export interface CheckpointStore {
  /** The trial's checkpoint bytes, or undefined when there is none. */
  read(trialId: number): Promise<Uint8Array | undefined>;
  /** Replace the trial's checkpoint, whole or not at all. */
  write(trialId: number, bytes: Uint8Array): Promise<void>;
  /** Forget the trial's checkpoint (no error when there is none). */
  delete(trialId: number): Promise<void>;
  /** Trial ids that have a checkpoint. */
  list(): Promise<number[]>;
}
