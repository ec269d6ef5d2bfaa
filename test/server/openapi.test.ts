import type { Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { Validator } from '@seriousme/openapi-schema-validator';
import express from 'express';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createMetrics } from '../../src/outputs/metrics.ts';
import { createApp } from '../../src/server/createApp.ts';
import { OPERATIONS, openApiDocument } from '../../src/server/openapi.ts';
import { prepareTokens } from '../../src/server/tokens.ts';
import { tempStore, type TempStore } from '../store/tempStore.ts';
import { jsonOf } from './testService.ts';

interface Layer {
  readonly route?: { readonly path: string | string[]; readonly methods: Record<string, boolean> };
  readonly handle: { readonly stack?: readonly Layer[] };
  readonly rawPath?: string;
}

/**
 * Every `METHOD path` an Express 5 app answers, found by walking its router stack (mounted routers
 * included), with Express's `:name` parameters written as OpenAPI's `{name}`.
 */
function registeredRoutes(app: express.Express): string[] {
  const found: string[] = [];
  const walk = (stack: readonly Layer[], prefix: string) => {
    for (const layer of stack) {
      if (layer.route) {
        const paths = Array.isArray(layer.route.path) ? layer.route.path : [layer.route.path];
        for (const path of paths) for (const method of Object.keys(layer.route.methods)) found.push(`${method} ${prefix}${path}`);
      } else if (layer.handle.stack) {
        const at = typeof layer.rawPath === 'string' && layer.rawPath !== '/' ? layer.rawPath : '';
        walk(layer.handle.stack, prefix + at);
      }
    }
  };
  walk((app as unknown as { router: { stack: Layer[] } }).router.stack, '');
  return found.map((r) => r.replace(/:(\w+)/g, '{$1}')).sort();
}

const documented = () => OPERATIONS.map((op) => `${op.method} ${op.path}`).sort();

let t: TempStore;
let app: express.Express;
let server: Server;
let base: string;
let adminKey: string;

beforeAll(async () => {
  t = tempStore({ timeZone: 'Europe/Berlin' });
  adminKey = prepareTokens(t.store, { viewToken: true }).admin!;
  // With a metrics registry, so that /metrics is registered too; with view keys, so every view route asks for one.
  app = createApp({ store: t.store, live: () => [], siteName: 'Spec site', timeZone: 'Europe/Berlin', startedAt: 0, viewTokenRequired: true, metrics: createMetrics() });
  server = app.listen(0, '127.0.0.1');
  await new Promise((r) => server.once('listening', r));
  base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
});
afterAll(async () => {
  server.closeAllConnections();
  await new Promise((r) => server.close(r));
  t.cleanup();
});

describe('GET /api/openapi.json', () => {
  it('documents exactly the routes createApp registers', () => {
    const routes = registeredRoutes(app);
    // The walk itself must find routes, or the comparison below would be empty on both sides.
    expect(routes).toContain('get /api/health');
    expect(routes).toContain('put /api/cameras/{id}/zones');
    expect(documented()).toEqual(routes);
  });

  it('the route check fails when a route is added without documenting it', () => {
    const extra = createApp({ store: t.store, live: () => [], siteName: 'x', timeZone: 'Europe/Berlin', startedAt: 0, metrics: createMetrics() });
    const router = express.Router();
    router.get('/undocumented/:thing', (_req, res) => void res.end());
    extra.use('/api', router);
    expect(registeredRoutes(extra)).toContain('get /api/undocumented/{thing}');
    expect(documented()).not.toEqual(registeredRoutes(extra));
  });

  it('is served without a key and is a valid OpenAPI 3.1 document', async () => {
    const res = await fetch(`${base}/api/openapi.json`);
    expect(res.status).toBe(200);
    expect(res.headers.get('content-type')).toMatch(/^application\/json/);
    const doc = await jsonOf(res);
    expect(doc).toEqual(openApiDocument());
    expect(doc.openapi).toBe('3.1.0');
    // check: @seriousme/openapi-schema-validator (the OpenAPI Initiative's published 3.1 JSON Schema)
    const validator = new Validator();
    const result = await validator.validate(doc);
    expect(result.errors ?? []).toEqual([]);
    expect(result.valid).toBe(true);
    expect(validator.version).toBe('3.1');
    // A broken document is refused by the same validator (the check can fail).
    const broken = await new Validator().validate({ ...doc, paths: { '/x': { get: { responses: 'none' } } } });
    expect(broken.valid).toBe(false);
  });

  it('holds no key', async () => {
    const text = await (await fetch(`${base}/api/openapi.json`)).text();
    expect(text).not.toContain(adminKey);
  });

  it('states the access each route really asks for', async () => {
    for (const op of OPERATIONS) {
      const path = op.path.replace(/\{(\w+)\}/g, 'no-such');
      const res = await fetch(`${base}${path}`, { method: op.method.toUpperCase(), headers: { Connection: 'close' } });
      await res.arrayBuffer();
      // check: RFC 9110 §15.5.2 (401 Unauthorized when credentials are missing)
      if (op.access === 'open') expect(res.status, `${op.method} ${op.path}`).not.toBe(401);
      else expect(res.status, `${op.method} ${op.path}`).toBe(401);
      const doc = openApiDocument() as { paths: Record<string, Record<string, { security: unknown[] }>> };
      const security = doc.paths[op.path][op.method].security;
      expect(security, op.path).toEqual(op.access === 'admin' ? [{ adminKey: [] }] : op.access === 'view' ? [{ viewKey: [] }, {}] : []);
    }
  });
});
