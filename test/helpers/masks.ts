import type { Mask } from '../../src/domain/frame.ts';

/** A mask from rows of '#' (set) and '.' (unset). */
export function maskOf(rows: string[]): Mask {
  const height = rows.length;
  const width = height === 0 ? 0 : rows[0].length;
  const data = new Uint8Array(width * height);
  rows.forEach((row, y) => {
    if (row.length !== width) throw new Error(`row ${y} has ${row.length} columns, expected ${width}`);
    for (let x = 0; x < width; x++) data[y * width + x] = row[x] === '#' ? 1 : 0;
  });
  return { width, height, data };
}
