/**
 * Writes the invented data sets under `studies/`: the demo pump logs and three tiny files for fast
 * end-to-end tests. Every number comes from fixed seeded streams, so two runs give byte-identical files.
 *
 * Run from anywhere: `npm run build && node dist/scripts/generate-demo-data.js`.
 */
import { existsSync, mkdirSync, writeFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { stream, type Rng } from '../src/random/streams.js';

/** Seed of every stream in this file; changing it changes every committed CSV. */
export const DEMO_DATA_SEED = 20261202;
/** Rows of `studies/demo/pump-logs.csv`. */
export const PUMP_LOG_ROWS = 3000;
/** Rows of each tiny file. */
export const TINY_ROWS = 120;

export const SITE_TYPES = ['reservoir', 'canal', 'borehole', 'booster'] as const;
export const IMPELLER_MATERIALS = ['cast_iron', 'bronze', 'stainless_steel'] as const;
export type SiteType = (typeof SITE_TYPES)[number];
export type ImpellerMaterial = (typeof IMPELLER_MATERIALS)[number];

/** One pump's sensor summary for one week, as measured, before any probe dropout. */
export interface PumpReadings {
  vibrationRmsMmPerS: number;
  bearingTempC: number;
  dischargePressureBar: number;
  motorCurrentA: number;
  hoursSinceService: number;
  dutyCyclePct: number;
  siteType: SiteType;
  impellerMaterial: ImpellerMaterial;
  ambientHumidityPct: number;
}

/** One row of the demo CSV, with the hidden risk its label was drawn from. */
export interface PumpLog extends Omit<PumpReadings, 'bearingTempC' | 'ambientHumidityPct'> {
  /** `undefined` when the temperature probe dropped out. */
  bearingTempC: number | undefined;
  /** `undefined` when the humidity logger dropped out. */
  ambientHumidityPct: number | undefined;
  /** Probability of failure within the week under the generating model (not written to the CSV). */
  failureProbability: number;
  failsWithinWeek: boolean;
}

/** A file to write, its path relative to the repository root. */
export interface DataFile {
  path: string;
  contents: string;
}

export const PUMP_LOG_COLUMNS = [
  'vibration_rms_mm_s',
  'bearing_temp_c',
  'discharge_pressure_bar',
  'motor_current_a',
  'hours_since_service',
  'duty_cycle_pct',
  'site_type',
  'impeller_material',
  'ambient_humidity_pct',
  'fails_within_week',
] as const;

/** Share of rows whose bearing temperature, and separately ambient humidity, is left blank. */
const MISSING_SHARE = 0.02;
/** Share of labels flipped after drawing, on top of the Bernoulli draw. */
const LABEL_FLIP_SHARE = 0.03;

const SITE_SHARES: Record<SiteType, number> = { reservoir: 0.3, canal: 0.3, borehole: 0.25, booster: 0.15 };
const MATERIAL_SHARES: Record<ImpellerMaterial, number> = { cast_iron: 0.45, bronze: 0.3, stainless_steel: 0.25 };
/** Typical head each site type pumps against. */
const SITE_PRESSURE_BAR: Record<SiteType, number> = { reservoir: 4, canal: 2.5, borehole: 7, booster: 6 };
/** Hours since service after which wear sets in; dusty and deep sites wear sooner. */
const SITE_SERVICE_LIMIT_HOURS: Record<SiteType, number> = { reservoir: 1300, canal: 750, borehole: 500, booster: 1000 };

const sigmoid = (z: number): number => 1 / (1 + Math.exp(-z));
const clamp = (v: number, low: number, high: number): number => Math.min(high, Math.max(low, v));

/** A standard normal draw (Box-Muller, one value per call). */
function normal(rng: Rng): number {
  const u = 1 - rng(); // in (0, 1]: log stays finite
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rng());
}

function pick<T extends string>(rng: Rng, shares: Record<T, number>): T {
  const entries = Object.entries(shares) as [T, number][];
  let u = rng();
  for (const [value, share] of entries) {
    if (u < share) return value;
    u -= share;
  }
  return entries[entries.length - 1]![0];
}

const round = (v: number, digits: number): number => Number(v.toFixed(digits));

/**
 * Failure probability under the generating model. The log-odds add up nonlinear parts, so no
 * linear model of the columns can rank pumps as well as this function:
 * - vibration AND bearing heat together (a product of two soft thresholds);
 * - a U-shaped duty cycle: pumps that idle (seals dry out) or never rest (overheat) fail more;
 * - a wear threshold on hours since service whose position depends on the site type;
 * - bronze impellers above 7 bar, and cast iron in humid air (> 80 %).
 */
