/**
 * The OpenAPI 3.1 description of the HTTP API (https://spec.openapis.org/oas/v3.1.0), served open
 * at `GET /api/openapi.json`. The counting service and the collector serve the same routes (the
 * collector has no service control, so its editing routes answer 409/503). No secret is in it: it
 * describes how a key is presented, never a key.
 *
 * One table, {@link OPERATIONS}, lists every route; test/server/openapi.test.ts walks the router
 * stack of createApp and fails when a route is registered without a row here, or a row names a
 * route that does not exist.
 */

import { readFileSync } from 'node:fs';

/** The version of this program, from package.json. */
const VERSION = (JSON.parse(readFileSync(new URL('../../package.json', import.meta.url), 'utf8')) as { version: string }).version;

/** Who may call a route: anyone, a view key (when `server.viewToken` is on; the admin key too), or the admin key. */
export type Access = 'open' | 'view' | 'admin';

type Schema = Record<string, unknown>;

interface Operation {
  readonly method: 'get' | 'post' | 'put' | 'delete';
  /** OpenAPI path under the server root, `{name}` for path parameters. */
  readonly path: string;
  readonly summary: string;
  readonly access: Access;
  readonly query?: readonly { name: string; description: string; schema: Schema; required?: boolean }[];
  readonly body?: Schema;
  /** Main success answer: a JSON schema, or a media type other than JSON. */
  readonly response: Schema | { readonly mediaType: string };
  /** Answer status when not 200. */
  readonly status?: string;
}

const str: Schema = { type: 'string' };
const num: Schema = { type: 'number' };
const int: Schema = { type: 'integer' };
const bool: Schema = { type: 'boolean' };
const obj = (properties: Record<string, Schema>, extra: Schema = {}): Schema => ({ type: 'object', properties, ...extra });
const list = (items: Schema): Schema => ({ type: 'array', items });
const ref = (name: string): Schema => ({ $ref: `#/components/schemas/${name}` });

const bound = (name: 'from' | 'to') => ({
  name,
  description: `${name === 'from' ? 'First' : 'Last'} local date (YYYY-MM-DD, inclusive) or ISO 8601 time`,
  schema: str,
  required: true,
});
const idQuery = (name: 'camera' | 'zone') => ({ name, description: `Only this ${name}'s rows`, schema: str });

