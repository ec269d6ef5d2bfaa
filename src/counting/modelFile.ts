import { readFile, rename, writeFile } from 'node:fs/promises';
import { crc32 } from 'node:zlib';
import type { ChromaticityModel } from '../vision/chromaticityModel.ts';
import type { Subspace } from '../vision/subspace.ts';

/**
 * The model file: the learned empty scene (mean, eigen-images, noise map) and how it was learned.
 * It holds no frame with people in it, only statistics of frames of the empty scene.
 *
 * Layout (little-endian):
 *   0   8 bytes   signature "RSDMODEL"
 *   8   uint32    format version (1, or 2 with colour statistics)
 *   12  uint32    header length h in bytes
 *   16  h bytes   header, UTF-8 JSON (ModelHeader)
 *   …   zero padding to a multiple of 4
 *   …   float32 × d        mean
 *   …   float32 × d·k      basis, pixel-major
 *   …   float32 × d        noise
 *   version 2 only, the colour statistics of the colour mode (ChromaticityModel):
 *   …   float32 × 3d       expected colour E, R G B interleaved
 *   …   float32 × 3d       per-channel spread σ
 *   …   float32 × d        chromaticity-distortion spread b
 *   end uint32    CRC-32 (ISO-HDLC, as zlib) of every byte before it
 *
 * A model learned without colour is written as version 1, byte for byte as before, so older
 * versions of Residuum still read it; one with colour is version 2 (its header has a `colour`
 * record), which older versions refuse by its version number. Both are read here.
 */
export const modelFormatVersion = 1;
/** The format version of a model file with colour statistics. */
export const colourModelFormatVersion = 2;
const signature = Buffer.from('RSDMODEL', 'latin1');

/** What the header records besides the arrays. */
export interface ModelInfo {
  /** When the model was learned, ISO 8601 UTC. */
  readonly learnedAt?: string;
  /** Where the learning frames came from (path or camera id). */
  readonly source?: string;
  /** Free-form learning settings, for the record. */
  readonly settings?: Record<string, unknown>;
}

interface ModelHeader extends ModelInfo {
  width: number;
  height: number;
  components: number;
  frameCount: number;
  totalVariance: number;
  retainedVariance: number;
  residualVariance: number;
  eigenvalues: number[];
  /** Version 2 only: the colour statistics' record. */
  colour?: { frameCount: number };
}

export interface StoredModel {
  readonly model: Subspace;
  readonly info: ModelInfo;
  /** The empty scene's colour statistics, when the model was learned in colour mode. */
  readonly colour?: ChromaticityModel;
}

/** A model file that cannot be read; the message names the file and what is wrong. */
export class ModelFileError extends Error {
  override name = 'ModelFileError';
}

/**
 * Serialises a model and its record into the model file format: version 1, or version 2 when
 * `colour` (the colour statistics, of the model's size) is given.
 */
export function encodeModel(model: Subspace, info: ModelInfo = {}, colour?: ChromaticityModel): Buffer {
  if (colour !== undefined && (colour.width !== model.width || colour.height !== model.height)) {
    throw new RangeError(`colour statistics are ${colour.width}×${colour.height}, the model is ${model.width}×${model.height}`);
  }
  const header: ModelHeader = {
    width: model.width,
    height: model.height,
    components: model.components,
    frameCount: model.frameCount,
    totalVariance: model.totalVariance,
    retainedVariance: model.retainedVariance,
    residualVariance: model.residualVariance,
    eigenvalues: Array.from(model.eigenvalues),
    ...info,
    ...(colour !== undefined && { colour: { frameCount: colour.frameCount } }),
  };
  const json = Buffer.from(JSON.stringify(header), 'utf8');
  const start = align4(16 + json.length);
  const d = model.width * model.height;
  const floats = d * (2 + model.components) + (colour === undefined ? 0 : 7 * d);
  const buf = Buffer.alloc(start + floats * 4 + 4);
  signature.copy(buf, 0);
  buf.writeUInt32LE(colour === undefined ? modelFormatVersion : colourModelFormatVersion, 8);
  buf.writeUInt32LE(json.length, 12);
  json.copy(buf, 16);
  const view = new Float32Array(buf.buffer, buf.byteOffset + start, floats);
  view.set(model.mean, 0);
  view.set(model.basis, d);
  view.set(model.noise, d + d * model.components);
  if (colour !== undefined) {
    const at = d * (2 + model.components);
    view.set(colour.mean, at);
    view.set(colour.spread, at + 3 * d);
    view.set(colour.chromaSpread, at + 6 * d);
  }
  buf.writeUInt32LE(crc32(buf.subarray(0, buf.length - 4)), buf.length - 4);
  return buf;
}