export function pumpFailureProbability(log: PumpReadings): number {
  const hotAndShaking = sigmoid((log.vibrationRmsMmPerS - 5.5) / 0.5) * sigmoid((log.bearingTempC - 66) / 2);
  const dutyDeviation = (log.dutyCyclePct - 50) / 30;
  const worn = sigmoid((log.hoursSinceService - SITE_SERVICE_LIMIT_HOURS[log.siteType]) / 40);
  const overPressedBronze = log.impellerMaterial === 'bronze' ? sigmoid((log.dischargePressureBar - 7) / 0.3) : 0;
  const corrodedIron = log.impellerMaterial === 'cast_iron' ? sigmoid((log.ambientHumidityPct - 80) / 2) : 0;
  const logOdds =
    -5.7 +
    5.0 * hotAndShaking +
    2.2 * dutyDeviation * dutyDeviation +
    3.0 * worn +
    3.0 * overPressedBronze +
    2.0 * corrodedIron +
    0.03 * (log.motorCurrentA - 30);
  return sigmoid(logOdds);
}

/** Draws `rows` pump logs from the seeded stream `(seed, 'pump-logs')`. */
export function generatePumpLogs(rows: number = PUMP_LOG_ROWS, seed: number = DEMO_DATA_SEED): PumpLog[] {
  const rng = stream(seed, 'pump-logs');
  const logs: PumpLog[] = [];
  for (let i = 0; i < rows; i++) {
    const siteType = pick(rng, SITE_SHARES);
    const impellerMaterial = pick(rng, MATERIAL_SHARES);
    const dutyCyclePct = round(5 + 93 * rng(), 1);
    const hoursSinceService = Math.floor(1800 * rng());
    // Wear raises vibration a little, so vibration and service hours are correlated, as in the field.
    const vibrationRmsMmPerS = round(clamp(Math.exp(Math.log(3) + 0.45 * normal(rng) + hoursSinceService / 6000), 0.3, 25), 2);
    const ambientHumidityPct = round(clamp(30 + 65 * rng(), 0, 100), 1);
    const bearingTempC = round(50 + 0.22 * (dutyCyclePct - 50) + 1.2 * (vibrationRmsMmPerS - 3) + 7 * normal(rng), 1);
    const dischargePressureBar = round(Math.max(0.5, SITE_PRESSURE_BAR[siteType] + 1.1 * normal(rng)), 2);
    const motorCurrentA = round(Math.max(5, 18 + 0.12 * dutyCyclePct + 1.6 * dischargePressureBar + 3 * normal(rng)), 1);
    const failureProbability = pumpFailureProbability({
      vibrationRmsMmPerS, bearingTempC, dischargePressureBar, motorCurrentA, hoursSinceService,
      dutyCyclePct, siteType, impellerMaterial, ambientHumidityPct,
    });
    let failsWithinWeek = rng() < failureProbability;
    if (rng() < LABEL_FLIP_SHARE) failsWithinWeek = !failsWithinWeek;
    // Probe dropouts are independent of the risk: the model must impute, not read the blank as a signal.
    const temperatureMissing = rng() < MISSING_SHARE;
    const humidityMissing = rng() < MISSING_SHARE;
    logs.push({
      vibrationRmsMmPerS,
      bearingTempC: temperatureMissing ? undefined : bearingTempC,
      dischargePressureBar,
      motorCurrentA,
      hoursSinceService,
      dutyCyclePct,
      siteType,
      impellerMaterial,
      ambientHumidityPct: humidityMissing ? undefined : ambientHumidityPct,
      failureProbability,
      failsWithinWeek,
    });
  }
  return logs;
}

function toCsv(header: readonly string[], rows: readonly (readonly (string | number | undefined)[])[]): string {
  const lines = [header.join(',')];
  for (const row of rows) lines.push(row.map((cell) => (cell === undefined ? '' : String(cell))).join(','));
  return lines.join('\n') + '\n';
}

/** The CSV text of pump logs: blanks for missing values, `yes`/`no` labels, `\n` line ends. */
export function pumpLogsCsv(logs: readonly PumpLog[]): string {
  return toCsv(
    PUMP_LOG_COLUMNS,
    logs.map((log) => [
      log.vibrationRmsMmPerS,
      log.bearingTempC,
      log.dischargePressureBar,
      log.motorCurrentA,
      log.hoursSinceService,
      log.dutyCyclePct,
      log.siteType,
      log.impellerMaterial,
      log.ambientHumidityPct,
      log.failsWithinWeek ? 'yes' : 'no',
    ]),
  );
}

