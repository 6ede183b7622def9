// The training step's batch: rows order[start .. start + rows) of the training set copied into the
// batch buffers, for the plain step (index.ts) and the residual one (residual.ts) alike.
import { BATCH_X, BATCH_Y, IN_STRIDE, layerField, ORDER, pointer, TRAIN_X, TRAIN_Y } from './layout';

/** Gathers the step's rows (inputs padded to the first layer's stride, and targets) into BATCH_X and BATCH_Y. */
// @ts-ignore: decorator
@inline export function gatherBatch(net: usize, start: i32, rows: i32): void {
  const rowBytes = <usize>layerField(net, 0, IN_STRIDE) << 2;
  const order = pointer(net, ORDER), trainX = pointer(net, TRAIN_X), trainY = pointer(net, TRAIN_Y);
  const batchX = pointer(net, BATCH_X), batchY = pointer(net, BATCH_Y);
  for (let r = 0; r < rows; r++) {
    const index = <usize>load<i32>(order + (<usize>(start + r) << 2));
    memory.copy(batchX + <usize>r * rowBytes, trainX + index * rowBytes, rowBytes);
    store<f32>(batchY + (<usize>r << 2), load<f32>(trainY + (index << 2)));
  }
}
