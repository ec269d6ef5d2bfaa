/**
 * Checks of one field of a settings section (mqtt, alerts), each reporting through `fail` with the
 * field's path and what it must be, and echoing the value shortened (or not at all: `text`'s echo
 * false, for secrets).
 */

/** Reports a bad field: its path (e.g. `mqtt.qos`) and what is wrong; never returns. */
export type Fail = (path: string, message: string) => never;

export function mapping(v: unknown, at: string, keys: string[], fail: Fail): Record<string, unknown> {
  if (typeof v !== 'object' || v === null || Array.isArray(v)) return fail(at, `must be a mapping (key: value), got ${show(v)}`);
  for (const key of Object.keys(v)) if (!keys.includes(key)) fail(`${at}.${key}`, `is not a known setting here (known: ${keys.join(', ')})`);
  return v as Record<string, unknown>;
}

export function text(v: unknown, at: string, fail: Fail, echo = true): string {
  if (typeof v !== 'string' || v.length === 0 || v.length > 2000) fail(at, `must be non-empty text${echo ? `, got ${show(v)}` : ''}`);
  return v as string;
}

export function int(v: unknown, at: string, min: number, max: number, fail: Fail): number {
  if (typeof v !== 'number' || !Number.isInteger(v) || v < min || v > max) fail(at, `must be a whole number from ${min} to ${max}, got ${show(v)}`);
  return v as number;
}

export function num(v: unknown, at: string, min: number, max: number, fail: Fail): number {
  if (typeof v !== 'number' || !Number.isFinite(v) || v < min || v > max) fail(at, `must be a number from ${min} to ${max}, got ${show(v)}`);
  return v as number;
}

export function bool(v: unknown, at: string, fail: Fail): boolean {
  if (typeof v !== 'boolean') fail(at, `must be true or false, got ${show(v)}`);
  return v as boolean;
}

export function show(v: unknown): string {
  if (typeof v === 'number') return String(v);
  if (v === undefined) return 'nothing';
  const s = JSON.stringify(v);
  return s === undefined ? String(v) : s.length > 60 ? s.slice(0, 57) + '...' : s;
}
