/**
 * The benchmark's relaxed-SIMD comparison build (dist/bench/engine-relaxed.wasm, fused multiply-add
 * in the matrix products) computes the same thing as the engine: gradients of every parameter and
 * the losses of 3 epochs agree with the plain SIMD build to a stated tolerance, not bit for bit
 * (a fused multiply-add rounds once where a multiply and an add round twice). The plain build's
 * gradients are themselves checked against tfjs in engine.gradients.test.ts. On Node 20 the build
 * validates only under V8's --experimental-wasm-relaxed-simd, which the child process is given.
 */
import { execFile } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

const ROOT = fileURLToPath(new URL('..', import.meta.url));
const PROBE = 'test/fixtures/engine-build-probe.mjs';
const RELAXED = 'dist/bench/engine-relaxed.wasm';
/** Largest relative difference (to the largest magnitude of each array) allowed between the builds. Common practice (no source): float32 last-bit differences, a few steps amplified. */
const GRADIENT_TOLERANCE = 1e-5;
const LOSS_TOLERANCE = 1e-5;

interface ProbeResult {
  task: string;
  activation: string;
  gradients: number[][];
  losses: number[];
}

function probe(args: string[], execArgv: string[] = []): Promise<ProbeResult[]> {
  return new Promise((resolve, reject) => {
    execFile(process.execPath, [...execArgv, PROBE, ...args], { cwd: ROOT, maxBuffer: 1 << 24 }, (error, stdout, stderr) => {
      if (error) reject(new Error(`${PROBE} ${args.join(' ')}: ${stderr || error.message}`));
      else resolve(JSON.parse(stdout) as ProbeResult[]);
    });
  });
}

function relativeDifference(a: readonly number[], b: readonly number[]): number {
  const scale = Math.max(1e-12, ...a.map(Math.abs));
  return Math.max(...a.map((value, i) => Math.abs(value - b[i]!))) / scale;
}

describe('the relaxed-SIMD comparison build against the engine', () => {
  it(`gradients within ${GRADIENT_TOLERANCE} and 3 epochs of losses within ${LOSS_TOLERANCE} relative difference, every task`, async () => {
    const [plain, relaxed] = await Promise.all([probe([]), probe([RELAXED], ['--experimental-wasm-relaxed-simd'])]);
    expect(relaxed.map((r) => `${r.task} ${r.activation}`)).toEqual(plain.map((r) => `${r.task} ${r.activation}`));
    expect(plain).toHaveLength(6);
    plain.forEach((reference, n) => {
      const other = relaxed[n]!;
      const where = `${reference.task}, ${reference.activation}`;
      expect(other.gradients).toHaveLength(reference.gradients.length);
      reference.gradients.forEach((gradient, i) => expect(relativeDifference(gradient, other.gradients[i]!), `${where}, variable ${i}`).toBeLessThan(GRADIENT_TOLERANCE));
      expect(other.losses).toHaveLength(6);
      reference.losses.forEach((loss, i) => expect(Math.abs(loss - other.losses[i]!) / Math.max(1, Math.abs(loss)), `${where}, loss ${i}`).toBeLessThan(LOSS_TOLERANCE));
    });
  });
});
