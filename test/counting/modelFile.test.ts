import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { crc32 } from 'node:zlib';
import { afterAll, describe, expect, it } from 'vitest';
import { colourModelFormatVersion, decodeModel, encodeModel, loadModel, modelFormatVersion, saveModel } from '../../src/counting/modelFile.ts';
import { fitChromaticity } from '../../src/vision/fitChromaticity.ts';
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

  it('keeps models without colour in format version 1 and adds colour statistics as version 2', async () => {
    const grey = encodeModel(model, { source: 'frames/' });
    expect(grey.readUInt32LE(8)).toBe(modelFormatVersion);
    expect(modelFormatVersion).toBe(1);
    expect(decodeModel(grey).colour).toBeUndefined();
    const colourFrames = Array.from({ length: 12 }, () => Uint8Array.from({ length: 6 * 4 * 3 }, () => Math.floor(rand() * 256)));
    const colour = fitChromaticity(colourFrames, { width: 6, height: 4 });
    const file = join(dir, 'c.rsdm');
    await saveModel(file, model, { source: 'frames/' }, colour);
    const { model: back, info, colour: backColour } = await loadModel(file);
    expect(info).toEqual({ source: 'frames/' });
    expect(Array.from(back.noise)).toEqual(Array.from(model.noise));
    expect(backColour).toBeDefined();
    expect(Array.from(backColour!.mean)).toEqual(Array.from(colour.mean));
    expect(Array.from(backColour!.spread)).toEqual(Array.from(colour.spread));
    expect(Array.from(backColour!.chromaSpread)).toEqual(Array.from(colour.chromaSpread));
    expect(backColour!.frameCount).toBe(12);
    const bytes = encodeModel(model, {}, colour);
    expect(bytes.readUInt32LE(8)).toBe(colourModelFormatVersion);
    // The layout of the module comment: header, padding to 4, d·(2 + k) grey floats, 7d colour floats, CRC.
    const headerLength = bytes.readUInt32LE(12);
    expect(JSON.parse(bytes.subarray(16, 16 + headerLength).toString('utf8')).colour).toEqual({ frameCount: 12 });
    expect(bytes.length).toBe(((16 + headerLength + 3) & ~3) + 4 * 24 * (2 + model.components + 7) + 4);
    // A version-1 file relabelled as version 2 lacks the colour record and section.
    const relabelled = Buffer.from(grey);
    relabelled.writeUInt32LE(2, 8);
    relabelled.writeUInt32LE(crc32(relabelled.subarray(0, relabelled.length - 4)), relabelled.length - 4);
    expect(() => decodeModel(relabelled, 'f.rsdm')).toThrow('f.rsdm: header lacks a colour record for format version 2');
    // A colour section cut short is refused by the length check.
    const cut = Buffer.from(bytes.subarray(0, bytes.length - 4 - 24 * 4));
    const withCrc = Buffer.concat([cut, Buffer.alloc(4)]);
    withCrc.writeUInt32LE(crc32(cut), cut.length);
    expect(() => decodeModel(withCrc, 'g.rsdm')).toThrow(/g\.rsdm: truncated or padded: .* and colour statistics/);
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
    future.writeUInt32LE(3, 8);
    expect(() => decodeModel(future, 'e.rsdm')).toThrow(/e\.rsdm: model format version 3; .* reads versions 1 and 2/);
    await expect(loadModel(join(dir, 'missing.rsdm'))).rejects.toThrow(/missing\.rsdm: no such model file/);
    writeFileSync(join(dir, 'zero.rsdm'), '');
    await expect(loadModel(join(dir, 'zero.rsdm'))).rejects.toThrow(/zero\.rsdm: the file is empty/);
  });
});
