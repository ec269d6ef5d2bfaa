/**
 * Finds the signatures that start the common image files in a byte buffer, wherever they occur.
 *
 * Signatures, from the format specifications:
 * - JPEG: SOI marker FF D8 followed by the next marker's FF (ITU-T T.81, annex B);
 * - PNG: 89 50 4E 47 0D 0A 1A 0A (PNG specification, section 5.2, "PNG signature");
 * - GIF: "GIF87a" or "GIF89a" (GIF89a specification, "Header");
 * - WebP: "RIFF", a 4-byte size, then "WEBP" (WebP container specification, "RIFF header").
 */

export interface SignatureHit {
  readonly format: 'JPEG' | 'PNG' | 'GIF' | 'WebP';
  /** Byte offset of the signature's first byte. */
  readonly offset: number;
  /** Bytes the signature spans. */
  readonly length: number;
}

const fixed: { format: SignatureHit['format']; bytes: Buffer }[] = [
  { format: 'JPEG', bytes: Buffer.from([0xff, 0xd8, 0xff]) },
  { format: 'PNG', bytes: Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]) },
  { format: 'GIF', bytes: Buffer.from('GIF87a', 'latin1') },
  { format: 'GIF', bytes: Buffer.from('GIF89a', 'latin1') },
];
const RIFF = Buffer.from('RIFF', 'latin1');
const WEBP = Buffer.from('WEBP', 'latin1');

/** Every image signature in `bytes`, in order of offset. */
export function imageSignatures(bytes: Uint8Array): SignatureHit[] {
  const buf = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const hits: SignatureHit[] = [];
  for (const { format, bytes: sig } of fixed) {
    for (let at = buf.indexOf(sig); at >= 0; at = buf.indexOf(sig, at + 1)) hits.push({ format, offset: at, length: sig.length });
  }
  for (let at = buf.indexOf(RIFF); at >= 0; at = buf.indexOf(RIFF, at + 1)) {
    if (at + 12 <= buf.length && buf.subarray(at + 8, at + 12).equals(WEBP)) hits.push({ format: 'WebP', offset: at, length: 12 });
  }
  return hits.sort((a, b) => a.offset - b.offset);
}
