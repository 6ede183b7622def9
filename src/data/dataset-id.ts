import { createHash } from 'node:crypto';
import type { PreparedData } from './types.js';

/** A content hash of the training and validation matrices: equal ids mean equal data, on any machine. */
export function datasetId(data: Pick<PreparedData, 'recipe' | 'train' | 'validation'>): string {
  const hash = createHash('sha256').update(JSON.stringify(data.recipe));
  for (const split of [data.train, data.validation]) {
    hash.update(`${split.rows}/${split.x.length}/${split.y.length}`);
    hash.update(new Uint8Array(split.x.buffer, split.x.byteOffset, split.x.byteLength));
    hash.update(new Uint8Array(split.y.buffer, split.y.byteOffset, split.y.byteLength));
  }
  return `sha256:${hash.digest('hex').slice(0, 32)}`;
}
