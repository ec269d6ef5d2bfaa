/**
 * Edge checks shared by the store's write methods. Each throws a `TypeError` (wrong type) or
 * `RangeError` (right type, value out of bounds) whose message starts with the field it checked,
 * e.g. `sample.time: expected an integer epoch time in ms ≥ 0, got 1.5`.
 */

/** Camera and zone identifiers: letters, digits, `-` and `_`, 1..64 characters (see `Zone.id`). */
export const ID_PATTERN = /^[A-Za-z0-9_-]{1,64}$/;

/** Largest epoch time the store accepts, ms: 9999-12-31T23:59:59.999Z. */
export const MAX_EPOCH_MS = 253_402_300_799_999;

function show(value: unknown): string {
  if (typeof value === 'string') return JSON.stringify(value);
  if (typeof value === 'bigint') return `${value}n`;
  if (value instanceof Uint8Array) return `${value.constructor.name}(${value.length})`;
  try {
    return JSON.stringify(value) ?? String(value);
  } catch {
    return String(value);
  }
}

/** An identifier matching {@link ID_PATTERN}. */
export function checkId(value: unknown, field: string): string {
  if (typeof value !== 'string') throw new TypeError(`${field}: expected a string id, got ${show(value)}`);
  if (!ID_PATTERN.test(value)) {
    throw new RangeError(`${field}: expected 1..64 letters, digits, '-' or '_', got ${show(value)}`);
  }
  return value;
}

/** An integer epoch time in ms, 0..{@link MAX_EPOCH_MS} inclusive. */
export function checkEpochMs(value: unknown, field: string): number {
  if (typeof value !== 'number') throw new TypeError(`${field}: expected an epoch time in ms, got ${show(value)}`);
  if (!Number.isInteger(value) || value < 0 || value > MAX_EPOCH_MS) {
    throw new RangeError(`${field}: expected an integer epoch time in ms ≥ 0, got ${show(value)}`);
  }
  return value;
}

/** An integer in min..max inclusive. */
export function checkInt(value: unknown, field: string, min: number, max: number): number {
  if (typeof value !== 'number') throw new TypeError(`${field}: expected an integer, got ${show(value)}`);
  if (!Number.isInteger(value) || value < min || value > max) {
    throw new RangeError(`${field}: expected an integer in ${min}..${max}, got ${show(value)}`);
  }
  return value;
}

/** A finite number in min..max inclusive. */
export function checkNumber(value: unknown, field: string, min: number, max: number): number {
  if (typeof value !== 'number') throw new TypeError(`${field}: expected a number, got ${show(value)}`);
  if (!Number.isFinite(value) || value < min || value > max) {
    throw new RangeError(`${field}: expected a number in ${min}..${max}, got ${show(value)}`);
  }
  return value;
}

/** A string of 1..max characters. */
export function checkText(value: unknown, field: string, max = 200): string {
  if (typeof value !== 'string') throw new TypeError(`${field}: expected a string, got ${show(value)}`);
  if (value.length < 1 || value.length > max) {
    throw new RangeError(`${field}: expected 1..${max} characters, got ${value.length}`);
  }
  return value;
}

/** One of the values of a `const` enum object. */
export function checkOneOf<T extends string>(value: unknown, field: string, allowed: Record<string, T>): T {
  const values = Object.values(allowed);
  if (typeof value !== 'string' || !(values as string[]).includes(value)) {
    throw new RangeError(`${field}: expected one of ${values.map((v) => `'${v}'`).join(', ')}, got ${show(value)}`);
  }
  return value as T;
}

/** Serialises a value to JSON text; throws when it cannot be represented (undefined, BigInt, cycles). */
export function toJson(value: unknown, field: string): string {
  let text: string | undefined;
  try {
    text = JSON.stringify(value);
  } catch (error) {
    throw new TypeError(`${field}: cannot be stored as JSON (${(error as Error).message})`);
  }
  if (text === undefined) throw new TypeError(`${field}: cannot be stored as JSON, got ${show(value)}`);
  return text;
}

/**
 * An IANA time zone name known to this Node's ICU data (`Europe/Berlin`, `Asia/Kolkata`, `UTC`);
 * returns it as given (ICU would rename some, e.g. `Asia/Kolkata` → `Asia/Calcutta`).
 */
export function checkTimeZone(value: unknown, field: string): string {
  if (typeof value !== 'string' || value.length === 0) {
    throw new TypeError(`${field}: expected an IANA time zone name such as 'Europe/Berlin', got ${show(value)}`);
  }
  try {
    new Intl.DateTimeFormat('en-US', { timeZone: value });
    return value;
  } catch {
    throw new RangeError(`${field}: unknown IANA time zone ${show(value)} (expected e.g. 'Europe/Berlin')`);
  }
}
