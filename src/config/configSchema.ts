import { resolve } from 'node:path';
import { z } from 'zod';
import type { CameraConfig } from '../counting/cameraConfig.ts';
import { validateZones, ZONE_RANGES } from '../counting/parseZones.ts';
import { AnchorPoint, ZoneKind, type Zone } from '../domain/zone.ts';
import type { CameraSourceDescription } from '../frames/live/createCameraSource.ts';
import { sceneIds } from '../frames/synthetic/index.ts';
import { alertSettingsSchema } from '../outputs/alerts/alertSettings.ts';
import { MqttRole, mqttSettingsSchema } from '../outputs/mqtt/mqttSettings.ts';
import { finiteNumber, flag, mapping, oneOf, strictMapping, orDefault, runChecks, show, text, wholeNumber, type Fail } from './schemaFields.ts';

/**
 * The configuration files' shape as zod schemas, the one home of their keys, ranges and defaults:
 * the counting service's (`residuum run`, {@link residuumConfigSchema}) and the collector's
 * (`residuum collect`, {@link collectorConfigSchema}). Parsing one gives the validated object the
 * program runs with (defaults filled in, paths resolved against the file's folder, secrets read);
 * `npm run schema` turns them into the JSON Schemas editors read (config/*.schema.json).
 *
 * Checks that are the domain's stay with it and run inside the schemas: a zone list is validated by
 * validateZones (polygons simple and inside the frame, reference people, ids once), a secret by
 * readSecret, a broker URL by its rules in mqttSettings.ts.
 */

/** Where a file's relative paths and `{ env: NAME }` secrets are looked up. */
export interface ConfigContext {
  /** Folder of the configuration file: relative paths resolve against it. */
  readonly base: string;
  /** Where `{ env: NAME }` secrets are read; default process.env. */
  readonly env?: Readonly<Record<string, string | undefined>>;
}

// --- site, storage, server: the sections the service and the collector share ---

function isTimeZone(zone: string): boolean {
  try {
    new Intl.DateTimeFormat('en', { timeZone: zone });
    return zone.includes('/') || zone === 'UTC';
  } catch {
    return false;
  }
}

const timeZoneSchema = z
  .string({ error: (issue) => `must be an IANA time zone such as Europe/Berlin, got ${show(issue.input)}` })
  .refine(isTimeZone)
  .describe('IANA time zone of the site, e.g. Europe/Berlin; default the machine\'s');

function siteSchema(defaultName: string) {
  return orDefault(
    mapping({
      name: orDefault(text(), defaultName).describe('Name of the site, shown in the dashboard and reports'),
      timeZone: z.preprocess((v) => (v === null ? undefined : v), timeZoneSchema.optional()),
    }),
    {},
  ).transform((site, ctx) => {
    // Left out: the machine's zone, checked like a written one.
    const timeZone = site.timeZone ?? Intl.DateTimeFormat().resolvedOptions().timeZone;
    if (!isTimeZone(timeZone)) return runChecks(ctx, (fail) => fail('.timeZone', `must be an IANA time zone such as Europe/Berlin, got ${show(timeZone)}`)) ?? z.NEVER;
    return { name: site.name, timeZone };
  });
}

const retentionDays = {
  sampleRetentionDays: orDefault(wholeNumber(1, 36_500), 30).describe('Days samples are kept'),
  rollupRetentionDays: wholeNumber(1, 36_500).optional().describe('Days hourly and daily rollups are kept (at least sampleRetentionDays); default until deleted'),
};

/** `storage` as the program receives it: rollups kept at least as long as samples. */
function storageOf(s: { sampleRetentionDays: number; rollupRetentionDays?: number }, fail: Fail) {
  const { sampleRetentionDays, rollupRetentionDays } = s;
  if (rollupRetentionDays !== undefined && rollupRetentionDays < sampleRetentionDays) {
    fail('.rollupRetentionDays', `must be a whole number from ${sampleRetentionDays} to 36500, got ${rollupRetentionDays}`);
  }
  return { sampleRetentionDays, ...(rollupRetentionDays !== undefined && { rollupRetentionDays }) };
}