/** Every route of createApp (`/api/...`) and `/metrics` (served when the app is given a metrics registry). */
export const OPERATIONS: readonly Operation[] = [
  { method: 'get', path: '/api/openapi.json', summary: 'This document', access: 'open', response: { type: 'object' } },
  { method: 'get', path: '/api/health', summary: 'The service is up, and each camera state', access: 'open', response: obj({ ok: bool, site: str, timeZone: str, startedAt: int, cameras: list(obj({ camera: str, state: str, viewChanged: bool, lastFrameAt: { type: ['integer', 'null'] } })) }) },
  { method: 'get', path: '/api/site', summary: 'Site name, time zone, retention and whether viewing needs a key', access: 'open', response: obj({ site: str, timeZone: str, sampleRetentionDays: { type: ['integer', 'null'] }, viewTokenRequired: bool, editing: bool }) },
  { method: 'get', path: '/api/auth', summary: 'Role of the presented key (401 for a wrong key)', access: 'open', response: obj({ role: { enum: ['none', 'viewer', 'admin'] }, viewTokenRequired: bool }) },
  { method: 'get', path: '/api/live', summary: 'Live view: per camera and zone, counts, levels and status', access: 'view', response: { type: 'object' } },
  { method: 'get', path: '/api/live/stream', summary: 'The live view as Server-Sent Events', access: 'view', response: { mediaType: 'text/event-stream' } },
  { method: 'get', path: '/api/history', summary: 'Hourly rows of a range in the site time zone (at most 400 days)', access: 'view', query: [bound('from'), bound('to'), idQuery('camera'), idQuery('zone')], response: obj({ start: int, end: int, rows: list({ type: 'object' }) }) },
  { method: 'get', path: '/api/export/hourly.csv', summary: 'Hourly CSV (RFC 4180) of a range', access: 'view', query: [bound('from'), bound('to'), idQuery('camera'), idQuery('zone')], response: { mediaType: 'text/csv' } },
  { method: 'get', path: '/api/today', summary: 'Totals of the current local day per zone', access: 'view', response: { type: 'object' } },
  { method: 'get', path: '/api/cameras', summary: 'Cameras and their states', access: 'view', response: obj({ cameras: list(obj({ camera: str, state: str })) }) },
  { method: 'post', path: '/api/cameras', summary: 'Add a snapshot or MJPEG camera (tried before it is kept)', access: 'admin', body: obj({ id: str, source: { type: 'object' } }, { required: ['id', 'source'] }), response: obj({ camera: { type: 'object' } }), status: '201' },
  { method: 'delete', path: '/api/cameras/{id}', summary: 'Remove a camera added from the dashboard', access: 'admin', response: { type: 'object' } },
  { method: 'get', path: '/api/cameras/{id}/zones', summary: 'Zones of a camera', access: 'view', response: obj({ camera: str, zones: list(ref('Zone')) }) },
  { method: 'put', path: '/api/cameras/{id}/zones', summary: 'Replace the zones of a camera', access: 'admin', body: obj({ zones: list(ref('Zone')) }, { required: ['zones'], additionalProperties: false }), response: obj({ camera: str, zones: list(ref('Zone')) }) },
  { method: 'get', path: '/api/cameras/{id}/zones/history', summary: 'Past zone sets of a camera', access: 'view', response: obj({ camera: str, history: list({ type: 'object' }) }) },
  { method: 'get', path: '/api/cameras/{id}/background.png', summary: 'The learned empty scene (for drawing zones)', access: 'admin', response: { mediaType: 'image/png' } },
  { method: 'get', path: '/api/cameras/{id}/mask', summary: 'A coarse binary foreground mask, computed per request and never stored', access: 'admin', query: [{ name: 'format', description: 'json (default) or png', schema: { enum: ['json', 'png'] } }, { name: 'cell', description: 'Cell size in pixels, 8..32', schema: { type: 'integer', minimum: 8, maximum: 32 } }], response: obj({ camera: str, cell: int, width: int, height: int, time: int, rows: list(str) }) },
  { method: 'get', path: '/api/cameras/{id}/learn', summary: 'Learning status of a camera', access: 'view', response: { type: 'object' } },
  { method: 'post', path: '/api/cameras/{id}/learn', summary: 'Start learning the empty scene', access: 'admin', body: { type: 'object' }, response: obj({ camera: str, status: { type: 'object' } }), status: '202' },
  { method: 'get', path: '/api/cameras/{id}/models', summary: 'Learned models of a camera', access: 'admin', response: obj({ camera: str, models: list({ type: 'object' }) }) },
  { method: 'post', path: '/api/cameras/{id}/models/{modelId}/activate', summary: 'Count with an earlier model (roll back)', access: 'admin', response: obj({ camera: str, model: { type: 'object' }, changed: bool }) },
  { method: 'get', path: '/api/cameras/{id}/person-size', summary: 'Learned person size (perspective) of a camera', access: 'view', response: { type: 'object' } },
  { method: 'get', path: '/api/cameras/{id}/calibration', summary: 'Calibration points and regressions of a camera', access: 'view', response: obj({ camera: str, zones: list({ type: 'object' }) }) },
  { method: 'post', path: '/api/cameras/{id}/zones/{zone}/calibration', summary: 'Add a counted calibration point to a zone', access: 'admin', body: obj({ count: { type: 'integer', minimum: 0, maximum: 10000 } }, { required: ['count'], additionalProperties: false }), response: { type: 'object' } },
  { method: 'delete', path: '/api/cameras/{id}/zones/{zone}/calibration', summary: 'Forget the calibration points of a zone', access: 'admin', response: { type: 'object' } },
  { method: 'get', path: '/api/cameras/{id}/events', summary: 'Events of a camera', access: 'view', query: [{ name: 'days', description: 'Days back, 1..90 (default 7)', schema: { type: 'integer', minimum: 1, maximum: 90 } }], response: obj({ camera: str, from: int, events: list({ type: 'object' }) }) },
  { method: 'get', path: '/api/settings', summary: 'Display settings (capacity margins, low-stock levels)', access: 'view', response: { type: 'object' } },
  { method: 'put', path: '/api/settings', summary: 'Change display settings field by field', access: 'admin', body: { type: 'object' }, response: { type: 'object' } },
  { method: 'get', path: '/api/capacity', summary: 'The table of uses, or with use and area a suggested occupant load (advice only; local rules and the authority having jurisdiction govern)', access: 'view', query: [{ name: 'use', description: 'Use of the space (one of the table); without it, the table', schema: str }, { name: 'area', description: 'Floor area, with use', schema: num }, { name: 'unit', description: 'm2 or ft2', schema: { enum: ['m2', 'ft2'] } }], response: { type: 'object' } },
  { method: 'get', path: '/metrics', summary: 'Prometheus text format metrics', access: 'view', response: { mediaType: 'text/plain' } },
];

