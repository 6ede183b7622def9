/**
 * Columns that should not be features, checked once the columns are typed and before any trial
 * trains (README, "Columns that should not be features"):
 * - a categorical column with more distinct values than `data.maxDistinctShare` x rows (and than
 *   {@link MIN_DISTINCT_LIMIT}) is refused, unless `data.features` lists it (then it is used, with a
 *   warning);
 * - a column that looks like a date or an identifier is named in a warning.
 */
import { UserError } from '../core/errors.js';
import type { DataSettings } from '../study/definition.js';
import type { CategoricalValues, FeatureValues, NumericValues } from './values.js';

/** Default of `data.maxDistinctShare`: a text column may have distinct values in at most half the rows. */
export const DEFAULT_MAX_DISTINCT_SHARE = 0.5;
/** The distinct-value limit is never below this: a handful of categories in a small file is never refused. */
export const MIN_DISTINCT_LIMIT = 10;
/** Fewest values a column needs before its values can call it an identifier (a name can always). */
export const IDENTIFIER_MIN_VALUES = 10;

const MONTH = '(jan(uary)?|feb(ruary)?|mar(ch)?|apr(il)?|may|june?|july?|aug(ust)?|sep(t(ember)?)?|oct(ober)?|nov(ember)?|dec(ember)?)\\.?';
const TIME = '([T ]\\d{1,2}:\\d{2}(:\\d{2}(\\.\\d+)?)?\\s*(Z|[+-]\\d{2}:?\\d{2}|[ap]m)?)?';
/** Date spellings: ISO 8601 (2024-01-15, with a time), 2024/01/15, 15/01/2024, 01-15-2024, 15.01.2024, 15 Jan 2024, Jan 15, 2024. */
const DATE_PATTERNS: readonly RegExp[] = [
  new RegExp(`^(\\d{4})-(\\d{2})-(\\d{2})${TIME}$`, 'i'),
  new RegExp(`^(\\d{4})/(\\d{1,2})/(\\d{1,2})${TIME}$`, 'i'),
  new RegExp(`^(\\d{1,2})[/.-](\\d{1,2})[/.-](\\d{4})${TIME}$`, 'i'),
  new RegExp(`^\\d{1,2}[ -]${MONTH}[ ,-]*\\d{4}${TIME}$`, 'i'),
  new RegExp(`^${MONTH} \\d{1,2},? \\d{4}${TIME}$`, 'i'),
];

/** True when a cell spells a calendar date in one of the common forms above (month 1-12, day 1-31 where numeric). */
export function isDateSpelling(text: string): boolean {
  const value = text.trim();
  for (const [index, pattern] of DATE_PATTERNS.entries()) {
    const match = pattern.exec(value);
    if (match === null) continue;
    if (index === 0 || index === 1) return inCalendar(Number(match[2]), Number(match[3]));
    // Day and month in either order (15/01/2024 or 01/15/2024).
    if (index === 2) return inCalendar(Number(match[1]), Number(match[2])) || inCalendar(Number(match[2]), Number(match[1]));
    return true;
  }
  return false;
}

function inCalendar(month: number, day: number): boolean {
  return month >= 1 && month <= 12 && day >= 1 && day <= 31;
}

/** Identifier-like names: `id`, `uuid`, `guid` alone or after `_`, `-`, `.` or a space, any case (`pump_id`, `Pump ID`); or camelCase (`pumpId`, `userID`). */
const SEPARATED_IDENTIFIER = /(^|[\s_.-])(id|uuid|guid)$/i;
const CAMEL_IDENTIFIER = /[a-z0-9](Id|ID|Uuid|UUID|Guid|GUID)$/;

/** True when a column's name says it identifies rows (`id`, `pump_id`, `Pump ID`, `pumpId`; not `grid`, `paid` or `valid`). */
export function hasIdentifierName(name: string): boolean {
  const trimmed = name.trim();
  return SEPARATED_IDENTIFIER.test(trimmed) || CAMEL_IDENTIFIER.test(trimmed);
}

interface Counted {
  /** Non-missing cells. */
  present: number;
  /** Cells per label. */
  perLabel: number[];
}

function countLabels(column: CategoricalValues): Counted {
  const perLabel = new Array<number>(column.labels.length).fill(0);
  let present = 0;
  for (const code of column.codes) {
    if (code < 0) continue;
    perLabel[code]!++;
    present++;
  }
  return { present, perLabel };
}

/** A date column: more than half of its non-missing cells spell a date. Returns the count and an example. */
export function dateCells(column: CategoricalValues): { dates: number; present: number; example: string } | undefined {
  const { present, perLabel } = countLabels(column);
  let dates = 0;
  let example = '';
  column.labels.forEach((label, code) => {
    if (!isDateSpelling(label)) return;
    dates += perLabel[code]!;
    if (example === '') example = label;
  });
  return present > 0 && dates * 2 > present ? { dates, present, example } : undefined;
}

