/**
 * The data set in engine memory: copied in once per thread (rows padded to the first layer's
 * stride), kept while trials on the same data set follow, replaced when another one arrives.
 */
import type { SharedDataset } from '../../core/job.js';
import { align16, engine, padColumns, reserve } from './module.js';

/** Byte addresses of a resident data set's matrices; `end` is the first free byte after them. */
export interface ResidentData {
  id: string;
  stride: number;
  trainX: number;
  trainY: number;
  validationX: number;
  validationY: number;
  end: number;
}

let resident: ResidentData | undefined;

function copyRows(at: number, x: Float32Array, rows: number, columns: number, stride: number): void {
  const target = new Float32Array(engine().memory.buffer, at, rows * stride);
  target.fill(0);
  for (let r = 0; r < rows; r++) target.set(x.subarray(r * columns, (r + 1) * columns), r * stride);
}

/** The data set's addresses, copying it into engine memory unless it is already there. */
export function residentData(dataset: SharedDataset): ResidentData {
  if (resident?.id === dataset.id) return resident;
  resident = undefined;
  const stride = padColumns(dataset.inputCount);
  const base = align16(engine().heapBase());
  const trainX = base;
  const trainY = align16(trainX + dataset.train.rows * stride * 4);
  const validationX = align16(trainY + dataset.train.rows * 4);
  const validationY = align16(validationX + dataset.validation.rows * stride * 4);
  const end = align16(validationY + dataset.validation.rows * 4);
  reserve(end);
  copyRows(trainX, dataset.train.x, dataset.train.rows, dataset.inputCount, stride);
  copyRows(validationX, dataset.validation.x, dataset.validation.rows, dataset.inputCount, stride);
  new Float32Array(engine().memory.buffer, trainY, dataset.train.rows).set(dataset.train.y);
  new Float32Array(engine().memory.buffer, validationY, dataset.validation.rows).set(dataset.validation.y);
  resident = { id: dataset.id, stride, trainX, trainY, validationX, validationY, end };
  return resident;
}
