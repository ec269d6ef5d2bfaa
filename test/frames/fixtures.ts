/**
 * Test fixtures for the frame sources: temporary folders under os.tmpdir(), synthetic images of
 * known grey levels made with sharp, and helpers to run ffmpeg and to see its processes.
 * Everything here is synthetic (flat levels and stripes); no photograph is written.
 */
import { execFile } from 'node:child_process';
import { mkdtemp, readdir, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { crc32, deflateSync } from 'node:zlib';
import sharp from 'sharp';

const execFileAsync = promisify(execFile);

/** A fresh temporary folder; remove it with {@link removeTempDir}. */
export function makeTempDir(): Promise<string> {
  return mkdtemp(join(tmpdir(), 'residuum-frames-test-'));
}

export function removeTempDir(dir: string): Promise<void> {
  return rm(dir, { recursive: true, force: true });
}

/** width × height grey levels from `level(x, y)` (rounded and clamped to 0..255), row-major. */
export function greyPixels(width: number, height: number, level: (x: number, y: number) => number): Buffer {
  const pixels = Buffer.alloc(width * height);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) pixels[y * width + x] = Math.max(0, Math.min(255, Math.round(level(x, y))));
  }
  return pixels;
}

/** A one-channel image of the given pixels encoded as PNG, JPEG or WebP. */
export async function encodeGrey(
  pixels: Buffer,
  width: number,
  height: number,
  format: 'png' | 'jpeg' | 'webp',
  options: { lossless?: boolean; quality?: number } = {},
): Promise<Buffer> {
  const image = sharp(pixels, { raw: { width, height, channels: 1 } });
  if (format === 'png') return image.png().toBuffer();
  if (format === 'jpeg') return image.jpeg({ quality: options.quality ?? 95 }).toBuffer();
  return image.webp(options.lossless ? { lossless: true } : { quality: options.quality ?? 95 }).toBuffer();
}

/** A flat grey PNG. */
export function flatPng(width: number, height: number, level: number): Promise<Buffer> {
  return encodeGrey(greyPixels(width, height, () => level), width, height, 'png');
}

/** A JPEG of pseudo-random noise (so that the entropy-coded data is long), cut to `fraction` of its bytes. */
export async function truncatedJpeg(width = 256, height = 256, fraction = 0.6): Promise<Buffer> {
  const pixels = greyPixels(width, height, (x, y) => ((x * 73856093) ^ (y * 19349663)) >>> 24);
  const jpeg = await encodeGrey(pixels, width, height, 'jpeg', { quality: 90 });
  return jpeg.subarray(0, Math.floor(jpeg.length * fraction));
}

/**
 * A PNG whose header (IHDR) declares `width` × `height` 8-bit grey pixels but whose data is
 * tiny: a decompression bomb if decoded. Chunk layout per the PNG specification (W3C, ISO/IEC
 * 15948): length, type, data, CRC-32 of type and data.
 */
export function pngBomb(width = 100_000, height = 100_000): Buffer {
  const chunk = (type: string, data: Buffer): Buffer => {
    const length = Buffer.alloc(4);
    length.writeUInt32BE(data.length);
    const body = Buffer.concat([Buffer.from(type, 'latin1'), data]);
    const crc = Buffer.alloc(4);
    crc.writeUInt32BE(crc32(body));
    return Buffer.concat([length, body, crc]);
  };
  const header = Buffer.alloc(13);
  header.writeUInt32BE(width, 0);
  header.writeUInt32BE(height, 4);
  header[8] = 8; // bit depth
  header[9] = 0; // colour type: greyscale
  const signature = Buffer.from([137, 80, 78, 71, 13, 10, 26, 10]);
  // A few rows of zeros (filter byte 0 + width bytes each): compresses to almost nothing.
  const rows = deflateSync(Buffer.alloc((width + 1) * 4));
  return Buffer.concat([signature, chunk('IHDR', header), chunk('IDAT', rows), chunk('IEND', Buffer.alloc(0))]);
}

/** Runs ffmpeg with the given arguments (quietly), rejecting with its stderr on failure. */
export async function runFfmpeg(args: string[]): Promise<void> {
  await execFileAsync('ffmpeg', ['-nostdin', '-v', 'error', '-y', ...args]);
}

/** Runs ffprobe and returns its stdout. */
export async function runFfprobe(args: string[]): Promise<string> {
  const { stdout } = await execFileAsync('ffprobe', ['-v', 'error', ...args]);
  return stdout;
}

/**
 * Processes named `name` whose parent is this process, read from /proc (Linux): pid and state
 * (R running, S sleeping, Z zombie, …). Reaped processes no longer appear.
 */
export async function childProcesses(name: string): Promise<{ pid: number; state: string }[]> {
  const found: { pid: number; state: string }[] = [];
  for (const entry of await readdir('/proc')) {
    if (!/^\d+$/.test(entry)) continue;
    let stat: string;
    try {
      stat = await readFile(`/proc/${entry}/stat`, 'utf8');
    } catch {
      continue; // exited meanwhile
    }
    // "pid (comm) state ppid ...": comm may contain spaces, so split at the last ')'.
    const close = stat.lastIndexOf(')');
    const comm = stat.slice(stat.indexOf('(') + 1, close);
    const [state, ppid] = stat.slice(close + 2).split(' ');
    if (comm === name && Number(ppid) === process.pid) found.push({ pid: Number(entry), state });
  }
  return found;
}

/** Collects every item of an async iterable. */
export async function collect<T>(items: AsyncIterable<T>): Promise<T[]> {
  const all: T[] = [];
  for await (const item of items) all.push(item);
  return all;
}
