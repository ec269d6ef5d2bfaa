import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { stringify } from 'yaml';
import { startService, type RunningService } from '../../src/commands/run.ts';
import { loadConfig } from '../../src/config/loadConfig.ts';

/** The site's zone in the test configuration. */
export const TEST_TIME_ZONE = 'Europe/Berlin';

/** Zones of the synthetic reading room (as in config/demo.yaml). */
export const READING_ROOM_ZONES = [
  { id: 'entrance', name: 'Entrance', kind: 'room', capacity: 4, polygon: [[0.04, 0.6], [0.3, 0.6], [0.3, 0.98], [0.04, 0.98]], personArea: 0.0053, minBlobArea: 0.0013 },
  { id: 'stacks', name: 'Stacks aisle', kind: 'room', capacity: 6, polygon: [[0.04, 0.36], [0.96, 0.36], [0.96, 0.52], [0.04, 0.52]], personArea: 0.0053, minBlobArea: 0.0013 },
  { id: 'tables', name: 'Reading tables', kind: 'room', capacity: 10, polygon: [[0.34, 0.54], [0.97, 0.54], [0.97, 0.98], [0.34, 0.98]], personArea: 0.0042, minBlobArea: 0.001 },
];

export interface TestService {
  readonly service: RunningService;
  readonly base: string;
  /** The admin key printed at the first start. */
  readonly adminKey: string;
  readonly viewKey?: string;
  readonly dataDir: string;
  readonly configFile: string;
  stop(): Promise<void>;
}

export interface TestServiceOptions {
  /** Scene seconds per second; default 10. */
  readonly speed?: number;
  /** Working width (height is ¾ of it); default 160. */
  readonly width?: number;
  readonly viewToken?: boolean;
  /** Add camera `door`: a drop folder that does not exist, so it is offline (and has no model). */
  readonly offlineCamera?: boolean;
}

/**
 * The real service (`startService`) on a configuration file with the synthetic reading room (our
 * invented scene; nobody real), in a fresh temporary folder, on a free port of 127.0.0.1.
 */
export async function startTestService(options: TestServiceOptions = {}): Promise<TestService> {
  const { speed = 10, width = 160, viewToken = false, offlineCamera = false } = options;
  const dir = mkdtempSync(join(tmpdir(), 'residuum-server-'));
  const configFile = join(dir, 'residuum.yaml');
  writeFileSync(
    configFile,
    stringify({
      site: { name: 'Residuum dashboard test', timeZone: TEST_TIME_ZONE },
      storage: { sampleRetentionDays: 30 },
      server: { host: '127.0.0.1', port: 0, viewToken },
      cameras: [
        {
          id: 'reading-room',
          name: 'Reading room',
          source: { kind: 'synthetic', scene: 'reading-room', speed },
          size: [width, (width * 3) / 4],
          sampleSeconds: 2,
          smoothing: { window: 5, method: 'median' },
          zones: READING_ROOM_ZONES,
        },
        ...(offlineCamera
          ? [{ id: 'door', name: 'Side door', source: { kind: 'drop-folder', path: join(dir, 'no-such-folder') }, size: [width, (width * 3) / 4], zones: [{ id: 'door-way', name: 'Doorway', kind: 'room', capacity: 2, polygon: [[0, 0], [1, 0], [1, 1], [0, 1]] }] }]
          : []),
      ],
    }),
  );
  const dataDir = join(dir, 'data');
  const service = await startService(loadConfig(configFile), { dataDir, port: 0 });
  if (!service.newTokens.admin) throw new Error('a fresh data folder must make an admin key');
  return {
    service,
    base: `http://127.0.0.1:${service.port}`,
    adminKey: service.newTokens.admin,
    ...(service.newTokens.view && { viewKey: service.newTokens.view }),
    dataDir,
    configFile,
    async stop() {
      await service.stop();
      rmSync(dir, { recursive: true, force: true });
    },
  };
}

/** A response's JSON body, untyped (fetch types it `unknown`); tests check its shape themselves. */
// eslint-disable-next-line @typescript-eslint/no-explicit-any
export async function jsonOf(res: Response): Promise<any> {
  return res.json();
}

/** Reads Server-Sent Events from a response body until `count` events of type `event` arrived. */
export async function readEvents(body: ReadableStream<Uint8Array>, count: number, event = 'live'): Promise<unknown[]> {
  const reader = body.pipeThrough(new TextDecoderStream()).getReader();
  const found: unknown[] = [];
  let buffer = '';
  while (found.length < count) {
    const { value, done } = await reader.read();
    if (done) break;
    buffer += value;
    let end: number;
    while ((end = buffer.indexOf('\n\n')) >= 0 && found.length < count) {
      const block = buffer.slice(0, end).split('\n');
      buffer = buffer.slice(end + 2);
      const type = block.find((l) => l.startsWith('event:'))?.slice(6).trim();
      const data = block.filter((l) => l.startsWith('data:')).map((l) => l.slice(5).trimStart());
      if (type === event && data.length > 0) found.push(JSON.parse(data.join('\n')));
    }
  }
  await reader.cancel();
  return found;
}
