import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import type { PreparedData, SplitArrays } from './types.js';

/**
 * A content hash of the training and validation matrices (and the class weights and the cost
 * matrix, when there are any): equal ids mean equal data sets as a worker sees them, on any machine.
 */
export function datasetId(data: Pick<PreparedData, 'recipe' | 'train' | 'validation' | 'classWeights' | 'costMatrix'>): string {
  return splitsHash(data.recipe, [data.train, data.validation], data.classWeights, data.costMatrix);
}

/** Content hashes of the CSV file and of the prepared splits, as the study file records them. */
export interface DataHashes {
  /** The CSV file's bytes. */
  csv: string;
  /** The training and validation matrices (the {@link datasetId} workers train on). */
  trainAndValidation: string;
  /** The held-out test split. */
  test: string;
}

/**
 * `csvSha256` is the hash `prepareData` computed while it read the file (so the hash is of the very
 * bytes the data came from); without it the file is read again.
 */
export async function dataHashes(csvFile: string, data: PreparedData, csvSha256?: string): Promise<DataHashes> {
  let hex = csvSha256;
  if (hex === undefined) {
    const csv = createHash('sha256');
    for await (const chunk of createReadStream(csvFile)) csv.update(chunk as Buffer);
    hex = csv.digest('hex');
  }
  // Without the costs: changing what errors cost does not change the data.
  return { csv: `sha256:${hex}`, trainAndValidation: splitsHash(data.recipe, [data.train, data.validation], data.classWeights), test: splitsHash(data.recipe, [data.test]) };
}

function splitsHash(recipe: PreparedData['recipe'], splits: readonly SplitArrays[], classWeights?: readonly number[], costMatrix?: readonly (readonly number[])[]): string {
  const hash = createHash('sha256').update(JSON.stringify(recipe));
  if (classWeights) hash.update(`classWeights:${JSON.stringify(classWeights)}`);
  if (costMatrix) hash.update(`costMatrix:${JSON.stringify(costMatrix)}`);
  for (const split of splits) {
    hash.update(`${split.rows}/${split.x.length}/${split.y.length}`);
    hash.update(new Uint8Array(split.x.buffer, split.x.byteOffset, split.x.byteLength));
    hash.update(new Uint8Array(split.y.buffer, split.y.byteOffset, split.y.byteLength));
  }
  return `sha256:${hash.digest('hex').slice(0, 32)}`;
}
