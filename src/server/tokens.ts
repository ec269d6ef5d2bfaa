import crypto from 'node:crypto';
import { ConfigError } from '../config/ConfigError.ts';
import { readSecretFile } from '../config/readSecret.ts';
import type { SettingStore } from '../store/index.ts';

/**
 * Access tokens of the dashboard and API.
 *
 * - The **admin** token allows every change (zones, thresholds, learning, the empty-scene image
 *   and the foreground preview). It is made at the first start: 32 random bytes from
 *   `crypto.randomBytes`, written as base64url (43 characters), shown once on standard output and
 *   never again; or, with RESIDUUM_ADMIN_KEY_FILE, read from that file at every start and never shown.
 * - The **view** token (only with `server.viewToken: true`) allows reading counts; the admin token
 *   allows that too.
 *
 * Only the SHA-256 digest of a token is kept, hex-encoded, in the store's settings
 * (`auth.adminTokenSha256`, `auth.viewTokenSha256`). A plain hash without salt or stretching is
 * enough here because the token is 256 random bits, not a password a person chose: no dictionary
 * or brute-force search of 2²⁵⁶ is feasible, so a slow hash (scrypt) would add nothing. A presented
 * token is hashed and compared to the digest with `crypto.timingSafeEqual`, whose time does not
 * depend on where the bytes differ. Lost token: start again with `--reset-token`.
 */

/** Who a token belongs to. */
export const TokenKind = { admin: 'admin', view: 'view' } as const;
export type TokenKind = (typeof TokenKind)[keyof typeof TokenKind];

/** Settings keys of the digests. */
export const TOKEN_SETTING: Readonly<Record<TokenKind, string>> = {
  admin: 'auth.adminTokenSha256',
  view: 'auth.viewTokenSha256',
};

/** Tokens made by {@link prepareTokens}: shown once, then only their digests remain. */
export interface NewTokens {
  readonly admin?: string;
  readonly view?: string;
}

export interface PrepareTokensOptions {
  /** Whether viewing needs a token (config `server.viewToken`); default false. */
  readonly viewToken?: boolean;
  /** Replace the existing tokens with new ones; default false. */
  readonly reset?: boolean;
  /**
   * An admin key given by the operator (RESIDUUM_ADMIN_KEY_FILE, {@link adminKeyFromEnvironment}):
   * its digest replaces the stored one at every start and it is never returned as new; default
   * none (a key is made at the first start).
   */
  readonly adminKey?: string;
}

/** The environment variable naming a file that holds the admin key. */
export const ADMIN_KEY_FILE_VARIABLE = 'RESIDUUM_ADMIN_KEY_FILE';

/** Fewest characters of an admin key from a file: the digest is a plain SHA-256, sound only for a long random key. */
export const MIN_ADMIN_KEY_LENGTH = 32;

/**
 * The admin key from the file named by RESIDUUM_ADMIN_KEY_FILE (a container or systemd secret),
 * or undefined when the variable is not set. The file must exist, be readable, hold 32 to 200
 * letters, digits, `-` or `_` (one final line break is dropped) and be readable by this user only: a file others
 * may read is refused (ConfigError naming the variable), as the key allows every change.
 *
 * Example: `RESIDUUM_ADMIN_KEY_FILE=/run/secrets/residuum-admin` → that file's key.
 */
export function adminKeyFromEnvironment(env: Readonly<Record<string, string | undefined>> = process.env): string | undefined {
  const path = env[ADMIN_KEY_FILE_VARIABLE];
  if (path === undefined) return undefined;
  const fail = (at: string, message: string): never => {
    throw new ConfigError(`${at} ${message}`);
  };
  if (path === '') fail(ADMIN_KEY_FILE_VARIABLE, 'is set but empty; it must name a file holding the admin key');
  const key = readSecretFile(path, ADMIN_KEY_FILE_VARIABLE, fail, true);
  // The characters a Bearer key may have here (auth.ts: base64url, at most 200).
  if (!new RegExp(`^[A-Za-z0-9_-]{${MIN_ADMIN_KEY_LENGTH},200}$`).test(key)) {
    fail(ADMIN_KEY_FILE_VARIABLE, `names ${path}, whose key must be ${MIN_ADMIN_KEY_LENGTH} to 200 letters, digits, "-" or "_" on one line (e.g. the output of: openssl rand -hex 32)`);
  }
  return key;
}

/** A new random token: 32 bytes from the system's CSPRNG, base64url without padding. */
export function newToken(): string {
  return crypto.randomBytes(32).toString('base64url');
}

/** SHA-256 of the token's UTF-8 bytes, hex. */
export function hashToken(token: string): string {
  return crypto.createHash('sha256').update(token, 'utf8').digest('hex');
}

/**
 * Makes the tokens that are missing (or all, with `reset`) and stores their digests; returns the
 * new plain tokens so the caller can show them once. Tokens that exist are left alone and not
 * returned (they cannot be: only digests are kept).
 */
export function prepareTokens(store: SettingStore, options: PrepareTokensOptions = {}): NewTokens {
  const { viewToken = false, reset = false, adminKey } = options;
  const made: { admin?: string; view?: string } = {};
  if (adminKey !== undefined) store.setSetting(TOKEN_SETTING.admin, hashToken(adminKey));
  const kinds: TokenKind[] = (viewToken ? ['admin', 'view'] : ['admin']).filter((k) => k !== 'admin' || adminKey === undefined) as TokenKind[];
  for (const kind of kinds) {
    if (!reset && typeof store.getSetting(TOKEN_SETTING[kind]) === 'string') continue;
    const token = newToken();
    store.setSetting(TOKEN_SETTING[kind], hashToken(token));
    made[kind] = token;
  }
  return made;
}

/** Whether `presented` is the token of `kind`, compared in constant time on the digests. */
export function tokenMatches(store: SettingStore, kind: TokenKind, presented: string): boolean {
  const stored = store.getSetting(TOKEN_SETTING[kind]);
  if (typeof stored !== 'string' || !/^[0-9a-f]{64}$/.test(stored)) return false;
  const expected = Buffer.from(stored, 'hex');
  const given = crypto.createHash('sha256').update(presented, 'utf8').digest();
  return crypto.timingSafeEqual(given, expected);
}

/** The lines that show new tokens once (for standard output, never for a log file). */
export function tokenNotice(tokens: NewTokens): string {
  const lines: string[] = [];
  if (tokens.admin) {
    lines.push(
      'Admin key (shown only now; keep it safe — it allows changing zones and learning):',
      `  ${tokens.admin}`,
      'Enter it on the dashboard with "Enter key" (top right), or send it as the header  Authorization: Bearer <key>',
      'Lost it? Start again with --reset-token to get a new one.',
    );
  }
  if (tokens.view) {
    lines.push('View key (shown only now; lets people read the counts):', `  ${tokens.view}`);
  }
  return lines.length === 0 ? '' : lines.join('\n') + '\n';
}
