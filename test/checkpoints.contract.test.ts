/** The promises every checkpoint store keeps; each implementation runs the same checks. */
import { mkdtemp } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { FolderCheckpointStore } from '../src/checkpoints/folder-store.js';
import { MemoryCheckpointStore } from '../src/checkpoints/memory-store.js';
import type { CheckpointStore } from '../src/checkpoints/store.js';

const stores: [string, () => Promise<CheckpointStore>][] = [
  ['folder', async () => new FolderCheckpointStore(await mkdtemp(path.join(tmpdir(), 'rungwise-checkpoints-')))],
  ['memory', async () => new MemoryCheckpointStore()],
];

describe.each(stores)('checkpoint store contract: %s', (_name, create) => {
  it('reads back what was written, and nothing for a trial without one', async () => {
    const store = await create();
    await store.write(3, new Uint8Array([1, 2, 3]));
    expect(Array.from((await store.read(3))!)).toEqual([1, 2, 3]);
    expect(await store.read(4)).toBeUndefined();
  });

  it('replaces a checkpoint whole', async () => {
    const store = await create();
    await store.write(3, new Uint8Array([1, 2, 3, 4, 5]));
    await store.write(3, new Uint8Array([9]));
    expect(Array.from((await store.read(3))!)).toEqual([9]);
  });

  it('keeps its own copy: changing the written array afterwards changes nothing', async () => {
    const store = await create();
    const bytes = new Uint8Array([1, 2]);
    await store.write(1, bytes);
    bytes[0] = 7;
    expect(Array.from((await store.read(1))!)).toEqual([1, 2]);
  });

  it('lists the trials that have one, in id order, and forgets deleted ones (deleting twice is fine)', async () => {
    const store = await create();
    expect(await store.list()).toEqual([]);
    for (const id of [12, 2, 7]) await store.write(id, new Uint8Array([id]));
    await store.delete(7);
    await store.delete(7);
    expect(await store.list()).toEqual([2, 12]);
  });
});
