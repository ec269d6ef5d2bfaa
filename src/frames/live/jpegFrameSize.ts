/**
 * The size of a JPEG image read from its headers alone, without decoding: the frame header
 * (ITU-T T.81 | ISO/IEC 10918-1, B.2.2: marker SOFn, Lf, P, Y = number of lines, X = samples per
 * line) and the EXIF orientation (Exif 2.3, JEITA CP-3451, tag 0x0112 in the TIFF IFD0 of the
 * APP1 "Exif" segment), so that the size is the one shown after rotation: orientations 5–8
 * (transposed or turned a quarter) swap width and height, as sharp's `metadata().autoOrient`
 * does.
 *
 * The segments are walked as in scanJpeg (B.1.1): markers FF xx, optionally preceded by fill
 * bytes FF, each with a two-byte big-endian length that counts itself; the walk ends at the frame
 * header (which precedes the first scan, B.2.1).
 */
import type { Size } from '../workingSize.ts';

/** Frame header markers: SOF0–SOF3, SOF5–SOF7, SOF9–SOF11, SOF13–SOF15 (not DHT C4, JPG C8, DAC CC). */
function isStartOfFrame(code: number): boolean {
  return code >= 0xc0 && code <= 0xcf && code !== 0xc4 && code !== 0xc8 && code !== 0xcc;
}

/**
 * The width × height of the JPEG in `data`, after EXIF orientation; undefined when `data` is
 * not a JPEG whose frame header can be read (not starting with SOI, cut off before the frame
 * header, a height of 0 left to a DNL marker, B.2.5), so that the caller can ask a decoder.
 * Pure, reads only the headers (a few hundred bytes for a camera's JPEG).
 *
 * Example: for a 640×480 JPEG with EXIF orientation 6 (turned a quarter), { width: 480, height: 640 }.
 */
export function jpegFrameSize(data: Uint8Array): Size | undefined {
  const end = data.length;
  if (end < 4 || data[0] !== 0xff || data[1] !== 0xd8) return undefined;
  let orientation = 1;
  let i = 2;
  while (i + 3 < end) {
    if (data[i] !== 0xff) return undefined;
    while (i + 1 < end && data[i + 1] === 0xff) i++; // fill bytes
    if (i + 3 >= end) return undefined;
    const code = data[i + 1];
    if ((code >= 0xd0 && code <= 0xd7) || code === 0x01) {
      i += 2; // markers without a length
      continue;
    }
    if (code === 0xd9 || code === 0xda || code === 0xd8 || code === 0x00) return undefined; // EOI or a scan before any frame header
    const length = (data[i + 2] << 8) | data[i + 3];
    if (length < 2) return undefined;
    const body = i + 4;
    if (isStartOfFrame(code)) {
      // Lf (2, already read) · P (1) · Y (2) · X (2)
      if (body + 5 > end || length < 7) return undefined;
      const height = (data[body + 1] << 8) | data[body + 2];
      const width = (data[body + 3] << 8) | data[body + 4];
      if (width === 0 || height === 0) return undefined;
      return orientation >= 5 && orientation <= 8 ? { width: height, height: width } : { width, height };
    }
    if (code === 0xe1) orientation = exifOrientation(data, body, Math.min(end, i + 2 + length)) ?? orientation;
    i += 2 + length;
  }
  return undefined;
}

/**
 * The Orientation tag (0x0112, SHORT, 1..8) of the IFD0 of an APP1 segment whose body is
 * data[start, end), if it is an "Exif\0\0" segment that has one. TIFF 6.0 §2: header "II" (little
 * endian) or "MM" (big endian), 42, offset of IFD0 (from the TIFF header); an IFD is a 2-byte count of
 * 12-byte entries (tag, type, count, value), a SHORT value sitting in the first 2 bytes of the value field.
 */
function exifOrientation(data: Uint8Array, start: number, end: number): number | undefined {
  // "Exif" 00 00
  if (end - start < 14 || data[start] !== 0x45 || data[start + 1] !== 0x78 || data[start + 2] !== 0x69 || data[start + 3] !== 0x66) return undefined;
  if (data[start + 4] !== 0 || data[start + 5] !== 0) return undefined;
  const tiff = start + 6;
  const little = data[tiff] === 0x49 && data[tiff + 1] === 0x49;
  if (!little && !(data[tiff] === 0x4d && data[tiff + 1] === 0x4d)) return undefined;
  const u16 = (at: number): number => (little ? data[at] | (data[at + 1] << 8) : (data[at] << 8) | data[at + 1]);
  const u32 = (at: number): number => (little ? u16(at) + u16(at + 2) * 65536 : u16(at) * 65536 + u16(at + 2));
  if (u16(tiff + 2) !== 42) return undefined;
  const ifd = tiff + u32(tiff + 4);
  if (ifd + 2 > end) return undefined;
  const count = u16(ifd);
  for (let k = 0; k < count; k++) {
    const entry = ifd + 2 + 12 * k;
    if (entry + 12 > end) return undefined;
    if (u16(entry) !== 0x0112) continue;
    const value = u16(entry + 8);
    return u16(entry + 2) === 3 && value >= 1 && value <= 8 ? value : undefined;
  }
  return undefined;
}
