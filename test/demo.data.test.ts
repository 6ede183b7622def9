import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import {
  PUMP_LOG_COLUMNS,
  PUMP_LOG_ROWS,
  demoDataFiles,
  generatePumpLogs,
  pumpFailureProbability,
  pumpLogsCsv,
  type PumpReadings,
} from '../scripts/generate-demo-data.js';

const repositoryFile = (path: string): string => fileURLToPath(new URL(`../${path}`, import.meta.url));
const sha256 = (text: string): string => createHash('sha256').update(text).digest('hex');

/** Rows of a generated CSV (no quoting is ever needed: no field holds a comma). */
function parse(csv: string): { header: string[]; rows: string[][] } {
  const [header, ...rows] = csv.trimEnd().split('\n').map((line) => line.split(','));
  return { header: header!, rows };
}

const files = demoDataFiles();
const pumpLogs = parse(files.find((file) => file.path === 'studies/demo/pump-logs.csv')!.contents);
const column = (name: string): string[] => pumpLogs.rows.map((row) => row[pumpLogs.header.indexOf(name)]!);

describe('generated demo data', () => {
  it('is byte-identical from one run to the next', () => {
    expect(demoDataFiles().map((file) => sha256(file.contents))).toEqual(files.map((file) => sha256(file.contents)));
  });

  it.each(files.map((file) => [file.path, file] as const))('equals the committed %s', (path, file) => {
    expect(sha256(readFileSync(repositoryFile(path), 'utf8'))).toBe(sha256(file.contents));
  });

  it('changes with the seed', () => {
    expect(pumpLogsCsv(generatePumpLogs(50, 1))).not.toBe(pumpLogsCsv(generatePumpLogs(50, 2)));
  });
});

describe('studies/demo/pump-logs.csv', () => {
  it('has the documented header, also in the committed file', () => {
    expect(pumpLogs.header).toEqual([...PUMP_LOG_COLUMNS]);
    const committedHeader = readFileSync(repositoryFile('studies/demo/pump-logs.csv'), 'utf8').split('\n')[0];
    expect(committedHeader).toBe(PUMP_LOG_COLUMNS.join(','));
  });

  it('has 3000 rows of 10 fields', () => {
    expect(PUMP_LOG_ROWS).toBe(3000);
    expect(pumpLogs.rows).toHaveLength(3000);
    expect(pumpLogs.rows.every((row) => row.length === 10)).toBe(true);
  });

  it('labels 20 to 30 percent of pumps as failing, with yes/no only', () => {
    const labels = column('fails_within_week');
    expect(new Set(labels)).toEqual(new Set(['yes', 'no']));
    const share = labels.filter((label) => label === 'yes').length / labels.length;
    expect(share).toBeGreaterThan(0.2);
    expect(share).toBeLessThan(0.3);
  });

  it('leaves about 2 percent blank in bearing temperature and humidity, and nowhere else', () => {
    for (const name of PUMP_LOG_COLUMNS) {
      const blanks = column(name).filter((cell) => cell === '').length;
      if (name === 'bearing_temp_c' || name === 'ambient_humidity_pct') {
        expect(blanks / pumpLogs.rows.length, name).toBeGreaterThan(0.01);
        expect(blanks / pumpLogs.rows.length, name).toBeLessThan(0.03);
      } else {
        expect(blanks, name).toBe(0);
      }
    }
  });

  it('uses four site types and three impeller materials', () => {
    expect(new Set(column('site_type'))).toEqual(new Set(['reservoir', 'canal', 'borehole', 'booster']));
    expect(new Set(column('impeller_material'))).toEqual(new Set(['cast_iron', 'bronze', 'stainless_steel']));
  });
});

describe('the failure risk behind the labels', () => {
  const calm: PumpReadings = {
    vibrationRmsMmPerS: 3,
    bearingTempC: 55,
    dischargePressureBar: 4,
    motorCurrentA: 30,
    hoursSinceService: 200,
    dutyCyclePct: 50,
    siteType: 'reservoir',
    impellerMaterial: 'stainless_steel',
    ambientHumidityPct: 50,
  };
  const risk = (change: Partial<typeof calm>): number => pumpFailureProbability({ ...calm, ...change });
  const logOdds = (p: number): number => Math.log(p / (1 - p));

  it('rises far more for vibration and heat together than for the two apart', () => {
    const both = logOdds(risk({ vibrationRmsMmPerS: 8, bearingTempC: 75 }));
    const shaking = logOdds(risk({ vibrationRmsMmPerS: 8 }));
    const hot = logOdds(risk({ bearingTempC: 75 }));
    const neither = logOdds(risk({}));
    expect(both - neither).toBeGreaterThan(3 * (shaking - neither + (hot - neither)));
  });

  it('is U-shaped in the duty cycle', () => {
    expect(risk({ dutyCyclePct: 8 })).toBeGreaterThan(2 * risk({ dutyCyclePct: 50 }));
    expect(risk({ dutyCyclePct: 95 })).toBeGreaterThan(2 * risk({ dutyCyclePct: 50 }));
  });

  it('turns on wear at 900 hours since service at a borehole but not at a reservoir', () => {
    expect(risk({ hoursSinceService: 900, siteType: 'borehole' })).toBeGreaterThan(5 * risk({ hoursSinceService: 900 }));
  });

  it('punishes high pressure only for bronze impellers', () => {
    const stainless = risk({ dischargePressureBar: 8.5 });
    expect(risk({ dischargePressureBar: 8.5, impellerMaterial: 'bronze' })).toBeGreaterThan(5 * stainless);
  });
});
