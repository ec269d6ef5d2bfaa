import { readFileSync, statSync } from 'node:fs';
import { resolve } from 'node:path';
import { z } from 'zod';
import { runChecks } from './schemaFields.ts';

/** Throws the configuration's error for a field (never returns). */
export type SecretFail = (path: string, message: string) => never;

export interface ReadSecretOptions {
  /** Folder that `{ file: path }` is resolved against; default the current folder. */
  readonly base?: string;
  /** Where `{ env: NAME }` is read; default process.env. */
  readonly env?: Readonly<Record<string, string | undefined>>;
  /**
   * Refuse a secret file that other users may read (mode bit o+r), as ssh does with a private key;
   * default false (alert secrets keep their earlier rule). Not checked on Windows, which has no
   * such mode bits.
   */
  readonly privateFile?: boolean;
}

/**
 * A secret given in the configuration as text, `{ env: NAME }` (an environment variable) or
 * `{ file: path }` (a file's content without its final line break). Its value never appears in a
 * message; a message names the field (`mqtt.password.file`) and, for a file, its path.
 *
 * Example: `readSecret({ env: 'MQTT_PASSWORD' }, 'mqtt.password', fail)` → the variable's value.
 */
export function readSecret(v: unknown, at: string, fail: SecretFail, options: ReadSecretOptions = {}): string {
  const { base = '.', env = process.env, privateFile = false } = options;
  if (typeof v === 'string') {
    if (v.length === 0 || v.length > 4096) fail(at, 'must be non-empty text of at most 4096 characters, { env: NAME } or { file: path }');
    return v;
  }
  if (typeof v !== 'object' || v === null || Array.isArray(v)) return fail(at, 'must be text, { env: NAME } or { file: path }'); // the value is not echoed: it may be the secret
  const m = v as Record<string, unknown>;
  for (const key of Object.keys(m)) if (key !== 'env' && key !== 'file') fail(`${at}.${key}`, 'is not a known setting here (known: env, file)');
  if ((m.env === undefined) === (m.file === undefined)) fail(at, 'must have exactly one of env (an environment variable) or file (a file holding the secret)');
  if (m.env !== undefined) {
    if (typeof m.env !== 'string' || !/^[A-Za-z_][A-Za-z0-9_]{0,127}$/.test(m.env)) fail(`${at}.env`, `must be the name of an environment variable, got ${show(m.env)}`);
    const value = env[m.env as string];
    if (value === undefined || value === '') fail(`${at}.env`, `names the environment variable ${m.env as string}, which is not set or empty`);
    return value as string;
  }
  if (typeof m.file !== 'string' || m.file.length === 0 || m.file.length > 2000) return fail(`${at}.file`, `must be a file's path, got ${show(m.file)}`);
  return readSecretFile(resolve(base, m.file), `${at}.file`, fail, privateFile);
}

/**
 * A secret field as a zod schema: its shape (text, `{ env: NAME }` or `{ file: path }`, as the
 * JSON Schema shows it), validated and read by readSecret; the parsed value is the secret's text.
 */
export function secretSchema(options: ReadSecretOptions = {}) {
  const shape = z.union([z.string().min(1).max(4096), z.strictObject({ env: z.string().regex(/^[A-Za-z_][A-Za-z0-9_]{0,127}$/) }), z.strictObject({ file: z.string().min(1).max(2000) })]);
  // readSecret checks and reads first (its messages name the field and never echo the value);
  // what it hands on is the secret's text, which the shape then accepts.
  return z.preprocess((v, ctx) => runChecks(ctx, (fail) => readSecret(v, '', fail, options)), shape).transform((v) => v as string);
}

/**
 * The secret held in the file at `path` (its content without one final line break, 1..4096
 * characters); `at` names the field or variable in messages. With `privateFile`, a file that
 * other users may read is refused.
 */
export function readSecretFile(path: string, at: string, fail: SecretFail, privateFile = false): string {
  let content: string;
  try {
    if (privateFile && process.platform !== 'win32' && (statSync(path).mode & 0o004) !== 0) {
      fail(at, `${path} may be read by every user of this machine; make it readable by this user only (chmod 600 ${path}; for mounted secrets, mode 0400)`);
    }
    content = readFileSync(path, 'utf8');
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    if (code === undefined) throw error;
    const why = code === 'ENOENT' ? ', no such file' : code === 'EACCES' ? ', permission denied' : code === 'EISDIR' ? ', a folder' : '';
    return fail(at, `cannot be read: ${path} (${code}${why})`);
  }
  // A secret file usually ends with a line break that is no part of the secret.
  const secret = content.replace(/\r?\n$/, '');
  if (secret.length === 0) fail(at, `${path} is empty; it must hold the secret`);
  if (secret.length > 4096) fail(at, `${path} must hold at most 4096 characters`);
  return secret;
}

function show(v: unknown): string {
  if (typeof v === 'number') return String(v);
  if (v === undefined) return 'nothing';
  const s = JSON.stringify(v);
  return s === undefined ? String(v) : s.length > 60 ? s.slice(0, 57) + '...' : s;
}
