import crypto from 'node:crypto';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { hashToken, newToken, prepareTokens, TOKEN_SETTING, tokenMatches, tokenNotice } from '../../src/server/tokens.ts';
import { tempStore, type TempStore } from '../store/tempStore.ts';

let t: TempStore | undefined;
afterEach(() => {
  t?.cleanup();
  t = undefined;
  vi.restoreAllMocks();
});

describe('tokens', () => {
  it('hashes with SHA-256', () => {
    // check: FIPS 180-2, Appendix B.1: SHA-256("abc")
    expect(hashToken('abc')).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
  });

  it('makes 32 random bytes, base64url', () => {
    const a = newToken();
    expect(a).toMatch(/^[A-Za-z0-9_-]{43}$/);
    expect(Buffer.from(a, 'base64url')).toHaveLength(32);
    expect(newToken()).not.toBe(a);
  });

  it('makes the admin token once, keeps only its digest, and resets on request', () => {
    t = tempStore();
    const first = prepareTokens(t.store);
    expect(first.admin).toBeDefined();
    expect(first.view).toBeUndefined();
    const stored = t.store.getSetting(TOKEN_SETTING.admin);
    expect(stored).toBe(hashToken(first.admin!));
    expect(JSON.stringify(t.store.listSettings())).not.toContain(first.admin!);
    expect(prepareTokens(t.store)).toEqual({});
    expect(tokenMatches(t.store, 'admin', first.admin!)).toBe(true);
    const again = prepareTokens(t.store, { reset: true });
    expect(again.admin).not.toBe(first.admin);
    expect(tokenMatches(t.store, 'admin', first.admin!)).toBe(false);
    expect(tokenMatches(t.store, 'admin', again.admin!)).toBe(true);
  });

  it('adds a view token when viewing needs one', () => {
    t = tempStore();
    prepareTokens(t.store);
    const made = prepareTokens(t.store, { viewToken: true });
    expect(made.admin).toBeUndefined();
    expect(made.view).toBeDefined();
    expect(tokenMatches(t.store, 'view', made.view!)).toBe(true);
    expect(tokenMatches(t.store, 'admin', made.view!)).toBe(false);
    expect(tokenNotice(made)).toContain(made.view!);
  });

  it('compares digests with crypto.timingSafeEqual, whatever the length presented', () => {
    t = tempStore();
    const { admin } = prepareTokens(t.store);
    const spy = vi.spyOn(crypto, 'timingSafeEqual');
    for (const wrong of ['x', admin!.slice(0, -1) + (admin!.endsWith('A') ? 'B' : 'A'), admin!.repeat(3)]) {
      expect(tokenMatches(t.store, 'admin', wrong)).toBe(false);
    }
    expect(spy).toHaveBeenCalledTimes(3);
    for (const [a, b] of spy.mock.calls) {
      expect((a as Buffer).length).toBe(32);
      expect((b as Buffer).length).toBe(32);
    }
  });
});