const storageSchema = orDefault(mapping(retentionDays), {}).transform((s, ctx) => runChecks(ctx, (fail) => storageOf(s, fail)) ?? z.NEVER);

const serverSchema = orDefault(
  mapping({
    host: orDefault(z.string({ error: (issue) => `must be a host name or address, got ${show(issue.input)}` }).min(1), '127.0.0.1').describe('Address the HTTP server listens on'),
    port: orDefault(wholeNumber(0, 65_535), 8080).describe('Port of the HTTP server (0: any free port)'),
    viewToken: flag().optional().describe('true: reading counts needs a key too; default false'),
  }),
  {},
).transform((s) => ({ host: s.host, port: s.port, viewToken: s.viewToken ?? false }));

// --- cameras ---

const [polygonMin, polygonMax] = [3, 1000];
const unit = () => z.number().min(0).max(1);
const range = (r: readonly [number, number]) => z.number().min(r[0]).max(r[1]);

/**
 * One zone's shape, as validateZones hands it on (and as the JSON Schema shows it); keys in the
 * order validateZones writes them.
 */
const zoneSchema = z.strictObject({
  id: z.string().regex(/^[A-Za-z0-9][A-Za-z0-9_-]{0,63}$/).describe('Letters, digits, - and _; used in output keys and the database'),
  kind: z.enum([ZoneKind.room, ZoneKind.shelf]).describe('room: people counted; shelf: share covered by items'),
  polygon: z
    .array(z.tuple([unit(), unit()]))
    .min(polygonMin)
    .max(polygonMax)
    .describe('[x, y] points, normalised: x 0 (left) .. 1 (right), y 0 (top) .. 1 (bottom); a simple polygon'),
  name: z.string().max(200).optional(),
  threshold: range(ZONE_RANGES.threshold).optional().describe('Foreground threshold, noise units'),
  minBlobArea: range(ZONE_RANGES.minBlobArea).optional().describe('Smallest blob kept, fraction of the frame area'),
  personArea: range(ZONE_RANGES.personArea).optional().describe('Area of one person (or item), fraction of the frame area'),
  perspective: z
    .array(z.strictObject({ x: unit().optional(), y: unit(), area: range(ZONE_RANGES.personArea), height: range(ZONE_RANGES.referenceHeight).optional() }))
    .min(2)
    .max(100)
    .optional()
    .describe('Reference people {y, area} or boxes {x, y, area, height}, instead of personArea'),
  anchor: z.enum([AnchorPoint.foot, AnchorPoint.centroid]).optional(),
  capacity: z.number().int().min(ZONE_RANGES.capacity[0]).max(ZONE_RANGES.capacity[1]).optional().describe('Capacity in people'),
  absorbSeconds: z.number().min(1).max(604_800).optional().describe('A static change becomes background after this long; default never'),
}) satisfies z.ZodType<Zone>;

/** Where validateZones' messages put the list, stripped again to give a path below the field. */
const ZONES_AT = 'zones';

/**
 * A camera's `zones`: validated by the domain's validateZones (its checks and messages), whose
 * result then has the shape above.
 */
const zonesSchema = z.preprocess(
  (raw, ctx) =>
    runChecks(ctx, (fail) => {
      try {
        return validateZones(raw, '', ZONES_AT);
      } catch (error) {
        // `: zones[1].polygon needs at least 3 points, got 2` → the path below the field, and the words.
        const said = (error as Error).message.replace(/^: /, '');
        const space = said.indexOf(' ');
        return fail(said.slice(ZONES_AT.length, space), said.slice(space + 1));
      }
    }),
  z.array(zoneSchema),
);

