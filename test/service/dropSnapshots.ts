import { renameSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import sharp from 'sharp';

/**
 * Writes grey frames into a drop folder as PNG snapshots, as a camera that uploads them would:
 * under a `.part` name, then renamed (as the README asks of uploaders). Names are numbered in
 * order and each file's modification time — the snapshot's time for the drop-folder source — is
 * `intervalMs` after the one before, from `start`, so scene time passes however fast they are written.
 */
export function dropSnapshots(folder: string, size: { width: number; height: number }, start: number, intervalMs = 100) {
  let written = 0;
  return {
    /** The time the next snapshot will carry, epoch ms. */
    next: () => start + written * intervalMs,
    async upload(frames: Float32Array[]): Promise<void> {
      for (const data of frames) {
        const pixels = Buffer.from(Uint8Array.from(data, (v) => Math.max(0, Math.min(255, Math.round(v)))));
        const name = join(folder, `snap-${String(written).padStart(5, '0')}.png`);
        writeFileSync(`${name}.part`, await sharp(pixels, { raw: { ...size, channels: 1 } }).png().toBuffer());
        const at = new Date(start + written * intervalMs);
        utimesSync(`${name}.part`, at, at);
        renameSync(`${name}.part`, name);
        written++;
      }
    },
  };
}

/** Frames that are not of one scene: uniform noise 0..255 from `random` (uniform in [0, 1)). */
export function noiseFrames(n: number, size: { width: number; height: number }, random: () => number): Float32Array[] {
  return Array.from({ length: n }, () => Float32Array.from({ length: size.width * size.height }, () => Math.floor(random() * 256)));
}
