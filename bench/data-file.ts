/** Seeded synthetic CSVs for the data-load benchmark, written at bench time (never committed). */
import { createWriteStream } from 'node:fs';
import { once } from 'node:events';
import { stream } from '../src/random/streams.js';

export const NUMERIC_COLUMNS = 28;
export const CATEGORIES = ['north', 'south', 'east', 'west', 'centre'] as const;

/**
 * Writes `rows` rows of 30 columns: 28 numeric features (2 to 4 decimals), one categorical feature
 * (5 values) and a binary target, from `stream(seed, 'bench-data')`; about 230 bytes a row.
 */
export async function writeDataCsv(file: string, rows: number, seed = 1): Promise<void> {
  const rng = stream(seed, 'bench-data');
  const out = createWriteStream(file);
  const header = [...Array.from({ length: NUMERIC_COLUMNS }, (_, c) => `x${c + 1}`), 'region', 'label'];
  let block = `${header.join(',')}\n`;
  for (let r = 0; r < rows; r++) {
    const cells: string[] = [];
    let signal = 0;
    for (let c = 0; c < NUMERIC_COLUMNS; c++) {
      const value = (rng() - 0.5) * 10 ** (c % 4);
      if (c < 4) signal += value / 10 ** (c % 4);
      cells.push(value.toFixed(2 + (c % 3)));
    }
    cells.push(CATEGORIES[Math.floor(rng() * CATEGORIES.length)]!, signal + rng() - 0.5 > 0 ? 'yes' : 'no');
    block += `${cells.join(',')}\n`;
    if (block.length > 1 << 20) {
      if (!out.write(block)) await once(out, 'drain');
      block = '';
    }
  }
  out.end(block);
  await once(out, 'finish');
}