const SOURCE_KINDS = ['drop-folder', 'snapshot', 'mjpeg', 'ffmpeg', 'synthetic'] as const;

/** Synthetic scenes a camera can play: the scene library's, and the reading room in colour with shadows. */
const cameraSceneIds = [...sceneIds, 'shadow-room'] as const;

const httpUrl = text().superRefine((v, ctx) =>
  runChecks(ctx, (fail) => {
    let parsed: URL | undefined;
    try {
      parsed = new URL(v);
    } catch {
      // not a URL: said below
    }
    if (parsed?.protocol !== 'http:' && parsed?.protocol !== 'https:') fail('', `must be an http: or https: URL, got ${show(v)}`);
  }),
);

const colour = flag().optional().describe('Deliver colour frames too, for the colour mode (shadows); not for ffmpeg');
const stallMs = wholeNumber(1, 3_600_000).optional();

const sourceSchema = z.discriminatedUnion(
  'kind',
  [
    strictMapping({
      kind: z.literal('drop-folder'),
      path: text().describe('Folder the camera uploads snapshots into'),
      afterRead: orDefault(oneOf(['delete', 'keep'], 'delete or keep'), 'delete'),
      scanIntervalMs: wholeNumber(1, 3_600_000).optional(),
      settleMs: wholeNumber(0, 600_000).optional(),
      colour,
    }),
    strictMapping({
      kind: z.literal('snapshot'),
      url: httpUrl,
      intervalMs: wholeNumber(1, 3_600_000).optional(),
      username: text().optional(),
      password: text().optional(),
      timeoutMs: wholeNumber(1, 600_000).optional(),
      colour,
    }),
    strictMapping({ kind: z.literal('mjpeg'), url: httpUrl, username: text().optional(), password: text().optional(), stallMs, colour }),
    strictMapping({
      kind: z.literal('ffmpeg'),
      input: text().describe('File or URL ffmpeg reads'),
      realtime: flag().optional(),
      loop: flag().optional(),
      options: z.array(z.string({ error: (issue) => `must be text, got ${show(issue.input)}` }), { error: 'must be a list of strings' }).optional().describe('Extra ffmpeg input options'),
      stallMs,
      colour,
    }),
    strictMapping({
      kind: z.literal('synthetic'),
      scene: oneOf(cameraSceneIds),
      speed: finiteNumber(0.01, 1000).optional(),
      seed: wholeNumber(0, 2 ** 31).optional(),
      colour,
    }),
  ],
  {
    error: (issue) => {
      const input = issue.input as { kind?: unknown } | undefined;
      return (issue.code as string) === 'invalid_type'
        ? `must be a mapping with kind: one of ${SOURCE_KINDS.join(', ')}, got ${show(input)}`
        : `must be one of ${SOURCE_KINDS.join(', ')}, got ${show(input?.kind)}`;
    },
  },
);

type SourceInput = z.output<typeof sourceSchema>;

/** The live source's description: the camera's id and working size added, the folder resolved. */
function sourceDescription(s: SourceInput, id: string, size: { width: number; height: number }, base: string, fail: Fail): CameraSourceDescription {
  // Colour mode (shadow suppression): only sources that can deliver colour.
  const colour = s.colour ?? false;
  if (colour && s.kind === 'ffmpeg') fail('.colour', 'ffmpeg sources deliver grey frames only; use a snapshot, mjpeg or drop-folder source for the colour mode');
  if (colour && s.kind === 'synthetic' && s.scene !== 'shadow-room') fail('.colour', `only the synthetic scene shadow-room renders colour, got scene ${show(s.scene)}`);
  const common = { id, size, ...(colour && { colour }) };
  switch (s.kind) {
    case 'drop-folder':
      return { ...common, kind: s.kind, path: resolve(base, s.path), afterRead: s.afterRead, scanIntervalMs: s.scanIntervalMs, settleMs: s.settleMs };
    case 'snapshot':
      return { ...common, kind: s.kind, url: s.url, intervalMs: s.intervalMs, username: s.username, password: s.password, timeoutMs: s.timeoutMs };
    case 'mjpeg':
      return { ...common, kind: s.kind, url: s.url, username: s.username, password: s.password, stallMs: s.stallMs };
    case 'ffmpeg':
      return { ...common, kind: s.kind, input: s.input, realtime: s.realtime, loop: s.loop, options: s.options, stallMs: s.stallMs };
    case 'synthetic':
      return { ...common, kind: s.kind, scene: s.scene, speed: s.speed, seed: s.seed };
  }
}

