/**
 * Run as a child process by createCameraSource.test.ts: starts one source of every kind, waits
 * for a frame from each, stops them all and returns. If any source left a timer, socket, watch or
 * child process behind, this process would not exit by itself.
 *
 * argv: <folder for the drop folder> <video clip for ffmpeg> <base URL of the test's HTTP server,
 * which serves /snapshot.jpg and an MJPEG stream and never closes a connection by itself>
 */
import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import sharp from 'sharp';
import { createCameraSource, type CameraSourceDescription } from '../../../src/frames/live/createCameraSource.ts';

const [folder, clip, base] = process.argv.slice(2);
const size = { width: 64, height: 48 };
const jpeg = await sharp(Buffer.alloc(64 * 48, 120), { raw: { width: 64, height: 48, channels: 1 } }).jpeg().toBuffer();
await writeFile(join(folder, 'snap1.jpg'), jpeg);

const descriptions: CameraSourceDescription[] = [
  { kind: 'drop-folder', id: 'folder', size, path: folder, scanIntervalMs: 100, settleMs: 100 },
  { kind: 'snapshot', id: 'snapshot', size, url: `${base}/snapshot.jpg`, intervalMs: 100 },
  { kind: 'mjpeg', id: 'mjpeg', size, url: `${base}/video.mjpg` },
  { kind: 'ffmpeg', id: 'ffmpeg', size, input: clip, realtime: true, loop: true },
  { kind: 'synthetic', id: 'synthetic', size: { width: 80, height: 60 }, scene: 'stock-room' },
];
const sources = descriptions.map((description) => createCameraSource(description));
const framed = new Set<string>();
await new Promise<void>((resolve, reject) => {
  const limit = setTimeout(() => reject(new Error(`no frame from ${descriptions.map((d) => d.id).filter((id) => !framed.has(id)).join(', ')}`)), 30_000);
  for (const source of sources) {
    source.start({
      frame() {
        framed.add(source.id);
        if (framed.size === sources.length) {
          clearTimeout(limit);
          resolve();
        }
      },
      status() {},
      badFrame(error) {
        reject(error);
      },
    });
  }
});
await Promise.all(sources.map((source) => source.stop()));
process.stdout.write(`stopped ${[...framed].sort().join(',')}\n`);
