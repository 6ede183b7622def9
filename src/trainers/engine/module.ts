/**
 * The compiled engine (`engine.wasm`, built from assembly/ by `npm run build`), instantiated once
 * per thread, and its one memory. Trials lay themselves out in it; it only ever grows, to what the
 * largest trial and data set seen in this thread need.
 */
import { existsSync, readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

/** The functions the engine exports (byte addresses are numbers). */
export interface EngineExports {
  memory: { buffer: ArrayBuffer; grow(pages: number): number };
  heapBase(): number;
  trainStep(net: number, start: number, rows: number): number;
  evaluate(net: number, x: number, y: number, rows: number, chunk: number, out: number): number;
  gemm(a: number, lda: number, b: number, ldb: number, bias: number, c: number, ldc: number, m: number, k: number, n: number): void;
}

const WASM_FILE = 'engine.wasm';
const PAGE_BYTES = 65536;

/** Compiled workers load dist/engine.wasm from dist/src/trainers/engine/; sources (tests) from src/trainers/engine/. */
function wasmPath(): string {
  const candidates = [new URL(`../../../${WASM_FILE}`, import.meta.url), new URL(`../../../dist/${WASM_FILE}`, import.meta.url)];
  const found = candidates.map((url) => fileURLToPath(url)).find((file) => existsSync(file));
  if (!found) throw new Error(`the training engine ${WASM_FILE} is missing; run npm run build (looked in ${candidates.map((u) => fileURLToPath(u)).join(', ')})`);
  return found;
}

/** The two WebAssembly constructors used here (Node's global; its types ship with the DOM library only). */
interface WebAssemblyApi {
  Module: new (bytes: Uint8Array) => object;
  Instance: new (module: object) => { exports: unknown };
}

let instance: EngineExports | undefined;

/** This thread's engine instance (compiled and instantiated on first use). */
export function engine(): EngineExports {
  if (!instance) {
    const wasm = (globalThis as unknown as { WebAssembly: WebAssemblyApi }).WebAssembly;
    instance = new wasm.Instance(new wasm.Module(readFileSync(wasmPath()))).exports as EngineExports;
  }
  return instance;
}

/** Grows the engine memory so that bytes [0, end) exist. */
export function reserve(end: number): void {
  const { memory } = engine();
  const missing = end - memory.buffer.byteLength;
  if (missing > 0) memory.grow(Math.ceil(missing / PAGE_BYTES));
}

/** Rounds a byte address up to 16 (one SIMD vector). */
export const align16 = (bytes: number): number => Math.ceil(bytes / 16) * 16;

/** Rounds a column count up to whole SIMD lanes of 4 floats. */
export const padColumns = (columns: number): number => Math.ceil(columns / 4) * 4;

/** Bytes of this thread's engine memory (0 before the engine is first used). */
export function engineMemoryBytes(): number {
  return instance ? instance.memory.buffer.byteLength : 0;
}