const ERROR = { description: 'Error', content: { 'application/json': { schema: ref('Error') } } };

/** The OpenAPI 3.1 document (a fresh object each call). */
export function openApiDocument(version = VERSION): Record<string, unknown> {
  const paths: Record<string, Record<string, unknown>> = {};
  for (const op of OPERATIONS) {
    const pathParams = [...op.path.matchAll(/\{(\w+)\}/g)].map((m) => ({ name: m[1], in: 'path', required: true, schema: str }));
    const query = (op.query ?? []).map((q) => ({ name: q.name, in: 'query', required: q.required ?? false, description: q.description, schema: q.schema }));
    const content = 'mediaType' in op.response ? { [op.response.mediaType as string]: { schema: str } } : { 'application/json': { schema: op.response } };
    const responses: Record<string, unknown> = { [op.status ?? '200']: { description: 'Success', content }, '400': ERROR, default: ERROR };
    if (op.access !== 'open') responses['401'] = ERROR;
    if (op.access === 'admin') responses['403'] = ERROR;
    (paths[op.path] ??= {})[op.method] = {
      operationId: `${op.method}${op.path.replace(/[^A-Za-z0-9]+(.)?/g, (_m, c: string | undefined) => (c ?? '').toUpperCase())}`,
      summary: op.summary,
      tags: [op.access],
      ...(op.access === 'admin' && { security: [{ adminKey: [] }] }),
      // A view key is needed only when server.viewToken is on; without it the route is open.
      ...(op.access === 'view' && { security: [{ viewKey: [] }, {}] }),
      ...(op.access === 'open' && { security: [] }),
      ...(pathParams.length + query.length > 0 && { parameters: [...pathParams, ...query] }),
      ...(op.body && { requestBody: { required: true, content: { 'application/json': { schema: op.body } } } }),
      responses,
    };
  }
  return {
    openapi: '3.1.0',
    info: {
      title: 'Residuum',
      version,
      description: 'Counts per zone from cameras. Keys are sent as `Authorization: Bearer <key>`; the admin key allows every change and every read.',
    },
    tags: [
      { name: 'open', description: 'No key needed' },
      { name: 'view', description: 'A view key when server.viewToken is on (the admin key too); open otherwise' },
      { name: 'admin', description: 'The admin key' },
    ],
    paths,
    components: {
      securitySchemes: {
        adminKey: { type: 'http', scheme: 'bearer', description: 'The admin key (made at first start, or RESIDUUM_ADMIN_KEY_FILE)' },
        viewKey: { type: 'http', scheme: 'bearer', description: 'The view key (server.viewToken: true) or the admin key' },
      },
      schemas: {
        Error: obj({ error: str }, { required: ['error'] }),
        Zone: obj({ id: str, name: str, kind: str, polygon: list(list(num)) }, { required: ['id'] }),
      },
    },
  };
}
