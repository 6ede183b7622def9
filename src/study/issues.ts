import type { z } from 'zod';
import { didYouMean } from '../text/nearest.js';

type Issue = z.core.$ZodIssue;
type AnySchema = z.core.$ZodType;

/** `space.learningRate.min`, `space.activation[2]`, or `(top level)`. */
export function formatPath(path: readonly PropertyKey[]): string {
  let out = '';
  for (const part of path) {
    out += typeof part === 'number' ? `[${part}]` : out === '' ? String(part) : `.${String(part)}`;
  }
  return out === '' ? '(top level)' : out;
}

function valueAt(data: unknown, path: readonly PropertyKey[]): unknown {
  let current = data;
  for (const part of path) {
    if (current === null || typeof current !== 'object') return undefined;
    current = (current as Record<PropertyKey, unknown>)[part];
  }
  return current;
}

function describe(value: unknown): string {
  if (value === undefined) return 'nothing';
  if (value === null) return 'null';
  if (Array.isArray(value)) return 'a list';
  if (typeof value === 'object') return 'an object';
  if (typeof value === 'string') return `"${value.length > 40 ? `${value.slice(0, 40)}...` : value}"`;
  return String(value);
}

/** Peel wrappers (optional, default, pipes) until an object, union or other core schema remains. */
function unwrap(schema: AnySchema): AnySchema {
  let current = schema;
  for (;;) {
    const def = current._zod.def as { type: string; innerType?: AnySchema; in?: AnySchema };
    if ((def.type === 'optional' || def.type === 'default' || def.type === 'nullable' || def.type === 'prefault') && def.innerType) {
      current = def.innerType;
    } else if (def.type === 'pipe' && def.in) {
      current = def.in;
    } else {
      return current;
    }
  }
}

/** Keys allowed in the object the schema describes at `path`, given the data (to pick a union branch). */
export function allowedKeysAt(root: AnySchema, path: readonly PropertyKey[], data: unknown): string[] {
  let schema = unwrap(root);
  const pickBranch = (s: AnySchema, at: readonly PropertyKey[]): AnySchema => {
    const def = s._zod.def as { type: string; options?: AnySchema[]; discriminator?: string };
    if (def.type !== 'union' || !def.options) return s;
    const here = valueAt(data, at) as Record<string, unknown> | undefined;
    const wanted = def.discriminator && here ? here[def.discriminator] : undefined;
    const branch = def.options.find((option) => {
      const shape = (unwrap(option)._zod.def as { shape?: Record<string, AnySchema> }).shape;
      const literal = shape && def.discriminator ? (shape[def.discriminator]?._zod.def as { values?: unknown[] }) : undefined;
      return literal?.values?.includes(wanted);
    });
    return unwrap(branch ?? def.options[0]!);
  };
  schema = pickBranch(schema, []);
  for (let i = 0; i < path.length; i++) {
    const def = schema._zod.def as { type: string; shape?: Record<string, AnySchema>; element?: AnySchema };
    const part = path[i]!;
    if (def.type === 'object' && def.shape && typeof part === 'string' && def.shape[part]) {
      schema = pickBranch(unwrap(def.shape[part]), path.slice(0, i + 1));
    } else if (def.type === 'array' && def.element) {
      schema = pickBranch(unwrap(def.element), path.slice(0, i + 1));
    } else {
      return [];
    }
  }
  const shape = (schema._zod.def as { shape?: Record<string, AnySchema> }).shape;
  return shape ? Object.keys(shape) : [];
}

function allowed(issue: Issue): string {
  switch (issue.code) {
    case 'invalid_type':
      return issue.expected === 'int' ? 'a whole number' : `${issue.expected === 'object' ? 'an object' : issue.expected === 'array' ? 'a list' : `a ${issue.expected}`}`;
    case 'invalid_value':
      return `one of ${issue.values.map((v) => JSON.stringify(v)).join(', ')}`;
    case 'too_small':
      if (issue.origin === 'array') return `a list of at least ${String(issue.minimum)} item(s)`;
      if (issue.origin === 'string') return `at least ${String(issue.minimum)} character(s)`;
      return `a number ${issue.inclusive ? '>=' : '>'} ${String(issue.minimum)}`;
    case 'too_big':
      if (issue.origin === 'array') return `a list of at most ${String(issue.maximum)} item(s)`;
      return `a number ${issue.inclusive ? '<=' : '<'} ${String(issue.maximum)}`;
    case 'invalid_union':
      return 'options' in issue && Array.isArray(issue.options)
        ? `one of ${(issue.options as unknown[]).map((v) => JSON.stringify(v)).join(', ')}`
        : 'one of the documented forms';
    case 'invalid_format':
      return issue.message.replace(/^Invalid string: /, '');
    default:
      return issue.message;
  }
}

/**
 * One line per violation: `<file>: <json path>: found <value>, expected <what is allowed>`.
 * Unknown keys name the nearest allowed key.
 */
export function formatIssue(file: string, issue: Issue, data: unknown, schema: AnySchema): string {
  if (issue.code === 'unrecognized_keys') {
    const keys = allowedKeysAt(schema, issue.path, data);
    return issue.keys
      .map((key) => {
        const where = formatPath([...issue.path, key]);
        return `${file}: ${where}: unknown key${didYouMean(key, keys)}; allowed here: ${keys.join(', ')}`;
      })
      .join('\n');
  }
  const where = formatPath(issue.path);
  if (issue.code === 'custom') return `${file}: ${where}: ${issue.message}`;
  const found = valueAt(data, issue.path);
  if (found === undefined && issue.code === 'invalid_type') return `${file}: ${where}: missing, expected ${allowed(issue)}`;
  return `${file}: ${where}: found ${describe(found)}, expected ${allowed(issue)}`;
}
