import * as tf from '@tensorflow/tfjs';
import '@tensorflow/tfjs-backend-wasm';

let ready: Promise<void> | undefined;

/**
 * Selects the tfjs wasm backend for this thread. Idempotent: every call after the first
 * returns the same promise, so callers may await it before each request.
 *
 * The cpu backend's "install the node backend" hint is printed only when the cpu backend
 * first stores a tensor; with wasm selected before any tensor exists it never is.
 */
export function initBackend(): Promise<void> {
  ready ??= (async () => {
    const selected = await tf.setBackend('wasm');
    if (!selected) throw new Error('the tfjs wasm backend could not be initialised in this thread');
    await tf.ready();
  })();
  return ready;
}
