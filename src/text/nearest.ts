import { closest, distance } from 'fastest-levenshtein';

/**
 * The candidate nearest to `word` by edit distance (case-insensitive), or undefined when
 * nothing is close enough to be a likely typo (more than a third of the word's letters differ).
 */
export function nearest(word: string, candidates: readonly string[]): string | undefined {
  if (candidates.length === 0) return undefined;
  const lowered = candidates.map((c) => c.toLowerCase());
  const best = closest(word.toLowerCase(), lowered);
  const limit = Math.max(2, Math.ceil(word.length / 3));
  if (distance(word.toLowerCase(), best) > limit) return undefined;
  return candidates[lowered.indexOf(best)];
}

/** " (did you mean 'x'?)" or the empty string. */
export function didYouMean(word: string, candidates: readonly string[]): string {
  const hit = nearest(word, candidates);
  return hit === undefined ? '' : ` (did you mean '${hit}'?)`;
}
