/**
 * Where a JPEG ends, found by walking its marker structure (ITU-T T.81 | ISO/IEC 10918-1, Annex B):
 *
 *   SOI (FF D8) · segments · SOS (FF DA) · entropy-coded data · … · EOI (FF D9)
 *
 * A segment is a marker FF xx followed by a two-byte big-endian length that counts itself (B.1.1.4).
 * Markers without a length: SOI, EOI, RST0–RST7 (FF D0–D7) and TEM (FF 01). Any marker may be
 * preceded by fill bytes FF (B.1.1.2). In entropy-coded data a data byte FF is followed by a
 * stuffed 00 (B.1.1.5), RSTn markers may occur, and any other marker ends the data (a progressive
 * JPEG continues with more tables and scans).
 *
 * Walking the structure rather than looking for the first FF D9 matters: an EXIF thumbnail in APP1
 * is a whole JPEG with its own EOI, skipped here as part of the APP1 segment.
 */

/** Where a scan stopped: bytes from the JPEG's start already walked, and whether inside entropy-coded data. */
export interface JpegScanState {
  readonly offset: number;
  readonly entropy: boolean;
}

/** The start state: nothing walked yet. */
export const JPEG_SCAN_START: JpegScanState = { offset: 0, entropy: false };

export type JpegScanResult =
  /** The JPEG is `length` bytes long (SOI to EOI inclusive). */
  | { readonly status: 'end'; readonly length: number }
  /** Not complete in data[start, end): call again with `state` once more bytes are there. */
  | { readonly status: 'more'; readonly state: JpegScanState }
  /** The bytes do not follow the JPEG syntax. */
  | { readonly status: 'invalid'; readonly reason: string };

/**
 * Walks the JPEG that starts at data[start] as far as data[end) allows, resuming from `state`
 * (an earlier 'more' result for the same start; {@link JPEG_SCAN_START} the first time). Each
 * byte is looked at about once over successive calls; entropy-coded data is searched with
 * indexOf for FF.
 *
 * Example: scanJpeg(Uint8Array.of(0xff, 0xd8, 0xff, 0xd9), 0, 4) → { status: 'end', length: 4 }.
 */
export function scanJpeg(data: Uint8Array, start: number, end: number, state: JpegScanState = JPEG_SCAN_START): JpegScanResult {
  let i = start + state.offset;
  let entropy = state.entropy;
  const more = (at: number): JpegScanResult => ({ status: 'more', state: { offset: at - start, entropy } });
  if (state.offset === 0) {
    if (end - start < 2) return more(start);
    if (data[start] !== 0xff || data[start + 1] !== 0xd8) return { status: 'invalid', reason: 'does not start with SOI (FF D8)' };
    i = start + 2;
  }
  for (;;) {
    if (entropy) {
      // Entropy-coded data: look for the next FF that starts a marker.
      for (;;) {
        if (i >= end) return more(i);
        const ff = data.indexOf(0xff, i);
        if (ff === -1 || ff >= end) return more(end);
        if (ff + 1 >= end) return more(ff);
        const next = data[ff + 1];
        if (next === 0x00 || (next >= 0xd0 && next <= 0xd7)) {
          i = ff + 2; // stuffed byte or restart marker: still entropy-coded data
        } else if (next === 0xff) {
          i = ff + 1; // fill byte before a marker
        } else {
          i = ff;
          entropy = false;
          break;
        }
      }
    }
    // A marker at i, possibly after fill bytes.
    if (i >= end) return more(i);
    if (data[i] !== 0xff) return { status: 'invalid', reason: `expected a marker at byte ${i - start}` };
    let m = i;
    while (m + 1 < end && data[m + 1] === 0xff) m++;
    if (m + 1 >= end) return more(m);
    const code = data[m + 1];
    if (code === 0xd9) return { status: 'end', length: m + 2 - start };
    if (code === 0x00 || code === 0xd8) return { status: 'invalid', reason: `unexpected marker FF ${hex(code)} at byte ${m - start}` };
    if ((code >= 0xd0 && code <= 0xd7) || code === 0x01) {
      i = m + 2;
      continue;
    }
    if (m + 3 >= end) return more(m);
    const length = (data[m + 2] << 8) | data[m + 3];
    if (length < 2) return { status: 'invalid', reason: `segment FF ${hex(code)} at byte ${m - start} has length ${length}` };
    i = m + 2 + length;
    if (code === 0xda) entropy = true; // SOS: entropy-coded data follows its header
    if (i > end) {
      // The segment is not all here yet: resume at its end (the bytes in between are not looked at).
      return more(i);
    }
  }
}

function hex(byte: number): string {
  return byte.toString(16).toUpperCase().padStart(2, '0');
}
