/**
 * Keys renamed to names of the project's own (see docs/study-definition.md, "Renamed keys"). Old
 * definitions and study files are read with the new names and a one-line note.
 */

/** Sampler options renamed in rungwise 0.1. */
export const RENAMED_SAMPLER_KEYS: Readonly<Record<string, string>> = {
  startupTrials: 'trialsBeforeModel',
  candidates: 'drawsPerProposal',
  priorWeight: 'wideKernelWeight',
  candidateBandwidthFactor: 'drawWidening',
  randomFraction: 'randomShare',
  minResults: 'smallestGroup',
};

/** Top-level definition keys renamed: `workers` meant this machine's threads, while a worker is a `rungwise worker` process. */
export const RENAMED_DEFINITION_KEYS: Readonly<Record<string, string>> = {
  workers: 'threads',
};

/** Renamed keys, as `[old name, new name]` pairs. */
export type Renames = [from: string, to: string][];

/**
 * `object` with the old key names of `table` replaced by the new ones, and the renames made. A key
 * whose new name is also present is left as it is, so validation names the old one as unknown.
 */
function renameKeys(object: unknown, table: Readonly<Record<string, string>>): { value: unknown; renamed: Renames } {
  if (object === null || typeof object !== 'object' || Array.isArray(object)) return { value: object, renamed: [] };
  const renamed: Renames = [];
  const entries = Object.entries(object as Record<string, unknown>).map(([key, value]): [string, unknown] => {
    const to = table[key];
    if (to === undefined || to in object) return [key, value];
    renamed.push([key, to]);
    return [to, value];
  });
  return { value: renamed.length > 0 ? Object.fromEntries(entries) : object, renamed };
}

/** The sampler options with old key names replaced by the new ones, and the renames made. */
export function renameSamplerKeys(sampler: unknown): { sampler: unknown; renamed: Renames } {
  const { value, renamed } = renameKeys(sampler, RENAMED_SAMPLER_KEYS);
  return { sampler: value, renamed };
}

/** The definition with old top-level key names replaced by the new ones, and the renames made. */
export function renameDefinitionKeys(definition: unknown): { definition: unknown; renamed: Renames } {
  const { value, renamed } = renameKeys(definition, RENAMED_DEFINITION_KEYS);
  return { definition: value, renamed };
}

function listed(renamed: readonly [string, string][]): string {
  return renamed.map(([from, to]) => `"${from}" as "${to}"`).join(', ');
}

/** The one-line note for renamed sampler keys of `file`, or undefined when none was renamed. */
export function renamedKeysNote(file: string, renamed: readonly [string, string][], advice = `rename ${renamed.length === 1 ? 'it' : 'them'} in the definition`): string | undefined {
  if (renamed.length === 0) return undefined;
  return `${file}: sampler: read the old option name${renamed.length === 1 ? '' : 's'} ${listed(renamed)}; ${advice}`;
}

/** The one-line note for renamed top-level keys of `file`, or undefined when none was renamed. */
export function renamedDefinitionNote(file: string, renamed: readonly [string, string][], advice = `rename ${renamed.length === 1 ? 'it' : 'them'} in the definition`): string | undefined {
  if (renamed.length === 0) return undefined;
  return `${file}: read the old key${renamed.length === 1 ? '' : 's'} ${listed(renamed)} (threads of this machine; a worker is a rungwise worker process); ${advice}`;
}
