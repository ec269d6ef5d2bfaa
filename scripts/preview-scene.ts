/**
 * Renders frames of a synthetic scene (invented rooms, no real people) to one PNG under the
 * system temp folder, for a look at the scene while developing it.
 *
 *   npx tsx scripts/preview-scene.ts <reading-room|stock-room> [t ...] [--empty] [--seed N]
 *                                    [--zones] [--boxes] [--out /tmp/name.png]
 *
 * Several frame indices are tiled, three to a row. --zones outlines the zone polygons, --boxes
 * the drawn objects' boxes (with a dot at each anchor point). The truth of each frame is printed.
 * Only synthetic scenes can be rendered, and only into the temp folder.
 */
import os from 'node:os';
import path from 'node:path';
import sharp from 'sharp';
import { createScene, sceneIds, type SceneId } from '../src/frames/synthetic/index.ts';

async function main(argv: string[]): Promise<number> {
  const [id, ...rest] = argv;
  if (!(sceneIds as readonly string[]).includes(id ?? '')) {
    console.error(`usage: preview-scene.ts <${sceneIds.join('|')}> [t ...] [--empty] [--seed N] [--zones] [--boxes] [--out file.png]`);
    return 2;
  }
  const frames: number[] = [];
  let empty = false;
  let zones = false;
  let boxes = false;
  let seed = 1;
  let out = path.join(os.tmpdir(), `residuum-${id}.png`);
  for (let i = 0; i < rest.length; i++) {
    const arg = rest[i];
    if (arg === '--empty') empty = true;
    else if (arg === '--zones') zones = true;
    else if (arg === '--boxes') boxes = true;
    else if (arg === '--seed') seed = Number(rest[++i]);
    else if (arg === '--out') out = path.resolve(rest[++i] ?? '');
    else if (/^\d+$/.test(arg)) frames.push(Number(arg));
    else {
      console.error(`unknown argument ${JSON.stringify(arg)}`);
      return 2;
    }
  }
  const tmp = path.resolve(os.tmpdir()) + path.sep;
  if (!out.startsWith(tmp)) {
    console.error(`--out must be inside ${tmp}`);
    return 2;
  }
  if (frames.length === 0) frames.push(0);

  const scene = createScene(id as SceneId, { seed });
  const { width, height } = scene;
  const cols = Math.min(3, frames.length);
  const rows = Math.ceil(frames.length / cols);
  const gap = 4;
  const W = cols * width + (cols - 1) * gap;
  const H = rows * height + (rows - 1) * gap;
  const rgb = new Uint8Array(W * H * 3).fill(255);
  const put = (ox: number, oy: number, x: number, y: number, c: readonly number[]) => {
    if (x < 0 || y < 0 || x >= width || y >= height) return;
    const i = ((oy + y) * W + ox + x) * 3;
    rgb[i] = c[0];
    rgb[i + 1] = c[1];
    rgb[i + 2] = c[2];
  };
  const line = (ox: number, oy: number, x0: number, y0: number, x1: number, y1: number, c: readonly number[]) => {
    const n = Math.max(1, Math.ceil(Math.hypot(x1 - x0, y1 - y0)));
    for (let k = 0; k <= n; k++) put(ox, oy, Math.round(x0 + ((x1 - x0) * k) / n), Math.round(y0 + ((y1 - y0) * k) / n), c);
  };

  frames.forEach((t, k) => {
    const ox = (k % cols) * (width + gap);
    const oy = Math.floor(k / cols) * (height + gap);
    let frame;
    if (empty) frame = scene.emptyFrameAt(t);
    else {
      const result = scene.frameAt(t);
      frame = result.frame;
      console.log(`t=${t}`, JSON.stringify(result.truth), scene.lamp ? `lamp ${scene.lamp.onAt(t) ? 'on' : 'off'}` : '');
    }
    for (let y = 0; y < height; y++) {
      for (let x = 0; x < width; x++) {
        const v = frame.data[y * width + x];
        put(ox, oy, x, y, [v, v, v]);
      }
    }
    if (zones) {
      for (const zone of scene.zones) {
        const p = zone.polygon;
        for (let i = 0; i < p.length; i++) {
          const a = p[i];
          const b = p[(i + 1) % p.length];
          line(ox, oy, a[0] * width, a[1] * height, b[0] * width, b[1] * height, [40, 200, 255]);
        }
      }
    }
    if (boxes && !empty) {
      for (const o of scene.objectsAt(t)) {
        const [x0, y0, x1, y1] = o.box.map((v, j) => v * (j % 2 === 0 ? width : height));
        const c = o.group ? [255, 140, 0] : [255, 60, 60];
        line(ox, oy, x0, y0, x1, y0, c);
        line(ox, oy, x1, y0, x1, y1, c);
        line(ox, oy, x1, y1, x0, y1, c);
        line(ox, oy, x0, y1, x0, y0, c);
        const ax = Math.round(o.anchor[0] * width);
        const ay = Math.round(o.anchor[1] * height);
        for (let d = -1; d <= 1; d++) {
          put(ox, oy, ax + d, ay, [0, 255, 0]);
          put(ox, oy, ax, ay + d, [0, 255, 0]);
        }
      }
    }
  });
  await sharp(Buffer.from(rgb), { raw: { width: W, height: H, channels: 3 } }).png().toFile(out);
  console.log(`wrote ${out} (${W}×${H})`);
  return 0;
}

process.exitCode = await main(process.argv.slice(2));
