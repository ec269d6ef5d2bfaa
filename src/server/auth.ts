import type { NextFunction, Request, RequestHandler, Response } from 'express';
import type { SettingStore } from '../store/index.ts';
import { failureLimiter, type FailureLimiter } from './failureLimiter.ts';
import { HttpError } from './HttpError.ts';
import { tokenMatches } from './tokens.ts';
import type { Log } from '../domain/log.ts';

/**
 * Authentication of API requests by a token in the `Authorization: Bearer <token>` header (no
 * cookies, so a page on another site cannot make the browser send it: no CSRF). Tokens are
 * checked against their stored digests (src/server/tokens.ts). Wrong tokens are counted per remote
 * address; after too many the address gets 429 until the window passes, whatever it sends.
 */

/** What a request may do. */
export const Role = { none: 'none', viewer: 'viewer', admin: 'admin' } as const;
export type Role = (typeof Role)[keyof typeof Role];

export interface AuthOptions {
  /** Whether reading counts needs a token (config `server.viewToken`); default false. */
  readonly viewTokenRequired?: boolean;
  /** Limiter of failed attempts; default 10 failures per minute per address. */
  readonly limiter?: FailureLimiter;
  /** Service log: each wrong key is logged with the address and route, never the key itself. */
  readonly log?: Log;
}

export interface Auth {
  readonly viewTokenRequired: boolean;
  /** Middleware: reading counts (open unless viewTokenRequired). */
  readonly view: RequestHandler;
  /** Middleware: any change, and the empty-scene image and foreground preview. */
  readonly admin: RequestHandler;
  /** The role of the request's token: throws 401 for a wrong token, 429 when blocked. */
  role(req: Request): Role;
}

// The scheme is case-insensitive (RFC 7235 §2.1): `bearer`, `BEARER` and `Bearer` are the same.
const BEARER = /^Bearer +([A-Za-z0-9_-]{1,200})$/i;

export function createAuth(store: SettingStore, options: AuthOptions = {}): Auth {
  const { viewTokenRequired = false, limiter = failureLimiter(), log = () => {} } = options;
  /** Addresses whose block was logged, until they may try again (one line per block, not per refused request). */
  const blockLogged = new Map<string, number>();
  const key = (req: Request) => req.ip ?? req.socket.remoteAddress ?? 'unknown';

  function role(req: Request): Role {
    const header = req.get('authorization');
    const wait = limiter.retryAfterMs(key(req));
    if (wait > 0) {
      throw new HttpError(429, `too many wrong keys from this address; try again in ${Math.ceil(wait / 1000)} s`, { 'Retry-After': String(Math.ceil(wait / 1000)) });
    }
    if (header === undefined || header === '') return Role.none;
    const m = BEARER.exec(header.trim());
    const token = m?.[1];
    if (token !== undefined) {
      if (tokenMatches(store, 'admin', token)) return Role.admin;
      if (viewTokenRequired && tokenMatches(store, 'view', token)) return Role.viewer;
    }
    const address = key(req);
    const count = limiter.fail(address);
    log(`auth: a wrong key from ${address} on ${req.method} ${(req.baseUrl + req.path).slice(0, 200)} (${count} in the last minute)`, 'warn');
    const blocked = limiter.retryAfterMs(address);
    if (blocked > 0 && (blockLogged.get(address) ?? 0) < Date.now()) {
      blockLogged.set(address, Date.now() + blocked);
      if (blockLogged.size > 10_000) blockLogged.clear();
      log(`auth: ${address} blocked for ${Math.ceil(blocked / 1000)} s after ${count} wrong keys`, 'warn');
    }
    throw new HttpError(401, 'the key was not accepted (header Authorization: Bearer <key>)', { 'WWW-Authenticate': 'Bearer realm="residuum", error="invalid_token"' });
  }

  const view: RequestHandler = (req: Request, _res: Response, next: NextFunction) => {
    const r = role(req);
    if (viewTokenRequired && r === Role.none) {
      throw new HttpError(401, 'viewing needs a key on this site (header Authorization: Bearer <key>)', { 'WWW-Authenticate': 'Bearer realm="residuum"' });
    }
    next();
  };
  const admin: RequestHandler = (req: Request, _res: Response, next: NextFunction) => {
    const r = role(req);
    if (r === Role.none) {
      throw new HttpError(401, 'this needs the admin key (header Authorization: Bearer <key>)', { 'WWW-Authenticate': 'Bearer realm="residuum"' });
    }
    if (r !== Role.admin) throw new HttpError(403, 'this key allows viewing only; changes need the admin key');
    next();
  };
  return { viewTokenRequired, view, admin, role };
}
