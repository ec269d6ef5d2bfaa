import { Ajv2020 } from 'ajv/dist/2020.js';
import { DateTime } from 'luxon';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { OPERATIONS, openApiDocument } from '../../src/server/openapi.ts';
import { jsonOf, startTestService, TEST_TIME_ZONE, type TestService } from './testService.ts';

// The documented answer shapes against what the real service (synthetic reading room) sends.
let t: TestService;
beforeAll(async () => {
  t = await startTestService();
});
afterAll(async () => {
  await t?.stop();
});

const today = () => DateTime.now().setZone(TEST_TIME_ZONE).toISODate()!;
const QUERY: Record<string, () => string> = {
  '/api/history': () => `?from=${today()}&to=${today()}`,
  '/api/capacity': () => '?use=library-reading&area=100&unit=m2',
};

describe('OpenAPI answer shapes', () => {
  it('every documented JSON answer of a GET route matches what the service sends', async () => {
    // check: Ajv (JSON Schema 2020-12, the dialect of OpenAPI 3.1 schemas)
    const ajv = new Ajv2020({ strict: false });
    ajv.addSchema(openApiDocument(), 'api');
    let checked = 0;
    for (const op of OPERATIONS) {
      if (op.method !== 'get' || 'mediaType' in op.response) continue;
      const path = op.path.replace('{id}', 'reading-room').replace('{zone}', 'entrance') + (QUERY[op.path]?.() ?? '');
      const res = await fetch(`${t.base}${path}`, { headers: { Authorization: `Bearer ${t.adminKey}` } });
      const body = await jsonOf(res);
      expect(res.status, `${op.path}: ${JSON.stringify(body)}`).toBe(200);
      const pointer = `api#/paths/${op.path.replace(/~/g, '~0').replace(/\//g, '~1')}/get/responses/200/content/application~1json/schema`;
      const validate = ajv.getSchema(pointer);
      expect(validate, pointer).toBeDefined();
      expect(validate!(body), `${op.path}: ${JSON.stringify(validate!.errors)}`).toBe(true);
      checked++;
    }
    expect(checked).toBe(OPERATIONS.filter((op) => op.method === 'get' && !('mediaType' in op.response)).length);
    expect(checked).toBeGreaterThan(10);
  });

  it('the same validator refuses an answer of the wrong shape', () => {
    const ajv = new Ajv2020({ strict: false });
    ajv.addSchema(openApiDocument(), 'api');
    const validate = ajv.getSchema('api#/paths/~1api~1cameras/get/responses/200/content/application~1json/schema')!;
    expect(validate({ cameras: [{ camera: 'a', state: 'counting' }] })).toBe(true);
    expect(validate([{ camera: 'a', state: 'counting' }])).toBe(false);
  });
});
