import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { crc32 } from 'node:zlib';
import { afterAll, describe, expect, it } from 'vitest';
import { decodeModel, encodeModel, loadModel, saveModel } from '../../src/counting/modelFile.ts';
import { fitSubspace } from '../../src/vision/fitSubspace.ts';
import { mulberry } from '../helpers/random.ts';

const rand = mulberry(21);
const frames = Array.from({ length: 12 }, () => Float32Array.from({ length: 6 * 4 }, () => rand() * 255));
const model = fitSubspace(frames, { width: 6, height: 4 }, { components: 3 });
const dir = mkdtempSync(join(tmpdir(), 'residuum-model-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('model file', () => {
  it('round-trips every array and statistic', async () => {
    const file = join(dir, 'm.rsdm');
    await saveModel(file, model, { source: 'frames/', learnedAt: '2026-12-01T10:00:00.000Z' });
    const { model: back, info } = await loadModel(file);
    expect(back.width).toBe(6);
    expect(back.components).toBe(3);
    expect(Array.from(back.mean)).toEqual(Array.from(model.mean));
    expect(Array.from(back.basis)).toEqual(Array.from(model.basis));
    expect(Array.from(back.noise)).toEqual(Array.from(model.noise));
    expect(Array.from(back.eigenvalues)).toEqual(Array.from(model.eigenvalues));
    expect(back.retainedVariance).toBe(model.retainedVariance);
    expect(info).toEqual({ source: 'frames/', learnedAt: '2026-12-01T10:00:00.000Z' });
  });

  it('uses the standard CRC-32', () => {
    // check: the CRC-32 check value of "123456789" is 0xCBF43926 (ISO-HDLC / zlib; recalled from memory)
    expect(crc32('123456789')).toBe(0xcbf43926);
  });

  it('names the file and the fault for bad files', async () => {
    const good = encodeModel(model);
    expect(() => decodeModel(Buffer.alloc(0), 'a.rsdm')).toThrow('a.rsdm: the file is empty');
    expect(() => decodeModel(Buffer.from('GIF89a is not a model at all'), 'b.rsdm')).toThrow(/b\.rsdm: not a Residuum model file/);
    const flipped = Buffer.from(good);
    flipped[good.length - 40] ^= 0x10;
    expect(() => decodeModel(flipped, 'c.rsdm')).toThrow('c.rsdm: corrupt (checksum mismatch)');
    expect(() => decodeModel(good.subarray(0, good.length - 100), 'd.rsdm')).toThrow(/d\.rsdm: corrupt|truncated/);
    const future = Buffer.from(good);
    future.writeUInt32LE(2, 8);
    expect(() => decodeModel(future, 'e.rsdm')).toThrow(/e\.rsdm: model format version 2; .* reads version 1/);
    await expect(loadModel(join(dir, 'missing.rsdm'))).rejects.toThrow(/missing\.rsdm: no such model file/);
    writeFileSync(join(dir, 'zero.rsdm'), '');
    await expect(loadModel(join(dir, 'zero.rsdm'))).rejects.toThrow(/zero\.rsdm: the file is empty/);
  });
});
