/**
 * Existing studies train as before: the engine's curves of the demo study's first four trials (one
 * sgd, two momentum, one Adam; five epochs) are bit for bit those recorded with the build from before
 * the regularisers were added (main at 8959faf, `node scripts/demo-curves.mjs <that build's dist> 4 5`).
 * A study that does not name a regulariser must never see one.
 */
import { execFileSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

const repositoryFile = (path: string): string => fileURLToPath(new URL(`../${path}`, import.meta.url));

describe('studies without regularisers', () => {
  it('the demo study trains the same curves, bit for bit, as before the regularisers existed', () => {
    const recorded = JSON.parse(readFileSync(repositoryFile('test/fixtures/curves/demo-before-regularisers.json'), 'utf8')) as unknown[];
    const now = JSON.parse(execFileSync(process.execPath, [repositoryFile('scripts/demo-curves.mjs'), repositoryFile('dist'), '4', '5'], { encoding: 'utf8' })) as unknown[];
    expect(recorded).toHaveLength(4);
    expect(now).toEqual(recorded);
  });
});
