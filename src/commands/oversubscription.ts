import { availableParallelism } from 'node:os';

/**
 * The warning for more threads than the machine has cores, or undefined. Each thread trains
 * one network flat out, so threads beyond the cores only take turns on them: every trial slows down
 * and the study ends later than with one thread per core. Common practice (no source).
 */
export function oversubscriptionWarning(threads: number, cores: number = availableParallelism()): string | undefined {
  if (threads <= cores) return undefined;
  return `${threads} threads on ${cores} core${cores === 1 ? '' : 's'}: the threads take turns on the cores, so every trial trains slower and the study ends later than with ${cores}; use --threads ${cores} or fewer`;
}
