import seedrandom from 'seedrandom';

/** A seeded source of uniform numbers in [0, 1). */
export type Rng = () => number;

/**
 * A deterministic stream keyed by a list of parts, e.g. `stream(studySeed, 'params', trialId)`.
 * Equal keys give equal streams on every machine and thread.
 */
export function stream(...key: (string | number)[]): Rng {
  const prng = seedrandom(key.join('/'));
  return () => prng.quick();
}

/** A 31-bit integer seed derived from a key, for libraries that take an integer seed. */
export function deriveSeed(...key: (string | number)[]): number {
  return seedrandom(key.join('/')).int32() >>> 1;
}

/** The trial's own seed: fixes its initial weights, dropout masks and (with the epoch) its shuffles. */
export function trialSeed(studySeed: number, trialId: number): number {
  return deriveSeed(studySeed, 'trial', trialId);
}

/** Fisher-Yates shuffle of 0..n-1 drawn from `rng`. */
export function permutation(n: number, rng: Rng): Int32Array {
  const order = new Int32Array(n);
  for (let i = 0; i < n; i++) order[i] = i;
  for (let i = n - 1; i > 0; i--) {
    const j = Math.floor(rng() * (i + 1));
    const tmp = order[i]!;
    order[i] = order[j]!;
    order[j] = tmp;
  }
  return order;
}
