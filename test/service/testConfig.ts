import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { parse, stringify } from 'yaml';
import { repoRoot } from './spawnResiduum.ts';

/** The site's time zone in config/demo.yaml (the hour buckets of the exports below). */
export const demoTimeZone = 'Europe/Berlin';

export interface TestConfigOptions {
  /** More cameras, as configuration mappings. */
  readonly extraCameras?: readonly Record<string, unknown>[];
}

/**
 * Writes `<dir>/residuum.yaml`: config/demo.yaml with only its reading-room camera, played 20 times
 * as fast with a sample every second (so samples come within seconds), on 127.0.0.1. Returns the path.
 */
export function testConfig(dir: string, options: TestConfigOptions = {}): string {
  const { extraCameras = [] } = options;
  const demo = parse(readFileSync(join(repoRoot, 'config/demo.yaml'), 'utf8')) as {
    site: Record<string, unknown>;
    cameras: Record<string, unknown>[];
  };
  const room = demo.cameras.find((c) => c.id === 'reading-room');
  if (!room) throw new Error('config/demo.yaml: no reading-room camera');
  const doc = {
    site: { ...demo.site, name: 'Residuum service test' },
    server: { host: '127.0.0.1', port: 0 },
    cameras: [
      { ...room, source: { ...(room.source as Record<string, unknown>), speed: 20 }, sampleSeconds: 1 },
      ...extraCameras,
    ],
  };
  const file = join(dir, 'residuum.yaml');
  writeFileSync(file, stringify(doc));
  return file;
}

/** Zone ids of the reading-room camera in config/demo.yaml. */
export function demoRoomZoneIds(): string[] {
  const demo = parse(readFileSync(join(repoRoot, 'config/demo.yaml'), 'utf8')) as { cameras: { id: string; zones: { id: string }[] }[] };
  return demo.cameras.find((c) => c.id === 'reading-room')!.zones.map((z) => z.id);
}
