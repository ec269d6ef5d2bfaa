import { z } from 'zod';
import { ConfigError } from './ConfigError.ts';

/**
 * The field types of the configuration file as zod schemas, each with its message in plain words
 * ("must be a whole number from 1 to 50, got 0"), and the step from zod's issues to a
 * {@link ConfigError} that names the file and the field path:
 * `site.yaml: cameras[0].zones[1].polygon needs at least 3 points, got 2`.
 *
 * A field schema's `error` covers its type and its checks alike, so one message says the whole
 * rule (type and range) whichever part failed.
 */

/** Reports a bad field: its path (e.g. `mqtt.qos`) and what is wrong; never returns. */
export type Fail = (path: string, message: string) => never;

/** A whole number in min..max inclusive. */
export function wholeNumber(min: number, max: number) {
  return z.number({ error: (issue) => `must be a whole number from ${min} to ${max}, got ${show(issue.input)}` }).int().min(min).max(max);
}

/** A finite number in min..max inclusive. */
export function finiteNumber(min: number, max: number) {
  return z.number({ error: (issue) => `must be a number from ${min} to ${max}, got ${show(issue.input)}` }).min(min).max(max);
}

/** Non-empty text of at most 2000 characters; `echo` false leaves the value out of the message (secrets, URLs with passwords). */
export function text(echo = true) {
  return z.string({ error: (issue) => `must be non-empty text${echo ? `, got ${show(issue.input)}` : ''}` }).min(1).max(2000);
}

/** true or false. */
export function flag() {
  return z.boolean({ error: (issue) => `must be true or false, got ${show(issue.input)}` });
}

/** One of the given words; `said` is how the message lists them (default "one of a, b, c"). */
export function oneOf<const T extends readonly [string, ...string[]]>(values: T, said = `one of ${values.join(', ')}`) {
  return z.enum(values, { error: (issue) => `must be ${said}, got ${show(issue.input)}` });
}

/**
 * A mapping with exactly the keys of `shape` (each optional or required as its schema says): a
 * misspelt option is an error naming it and listing the known ones, never silently ignored.
 */
export function mapping<S extends z.core.$ZodLooseShape>(shape: S) {
  const known = Object.keys(shape);
  const said = `is not a known setting here (known: ${known.join(', ')})`;
  // Unknown keys are reported before the fields' own checks (a misspelt key usually explains a
  // missing field); the strict object keeps additionalProperties false in the JSON Schema.
  return z.preprocess(
    (v, ctx) => {
      if (typeof v !== 'object' || v === null || Array.isArray(v)) return v;
      const unknown = Object.keys(v).find((key) => !known.includes(key));
      return unknown === undefined ? v : (runChecks(ctx, (fail) => fail(`.${unknown}`, said)) ?? z.NEVER);
    },
    strictMapping(shape),
  );
}

/** The strict object of {@link mapping} alone (unknown keys reported after the fields): for the options of a discriminated union. */
export function strictMapping<S extends z.core.$ZodLooseShape>(shape: S) {
  const said = `is not a known setting here (known: ${Object.keys(shape).join(', ')})`;
  return z.strictObject(shape, {
    error: (issue) => (issue.code === 'unrecognized_keys' ? said : `must be a mapping (key: value), got ${show(issue.input)}`),
  });
}

/**
 * `schema`, or `value` when the field is left out or left empty (`key:` with nothing after it is
 * null in YAML; it has always meant "the default").
 */
export function orDefault<T extends z.ZodType>(schema: T, value: z.input<T>) {
  // prefault: the default goes through the schema too, so a default section gets its own defaults.
  return z.preprocess((v) => (v === null ? undefined : v), schema.prefault(value as never));
}

/**
 * Runs checks written as `fail(path, message)` calls (the domain's validators, checks across
 * fields) inside a zod refinement or transform: a failure becomes an issue at `path`, relative to
 * the value being checked (`''` the value itself, `.password` or `[2].x` below it). Returns the
 * check's result, or undefined after a failure (the transform then returns z.NEVER).
 */
export function runChecks<T>(ctx: z.RefinementCtx, check: (fail: Fail) => T): T | undefined {
  try {
    return check((path, message) => {
      throw new FieldFailure(path, message);
    });
  } catch (error) {
    if (!(error instanceof FieldFailure)) throw error;
    ctx.addIssue({ code: 'custom', path: parsePath(error.path), message: error.message });
    return undefined;
  }
}

class FieldFailure extends Error {
  constructor(
    readonly path: string,
    message: string,
  ) {
    super(message);
  }
}

/** `.a.b[2].c` or `a.b[2]` → ['a', 'b', 2, 'c']. */
function parsePath(path: string): (string | number)[] {
  return [...path.matchAll(/\[(\d+)\]|\.?([^.[\]]+)/g)].map((m) => (m[1] !== undefined ? Number(m[1]) : m[2]));
}

/** `['cameras', 0, 'zones']` → `cameras[0].zones`, below `at` when given (`mqtt`). */
export function fieldPath(path: readonly PropertyKey[], at = ''): string {
  let out = at;
  for (const key of path) out += typeof key === 'number' ? `[${key}]` : out === '' ? String(key) : `.${String(key)}`;
  return out;
}

/**
 * The first issue of a failed validation as a ConfigError: `${file}: ${field path} ${message}`.
 * A misspelt key is named with its path (`models.kep is not a known setting here …`); an issue at
 * the root of a whole file is the `configuration`'s.
 */
export function configErrorOf(error: z.ZodError, file: string, at = ''): ConfigError {
  const issue = error.issues[0];
  const path = issue.code === 'unrecognized_keys' ? [...issue.path, issue.keys[0]] : issue.path;
  return new ConfigError(`${file}: ${fieldPath(path, at) || 'configuration'} ${issue.message}`);
}

/** Parses `raw` with `schema`; the first issue is thrown as a ConfigError naming `file` and the field (below `at`). */
export function parseOrThrow<T extends z.ZodType>(schema: T, raw: unknown, file: string, at = ''): z.output<T> {
  const result = schema.safeParse(raw);
  if (!result.success) throw configErrorOf(result.error, file, at);
  return result.data;
}

/** A value as messages show it: numbers as written, text quoted, long values shortened. */
export function show(v: unknown): string {
  if (typeof v === 'number') return String(v);
  if (v === undefined) return 'nothing';
  const s = JSON.stringify(v);
  return s === undefined ? String(v) : s.length > 60 ? s.slice(0, 57) + '...' : s;
}