/**
 * Why a column looks like an identifier, or undefined:
 * - its name (see {@link hasIdentifierName});
 * - text: every non-missing value distinct, with at least {@link IDENTIFIER_MIN_VALUES} of them;
 * - numbers: every row a whole number, none missing, strictly increasing from row to row (a row
 *   counter), with at least {@link IDENTIFIER_MIN_VALUES} rows.
 */
export function identifierReason(column: FeatureValues): string | undefined {
  if (hasIdentifierName(column.name)) return 'its name says so';
  if (column.kind === 'categorical') {
    const { present } = countLabels(column);
    return present >= IDENTIFIER_MIN_VALUES && column.labels.length === present ? `every one of its ${present} values is different` : undefined;
  }
  return risingWholeNumbers(column) ? `its ${column.values.length} whole numbers rise with every row` : undefined;
}

function risingWholeNumbers(column: NumericValues): boolean {
  const { values } = column;
  if (values.length < IDENTIFIER_MIN_VALUES) return false;
  for (let row = 0; row < values.length; row++) {
    const value = values[row]!;
    if (!Number.isInteger(value)) return false;
    if (row > 0 && !(value > values[row - 1]!)) return false;
  }
  return true;
}

export interface FeatureCheckOptions {
  settings: DataSettings;
  /** The typed feature columns, in use order. */
  features: readonly FeatureValues[];
  /** Rows of the whole file. */
  rows: number;
  /** The CSV, as named in messages. */
  file: string;
  definitionFile: string;
  /**
   * The data of a study that already started (`resume`, `export`): a column over the distinct-value
   * limit is warned about, not refused, so a study begun before the limit existed can still go on.
   */
  started?: boolean;
}

const count = (n: number): string => n.toLocaleString('en-US');
const share = (value: number): string => String(Number(value.toPrecision(3)));

/**
 * Checks the feature columns; returns the warnings (one line each, naming the CSV and the column).
 * @throws UserError (E_DATA) naming the study file, the CSV, each column over the distinct-value limit, its count and the limit, and the two ways out.
 */
export function checkFeatureColumns(options: FeatureCheckOptions): string[] {
  const { settings, features, rows, file, definitionFile } = options;
  const maxShare = settings.maxDistinctShare ?? DEFAULT_MAX_DISTINCT_SHARE;
  const limit = Math.max(MIN_DISTINCT_LIMIT, Math.floor(maxShare * rows));
  const limitText =
    limit === MIN_DISTINCT_LIMIT && Math.floor(maxShare * rows) < MIN_DISTINCT_LIMIT
      ? `the limit of ${MIN_DISTINCT_LIMIT} (the least limit; data.maxDistinctShare ${share(maxShare)} x ${count(rows)} rows is lower)`
      : `the limit of ${count(limit)} (data.maxDistinctShare ${share(maxShare)} x ${count(rows)} rows)`;
  const listed = new Set(settings.features ?? []);
  const warnings: string[] = [];
  const refused: { name: string; distinct: number; looks: string }[] = [];
  const excludeHint = (name: string): string => `add '${name}' to data.exclude to leave it out`;
  for (const column of features) {
    const date = column.kind === 'categorical' ? dateCells(column) : undefined;
    const identifier = identifierReason(column);
    const looks = date ? 'looks like a date' : identifier ? 'looks like an identifier' : '';
    if (column.kind === 'categorical' && column.labels.length > limit) {
      const distinct = column.labels.length;
      if (!listed.has(column.name) && !options.started) {
        refused.push({ name: column.name, distinct, looks });
        continue;
      }
      const why = listed.has(column.name) ? 'data.features lists it' : 'the study started with it';
      warnings.push(
        `${file}: column '${column.name}' has ${count(distinct)} distinct values, more than ${limitText}; used because ${why}, as ${count(distinct)} one-hot inputs${looks ? `; it ${looks}` : ''}; ${excludeHint(column.name)}`,
      );
    } else if (date) {
      warnings.push(
        `${file}: column '${column.name}' looks like a date (${count(date.dates)} of its ${count(date.present)} values, e.g. '${date.example}'); it is used as ${column.kind === 'categorical' ? `a category, ${count(column.labels.length)} one-hot inputs` : 'a number'}; ${excludeHint(column.name)}, or give the CSV columns derived from it (month, day of the week)`,
      );
    } else if (identifier) {
      warnings.push(`${file}: column '${column.name}' looks like an identifier (${identifier}); an identifier rarely carries over to new rows; ${excludeHint(column.name)} unless it means something`);
    }
  }
  if (refused.length > 0) {
    const named = refused.map((column) => `'${column.name}' has ${count(column.distinct)} distinct values${column.looks ? ` (it ${column.looks})` : ''}`);
    const them = refused.length === 1 ? 'it' : 'them';
    throw new UserError(
      'E_DATA',
      `${definitionFile}: data: ${file}: column ${named.join(', column ')}, more than ${limitText}; ` +
        `so many categories are rarely a feature: add ${them} to data.exclude, or list ${them} in data.features to use ${them} anyway`,
    );
  }
  return warnings;
}