/** The whole frame as one room: the zones of a camera that names none. */
const WHOLE_FRAME: Zone = { id: 'all', kind: 'room', polygon: [[0, 0], [1, 0], [1, 1], [0, 1]] };

/** One camera (as under `cameras:`, or added from the dashboard); relative paths resolve against `base`. */
export function cameraSchema(base: string) {
  const size = z.tuple([wholeNumber(16, 4096), wholeNumber(16, 4096)], { error: (issue) => `must be [width, height] in pixels, got ${show(issue.input)}` });
  return mapping({
    id: z
      .string({ error: (issue) => `must be 1–64 letters, digits, "-" or "_", starting with a letter or digit, got ${show(issue.input)}` })
      .regex(/^[A-Za-z0-9][A-Za-z0-9_-]{0,63}$/),
    name: z.preprocess((v) => (v === null ? undefined : v), text().optional()).describe('Default the id'),
    // A source that is no mapping has no kind: said as before.
    source: z.preprocess(
      (v, ctx) => (typeof v === 'object' && v !== null && !Array.isArray(v) ? v : (runChecks(ctx, (fail) => fail('.kind', `must be one of ${SOURCE_KINDS.join(', ')}, got nothing`)) ?? z.NEVER)),
      sourceSchema,
    ),
    size: orDefault(size, [320, 240]).describe('Working size [width, height] in pixels'),
    model: text().optional().describe('A model file; default the stored one'),
    learnSeconds: orDefault(finiteNumber(1, 3600), 30).describe('Seconds of empty scene to learn from when no model exists'),
    sampleSeconds: orDefault(finiteNumber(1, 3600), 10).describe('Seconds between two stored samples per zone'),
    smoothing: orDefault(mapping({ window: orDefault(wholeNumber(1, 1000), 5), method: orDefault(oneOf(['median', 'mean'], 'median or mean'), 'median') }), {}),
    threshold: orDefault(finiteNumber(ZONE_RANGES.threshold[0], ZONE_RANGES.threshold[1]), 3).describe('Default foreground threshold of the zones, noise units'),
    adaptToDrift: flag().optional().describe('Follow slow drift of the empty scene; default on'),
    zones: zonesSchema.optional().describe('Default: the whole frame as one room'),
  }).transform((c, ctx): CameraConfig => {
    const built = runChecks(ctx, (fail) => ({
      id: c.id,
      name: c.name ?? c.id,
      source: sourceDescription(c.source, c.id, { width: c.size[0], height: c.size[1] }, base, (path, message) => fail(`.source${path}`, message)),
      ...(c.model !== undefined && { model: resolve(base, c.model) }),
      learnSeconds: c.learnSeconds,
      sampleSeconds: c.sampleSeconds,
      smoothing: { window: c.smoothing.window, method: c.smoothing.method },
      threshold: c.threshold,
      ...(c.adaptToDrift !== undefined && { adaptToDrift: c.adaptToDrift }),
      zones: c.zones ?? [WHOLE_FRAME],
    }));
    return built ?? z.NEVER;
  });
}

/** The ids of a list of cameras, each once (`cameras[1].id "door" is used twice`). */
function checkCameraIds(cameras: readonly CameraConfig[], fail: Fail): void {
  const seen = new Set<string>();
  cameras.forEach((camera, i) => {
    if (seen.has(camera.id)) fail(`cameras[${i}].id`, `"${camera.id}" is used twice`);
    seen.add(camera.id);
  });
}

