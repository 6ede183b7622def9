/**
 * Residual studies without regularisers train as before the residual step took them: the engine's
 * curves of the shapes demo study's first eight trials (six with residual blocks, two plain; four
 * epochs) are bit for bit those recorded with the build from before (main at b878c56,
 * `node scripts/demo-curves.mjs <that build's dist> 8 4 studies/demo/study-shapes.json`).
 */
import { execFileSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

const repositoryFile = (path: string): string => fileURLToPath(new URL(`../${path}`, import.meta.url));

describe('residual studies without regularisers', () => {
  it('the shapes demo study trains the same curves, bit for bit, as before residual blocks took the regularisers', () => {
    const recorded = JSON.parse(readFileSync(repositoryFile('test/fixtures/curves/shapes-before-residual-regularisers.json'), 'utf8')) as { configuration: { block?: string } }[];
    const now = JSON.parse(execFileSync(process.execPath, [repositoryFile('scripts/demo-curves.mjs'), repositoryFile('dist'), '8', '4', 'studies/demo/study-shapes.json'], { encoding: 'utf8' })) as unknown[];
    expect(recorded).toHaveLength(8);
    expect(recorded.filter((trial) => trial.configuration.block === 'residual').length).toBeGreaterThanOrEqual(4);
    expect(now).toEqual(recorded);
  });
});