/** Tiny binary file: a nearly linear boundary, so a 3-epoch run already learns something. */
export function tinyBinaryCsv(seed: number = DEMO_DATA_SEED): string {
  const rng = stream(seed, 'tiny-binary');
  const rows: (string | number)[][] = [];
  for (let i = 0; i < TINY_ROWS; i++) {
    const siteType = SITE_TYPES[Math.floor(rng() * 3)]!;
    const vibration = round(1 + 8 * rng(), 2);
    const temperature = round(40 + 40 * rng(), 1);
    const hours = Math.floor(1500 * rng());
    const score = (vibration - 5) / 2 + (temperature - 60) / 10 + (hours - 750) / 500 + (siteType === 'borehole' ? 1 : 0);
    const fails = score + 0.4 * normal(rng) > 0.5;
    rows.push([vibration, temperature, hours, siteType, fails ? 'yes' : 'no']);
  }
  return toCsv(['vibration_rms_mm_s', 'bearing_temp_c', 'hours_since_service', 'site_type', 'fails_within_week'], rows);
}

/** Tiny regression file: discharge flow from speed, head and pipe size (affinity-law shaped, plus noise). */
export function tinyRegressionCsv(seed: number = DEMO_DATA_SEED): string {
  const rng = stream(seed, 'tiny-regression');
  const rows: (string | number)[][] = [];
  for (let i = 0; i < TINY_ROWS; i++) {
    const siteType = SITE_TYPES[Math.floor(rng() * 3)]!;
    const speed = round(900 + 2100 * rng(), 0);
    const pressure = round(1 + 7 * rng(), 2);
    const diameter = [80, 100, 150][Math.floor(rng() * 3)]!;
    const flow = (speed / 1000) * (diameter / 100) ** 2 * 12 - 1.1 * pressure + (siteType === 'canal' ? 3 : 0) + normal(rng);
    rows.push([speed, pressure, diameter, siteType, round(Math.max(0, flow + 8), 2)]);
  }
  return toCsv(['speed_rpm', 'discharge_pressure_bar', 'pipe_diameter_mm', 'site_type', 'flow_l_s'], rows);
}

/** Tiny multiclass file: which fault a pump shows, from vibration, heat and seal moisture. */
export function tinyMulticlassCsv(seed: number = DEMO_DATA_SEED): string {
  const rng = stream(seed, 'tiny-multiclass');
  const rows: (string | number)[][] = [];
  for (let i = 0; i < TINY_ROWS; i++) {
    const siteType = SITE_TYPES[Math.floor(rng() * 3)]!;
    // Draw the class first, then its symptoms: balanced classes with clearly separated centres.
    const fault = (['none', 'bearing', 'seal'] as const)[i % 3]!;
    const vibration = round((fault === 'bearing' ? 7 : 3) + 1.2 * normal(rng), 2);
    const temperature = round((fault === 'bearing' ? 72 : 55) + 6 * normal(rng), 1);
    const moisture = round(clamp((fault === 'seal' ? 60 : 20) + 12 * normal(rng), 0, 100), 1);
    rows.push([vibration, temperature, moisture, siteType, fault]);
  }
  return toCsv(['vibration_rms_mm_s', 'bearing_temp_c', 'seal_moisture_pct', 'site_type', 'fault_kind'], rows);
}

/** Every generated file, paths relative to the repository root. */
export function demoDataFiles(seed: number = DEMO_DATA_SEED): DataFile[] {
  return [
    { path: 'studies/demo/pump-logs.csv', contents: pumpLogsCsv(generatePumpLogs(PUMP_LOG_ROWS, seed)) },
    { path: 'studies/tiny/tiny.csv', contents: tinyBinaryCsv(seed) },
    { path: 'studies/tiny/tiny-regression.csv', contents: tinyRegressionCsv(seed) },
    { path: 'studies/tiny/tiny-multiclass.csv', contents: tinyMulticlassCsv(seed) },
  ];
}

/** Nearest folder at or above `start` holding a package.json (the source and the compiled script sit at different depths). */
function repositoryRoot(start: string): string {
  let folder = start;
  while (!existsSync(join(folder, 'package.json'))) {
    const parent = dirname(folder);
    if (parent === folder) throw new Error(`No package.json above ${start}; run the script inside the repository.`);
    folder = parent;
  }
  return folder;
}

/** Writes every generated file under `rootDirectory`; returns the paths written. */
export function writeDemoData(rootDirectory: string): string[] {
  return demoDataFiles().map((file) => {
    const target = resolve(rootDirectory, file.path);
    mkdirSync(dirname(target), { recursive: true });
    writeFileSync(target, file.contents);
    return target;
  });
}

const invokedPath = process.argv[1];
if (invokedPath !== undefined && import.meta.url === pathToFileURL(resolve(invokedPath)).href) {
  for (const written of writeDemoData(repositoryRoot(dirname(fileURLToPath(import.meta.url))))) console.log(`wrote ${written}`);
}