// --- the two files ---

/**
 * The counting service's configuration file. Its output is ResiduumConfig without `file` (which
 * validateConfig adds).
 */
export function residuumConfigSchema({ base, env = process.env }: ConfigContext) {
  return mapping({
    site: siteSchema('Residuum site'),
    storage: storageSchema,
    server: serverSchema,
    models: orDefault(mapping({ keep: orDefault(wholeNumber(1, 50), 5).describe('Learned models kept per camera, the one in use among them') }), {}),
    cameras: z.array(cameraSchema(base), { error: 'must be a list of at least one camera' }).min(1),
    mqtt: mqttSettingsSchema({ base, env, role: MqttRole.publisher }).optional().describe('MQTT publishing of counts and events'),
    alerts: alertSettingsSchema({ base, env }).optional().describe('Alerts by webhook and e-mail'),
  }).transform((root, ctx) => {
    const idsOnce = runChecks(ctx, (fail) => {
      checkCameraIds(root.cameras, fail);
      return true;
    });
    if (!idsOnce) return z.NEVER;
    return {
      site: root.site,
      storage: root.storage,
      server: root.server,
      models: { keep: root.models.keep },
      cameras: root.cameras,
      ...(root.mqtt !== undefined && { mqtt: root.mqtt }),
      ...(root.alerts !== undefined && { alerts: root.alerts }),
    };
  });
}

/** A PostgreSQL URL naming a host and a database; never echoed (it may hold a password). */
const postgresUrl = z
  .string({ error: (issue) => `must be a PostgreSQL URL such as postgres://residuum@127.0.0.1:5432/residuum, got ${JSON.stringify(issue.input)}` })
  .min(1)
  .superRefine((v, ctx) =>
    runChecks(ctx, (fail) => {
      let u: URL;
      try {
        u = new URL(v);
      } catch {
        return fail('', 'must be a PostgreSQL URL such as postgres://residuum@127.0.0.1:5432/residuum');
      }
      if (u.protocol !== 'postgres:' && u.protocol !== 'postgresql:') fail('', `must start with postgres: or postgresql:, got ${JSON.stringify(u.protocol)}`);
      if (u.hostname === '') fail('', 'must name a host (postgres://user@host:5432/db)');
      if (u.pathname.length <= 1) fail('', 'must name a database (postgres://user@host:5432/db)');
    }),
  )
  .describe('The PostgreSQL central store; default SQLite in the data folder');

/**
 * The collector's configuration file (`residuum collect`): the service's site, storage and server,
 * storage.url, and a required mqtt section with the collector's keys. Its output is
 * CollectorConfig without `file`.
 */
export function collectorConfigSchema({ base, env = process.env }: ConfigContext) {
  const required = 'is required: the broker to collect from (mqtt: { url: mqtt://… })';
  return mapping({
    site: siteSchema('Residuum collector'),
    storage: orDefault(mapping({ ...retentionDays, url: postgresUrl.optional() }), {}).transform((s, ctx) => {
      const storage = runChecks(ctx, (fail) => storageOf(s, fail));
      return storage === undefined ? z.NEVER : { storage, storageUrl: s.url };
    }),
    server: serverSchema,
    mqtt: z.preprocess(
      (v, ctx) => (v === undefined ? runChecks(ctx, (fail) => fail('', required)) : v),
      mqttSettingsSchema({ base, env, role: MqttRole.collector }),
    ),
  }).transform((root) => ({
    site: root.site as { name: string; timeZone: string },
    storage: root.storage.storage,
    server: root.server,
    ...(root.storage.storageUrl !== undefined && { storageUrl: root.storage.storageUrl }),
    mqtt: root.mqtt,
  }));
}