/** Parses a model file's bytes; `source` names the file in error messages. */
export function decodeModel(buf: Buffer, source = 'model'): StoredModel {
  const fail = (why: string): never => {
    throw new ModelFileError(`${source}: ${why}`);
  };
  if (buf.length === 0) fail('the file is empty');
  if (buf.length < 20 || !buf.subarray(0, 8).equals(signature)) fail('not a Residuum model file (no RSDMODEL signature)');
  const version = buf.readUInt32LE(8);
  if (version !== modelFormatVersion && version !== colourModelFormatVersion) {
    fail(`model format version ${version}; this version of Residuum reads versions ${modelFormatVersion} and ${colourModelFormatVersion}: learn the model again`);
  }
  const headerLength = buf.readUInt32LE(12);
  if (16 + headerLength + 4 > buf.length) fail('truncated (header runs past the end)');
  if (crc32(buf.subarray(0, buf.length - 4)) !== buf.readUInt32LE(buf.length - 4)) fail('corrupt (checksum mismatch)');
  let header: ModelHeader;
  try {
    header = JSON.parse(buf.subarray(16, 16 + headerLength).toString('utf8'));
  } catch {
    return fail('corrupt header');
  }
  const { width, height, components: k } = header;
  const whole = (v: unknown) => Number.isInteger(v) && (v as number) >= 0;
  if (!whole(width) || !whole(height) || width * height === 0 || !whole(k)) fail('header has no valid width, height and components');
  if (!Array.isArray(header.eigenvalues) || header.eigenvalues.length !== k) fail('header eigenvalues do not match components');
  const hasColour = version === colourModelFormatVersion;
  if (hasColour !== (header.colour !== undefined)) fail(`header ${hasColour ? 'lacks' : 'has'} a colour record for format version ${version}`);
  if (hasColour && !whole(header.colour?.frameCount)) fail('header colour record has no valid frameCount');
  const d = width * height;
  const start = align4(16 + headerLength);
  const greyFloats = d * (2 + k);
  const floats = greyFloats + (hasColour ? 7 * d : 0);
  if (start + floats * 4 + 4 !== buf.length) {
    fail(`truncated or padded: ${buf.length} bytes for a ${width}×${height} model with ${k} components${hasColour ? ' and colour statistics' : ''}`);
  }
  // Copy out of the file buffer so the arrays are aligned and independent of it.
  const all = new Float32Array(floats);
  new Uint8Array(all.buffer).set(buf.subarray(start, start + floats * 4));
  const model: Subspace = {
    width,
    height,
    components: k,
    mean: all.subarray(0, d),
    basis: all.subarray(d, d + d * k),
    noise: all.subarray(d + d * k, greyFloats),
    eigenvalues: Float64Array.from(header.eigenvalues),
    totalVariance: header.totalVariance,
    retainedVariance: header.retainedVariance,
    residualVariance: header.residualVariance,
    frameCount: header.frameCount,
  };
  const info: ModelInfo = {
    ...(header.learnedAt !== undefined && { learnedAt: header.learnedAt }),
    ...(header.source !== undefined && { source: header.source }),
    ...(header.settings !== undefined && { settings: header.settings }),
  };
  if (!hasColour) return { model, info };
  const colour: ChromaticityModel = {
    width,
    height,
    mean: all.subarray(greyFloats, greyFloats + 3 * d),
    spread: all.subarray(greyFloats + 3 * d, greyFloats + 6 * d),
    chromaSpread: all.subarray(greyFloats + 6 * d, floats),
    frameCount: header.colour!.frameCount,
  };
  for (const [name, values] of [['spread', colour.spread], ['chromaSpread', colour.chromaSpread]] as const) {
    if (!values.every((v) => v > 0 && v < Infinity)) fail(`colour ${name} has values that are not finite and > 0`);
  }
  return { model, info, colour };
}

/** Writes a model file atomically (a temporary file renamed over the target); with `colour`, version 2. */
export async function saveModel(file: string, model: Subspace, info: ModelInfo = {}, colour?: ChromaticityModel): Promise<void> {
  const temp = `${file}.${process.pid}.tmp`;
  await writeFile(temp, encodeModel(model, info, colour));
  await rename(temp, file);
}

/** Reads a model file; a missing or unreadable file is a ModelFileError naming it. */
export async function loadModel(file: string): Promise<StoredModel> {
  let buf: Buffer;
  try {
    buf = await readFile(file);
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    throw new ModelFileError(`${file}: ${code === 'ENOENT' ? 'no such model file' : (error as Error).message}`);
  }
  return decodeModel(buf, file);
}

function align4(n: number): number {
  return (n + 3) & ~3;
}
