import { mkdir, readdir, readFile, rm } from 'node:fs/promises';
import { writeFileDurably } from '../files/durable-write.js';
import { runPaths } from '../store/run-dir.js';
import type { CheckpointStore } from './store.js';

const FILE = /^trial-(\d+)\.ckpt$/;

/** The default checkpoint store: one file per trial in the run directory's `checkpoints/`, each written atomically. */
export class FolderCheckpointStore implements CheckpointStore {
  constructor(private readonly runDir: string) {}

  async read(trialId: number): Promise<Uint8Array | undefined> {
    try {
      return new Uint8Array(await readFile(runPaths.checkpoint(this.runDir, trialId)));
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code === 'ENOENT') return undefined;
      throw error;
    }
  }

  async write(trialId: number, bytes: Uint8Array): Promise<void> {
    await mkdir(runPaths.checkpoints(this.runDir), { recursive: true });
    await writeFileDurably(runPaths.checkpoint(this.runDir, trialId), bytes);
  }

  async delete(trialId: number): Promise<void> {
    await rm(runPaths.checkpoint(this.runDir, trialId), { force: true });
  }

  async list(): Promise<number[]> {
    let names: string[];
    try {
      names = await readdir(runPaths.checkpoints(this.runDir));
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code === 'ENOENT') return [];
      throw error;
    }
    return names.flatMap((name) => {
      const match = FILE.exec(name);
      return match ? [Number(match[1])] : [];
    }).sort((a, b) => a - b);
  }
}
