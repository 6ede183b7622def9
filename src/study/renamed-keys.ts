/**
 * Sampler options renamed in rungwise 0.1 to names of the project's own (see README, "Renamed sampler
 * options"). Old definitions and study files are read with the new names and a one-line note.
 */
export const RENAMED_SAMPLER_KEYS: Readonly<Record<string, string>> = {
  startupTrials: 'trialsBeforeModel',
  candidates: 'drawsPerProposal',
  priorWeight: 'wideKernelWeight',
  candidateBandwidthFactor: 'drawWidening',
  randomFraction: 'randomShare',
  minResults: 'smallestGroup',
};

/**
 * The sampler options with old key names replaced by the new ones, and the renames made. A key whose
 * new name is also present is left as it is, so validation names the old one as unknown.
 */
export function renameSamplerKeys(sampler: unknown): { sampler: unknown; renamed: [from: string, to: string][] } {
  if (sampler === null || typeof sampler !== 'object' || Array.isArray(sampler)) return { sampler, renamed: [] };
  const renamed: [string, string][] = [];
  const entries = Object.entries(sampler as Record<string, unknown>).map(([key, value]): [string, unknown] => {
    const to = RENAMED_SAMPLER_KEYS[key];
    if (to === undefined || to in sampler) return [key, value];
    renamed.push([key, to]);
    return [to, value];
  });
  return { sampler: renamed.length > 0 ? Object.fromEntries(entries) : sampler, renamed };
}

/** The one-line note for renamed sampler keys of `file`, or undefined when none was renamed. */
export function renamedKeysNote(file: string, renamed: readonly [string, string][], advice = `rename ${renamed.length === 1 ? 'it' : 'them'} in the definition`): string | undefined {
  if (renamed.length === 0) return undefined;
  const list = renamed.map(([from, to]) => `"${from}" as "${to}"`).join(', ');
  return `${file}: sampler: read the old option name${renamed.length === 1 ? '' : 's'} ${list}; ${advice}`;
}
