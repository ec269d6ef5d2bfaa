/**
 * An incremental ("push") parser of a multipart body as MJPEG cameras send it
 * (`Content-Type: multipart/x-mixed-replace; boundary=…`), giving the JPEG of each part.
 *
 * The syntax followed is RFC 2046 §5.1.1 (the common syntax of all multipart types):
 *
 *   preamble CRLF "--" boundary CRLF headers CRLF body CRLF "--" boundary CRLF headers CRLF body …
 *   CRLF "--" boundary "--" epilogue
 *
 * where the CRLF before "--" belongs to the delimiter, transport padding (spaces, tabs) may follow
 * a delimiter before its CRLF, and the headers end at an empty line. Cameras bend it, so the
 * parser is lenient where RFC 2046 is strict:
 * - the boundary is looked for without its leading dashes: a Content-Type `boundary=--frame` with
 *   `--frame`, `----frame` or a bare `frame` line between parts all work; a delimiter line is the
 *   boundary preceded by two or more dashes, or alone at the start of a line;
 * - LF alone ends lines as well as CRLF; empty lines before a part's headers are skipped (so a
 *   part with no headers must start with its body, e.g. a JPEG's FF D8, rather than a blank line);
 * - a JPEG body (starting FF D8) ends where its EOI marker ends, found by walking its marker
 *   structure (see scanJpeg): it is emitted at once, without waiting for the next delimiter (many
 *   cameras send the delimiter only when the next frame is ready), whatever Content-Length says;
 *   a JPEG with no delimiter before it (missing boundary), bytes between parts (garbage, extra
 *   CRLFs) and extra delimiters are all taken in stride;
 * - a non-JPEG body (its Content-Type is not image/jpeg) ends at the next delimiter, or after
 *   Content-Length bytes when there is none in them;
 * - a JPEG whose structure breaks (or that is cut by a delimiter before its EOI) is emitted as far
 *   as it goes, up to the next delimiter or SOI: the decoder then reports it as a bad frame.
 *
 * Without a boundary (the Content-Type has none), parts are the JPEGs found by SOI/EOI alone.
 * Memory is bounded: a part longer than `maxPartBytes` (by its bytes or its Content-Length) is
 * dropped, and garbage is not kept.
 */
import { JPEG_SCAN_START, scanJpeg, type JpegScanState } from './scanJpeg.ts';

export interface ParseMultipartOptions {
  /**
   * The boundary from the Content-Type header (see {@link multipartBoundary}); leading dashes are
   * ignored. Default: none (JPEGs are found by their SOI and EOI markers alone).
   */
  boundary?: string;
  /** Longest part kept, in bytes (inclusive), a whole number ≥ 1; longer ones are dropped. Default 20 MiB. */
  maxPartBytes?: number;
  /** Longest header section of a part, in bytes (inclusive), a whole number ≥ 1. Default 16 KiB. */
  maxHeaderBytes?: number;
}

/** What {@link MultipartParser.feed} finds. */
export type MultipartEvent =
  /** A complete part: its body (a copy, owned by the receiver) and its headers (names in lower case). */
  | { readonly type: 'part'; readonly body: Uint8Array; readonly headers: Readonly<Record<string, string>> }
  /** A part that was thrown away: how many bytes were seen of it (or declared), and why. */
  | { readonly type: 'dropped'; readonly bytes: number; readonly reason: string };

/** A push parser: feed it the body as it arrives. */
export interface MultipartParser {
  /** Takes the next bytes of the body (not kept: they are copied) and returns the parts completed by them. */
  feed(chunk: Uint8Array): MultipartEvent[];
  /** The body has ended: returns a `dropped` event for a part cut off by the end, if any; the parser is then empty. */
  end(): MultipartEvent[];
  /** Bytes currently held (an incomplete part, or the tail of garbage that may begin a delimiter). */
  readonly buffered: number;
}

/** The boundary parameter of a multipart Content-Type (quoted or not), or undefined when there is none. */
export function multipartBoundary(contentType: string): string | undefined {
  const match = /;\s*boundary\s*=\s*(?:"([^"]*)"|([^;\s]*))/i.exec(contentType);
  const value = match ? (match[1] ?? match[2]) : undefined;
  return value === undefined || value === '' ? undefined : value;
}

const CR = 0x0d;
const LF = 0x0a;
const DASH = 0x2d;
const SPACE = 0x20;
const TAB = 0x09;
/** Longest run of transport padding (spaces, tabs) accepted after a delimiter. */
const MAX_PADDING = 64;
/** A header line: a field name (printable ASCII but ':') then ':' (RFC 5322 §2.2). */
const HEADER_LINE = /^[!-9;-~]+:/;

type State = 'seek' | 'discard' | 'headers' | 'body';
type BodyMode = 'start' | 'jpeg' | 'raw';

interface Delimiter {
  /** Where the delimiter line starts (its first dash). */
  readonly start: number;
  /** Just after its line break. */
  readonly end: number;
  /** Whether it is the close delimiter (boundary followed by "--"). */
  readonly close: boolean;
}

/**
 * A new parser (see the module comment).
 *
 * Example: parseMultipart({ boundary: 'frame' }).feed(Buffer.from('--frame\r\nContent-Type:
 * image/jpeg\r\n\r\n<jpeg>\r\n')) → [{ type: 'part', body: <jpeg>, headers: { 'content-type': 'image/jpeg' } }].
 */
export function parseMultipart(options: ParseMultipartOptions = {}): MultipartParser {
  const { boundary, maxPartBytes = 20 * 1024 * 1024, maxHeaderBytes = 16 * 1024 } = options;
  for (const [field, value] of [['maxPartBytes', maxPartBytes], ['maxHeaderBytes', maxHeaderBytes]] as const) {
    if (!(Number.isInteger(value) && value >= 1)) throw new RangeError(`${field} must be a whole number ≥ 1, got ${String(value)}`);
  }
  if (boundary !== undefined && typeof boundary !== 'string') throw new TypeError('boundary must be a string');
  const coreText = (boundary ?? '').replace(/^-+/, '');
  const core = coreText === '' ? undefined : Buffer.from(coreText, 'latin1');
  const coreLength = core?.length ?? 0;

  let buf = Buffer.alloc(64 * 1024);
  let pos = 0; // start of the unconsumed bytes
  let len = 0; // end of the valid bytes
  let posAtLineStart = true; // whether buf[pos] starts a line (for a bare boundary without dashes)
  let state: State = 'seek';
  let headers: Record<string, string> = {};
  let headerBytes = 0;
  let headerCount = 0;
  // Body state, offsets relative to pos (the body's start).
  let mode: BodyMode = 'start';
  let jpeg: JpegScanState = JPEG_SCAN_START;
  let delimiterSearched = 0; // the delimiter search resumes here
  let contentLength: number | undefined;

  const append = (chunk: Uint8Array): void => {
    if (len + chunk.length > buf.length) {
      if (pos > 0) {
        buf.copyWithin(0, pos, len);
        len -= pos;
        pos = 0;
      }
      if (len + chunk.length > buf.length) {
        const bigger = Buffer.alloc(Math.max(buf.length * 2, len + chunk.length));
        buf.copy(bigger, 0, 0, len);
        buf = bigger;
      }
    }
    buf.set(chunk, len);
    len += chunk.length;
  };

  /** The first delimiter line whose boundary starts at or after `from`; 'partial' with where to keep from when the bytes end inside one. */
  const findDelimiter = (from: number): Delimiter | { partial: number } | undefined => {
    if (core === undefined) return undefined;
    const view = buf.subarray(0, len);
    for (let k = view.indexOf(core, from); k !== -1; k = view.indexOf(core, k + 1)) {
      let d = k;
      while (d > pos && buf[d - 1] === DASH) d--;
      const before = d > pos ? buf[d - 1] : posAtLineStart ? LF : undefined;
      if (!(k - d >= 2 || before === LF || before === CR)) continue;
      let a = k + coreLength;
      let close = false;
      if (a < len && buf[a] === DASH) {
        if (a + 1 >= len) return { partial: d };
        if (buf[a + 1] === DASH) {
          close = true;
          a += 2;
        }
      }
      let padding = 0;
      while (a < len && (buf[a] === SPACE || buf[a] === TAB) && padding <= MAX_PADDING) {
        a++;
        padding++;
      }
      if (padding > MAX_PADDING) continue;
      if (a >= len) return { partial: d };
      if (buf[a] === LF) return { start: d, end: a + 1, close };
      if (buf[a] === CR) {
        if (a + 1 >= len) return { partial: d };
        return { start: d, end: buf[a + 1] === LF ? a + 2 : a + 1, close };
      }
      // The boundary followed by something else ("frame2"): not a delimiter.
    }
    return undefined;
  };

  /** The first SOI (FF D8 FF) at or after `from`, or -1. */
  const findSoi = (from: number): number => {
    const view = buf.subarray(0, len);
    for (let k = view.indexOf(0xff, from); k !== -1 && k + 2 < len; k = view.indexOf(0xff, k + 1)) {
      if (buf[k + 1] === 0xd8 && buf[k + 2] === 0xff) return k;
    }
    return -1;
  };

  /** Where a body that ends at a delimiter starting at `start` ends: before the one line break preceding it. */
  const bodyEndBefore = (start: number): number => {
    let end = start;
    if (end > pos && buf[end - 1] === LF) end--;
    if (end > pos && buf[end - 1] === CR) end--;
    return end;
  };

  /** Consumes bytes up to `to`. */
  const consume = (to: number): void => {
    posAtLineStart = to > 0 && (buf[to - 1] === LF || buf[to - 1] === CR);
    pos = to;
  };

  const startBody = (at: number, atLineStart: boolean): void => {
    consume(at);
    posAtLineStart = atLineStart;
    state = 'body';
    mode = 'start';
    jpeg = JPEG_SCAN_START;
    delimiterSearched = 0;
    const declared = headers['content-length'];
    contentLength = declared !== undefined && /^\d{1,15}$/.test(declared) ? Number(declared) : undefined;
  };

  const startHeaders = (at: number): void => {
    consume(at);
    state = 'headers';
    headers = {};
    headerBytes = 0;
    headerCount = 0;
  };

  const toSeek = (at: number, discard = false): void => {
    consume(at);
    state = discard ? 'discard' : 'seek';
    headers = {};
  };

  /** Emits bytes [start, end) as a part, or as a dropped part when longer than maxPartBytes. */
  const emitPart = (events: MultipartEvent[], start: number, end: number): void => {
    if (end - start > maxPartBytes) {
      events.push({ type: 'dropped', bytes: end - start, reason: `part longer than maxPartBytes (${maxPartBytes})` });
      return;
    }
    const body: Uint8Array = Buffer.from(buf.subarray(start, end));
    events.push({ type: 'part', body, headers });
  };

  /** Drops the current part, which starts at pos: its bytes are skipped up to the next delimiter. */
  const dropPart = (events: MultipartEvent[], bytes: number, reason: string): void => {
    events.push({ type: 'dropped', bytes, reason });
    toSeek(Math.min(pos + 1, len), true);
  };

  /** A point to discard up to that keeps any bytes that could be the start of a delimiter line or of an SOI. */
  const safeDiscardPoint = (): number => {
    let at = Math.max(pos, len - (coreLength + MAX_PADDING + 4));
    while (at > pos && (buf[at - 1] === DASH || buf[at - 1] === 0xff)) at--;
    return at;
  };

  /** Runs the state machine over the held bytes until it needs more. */
  const run = (events: MultipartEvent[]): void => {
    for (;;) {
      if (state === 'seek' || state === 'discard') {
        const delimiter = findDelimiter(pos);
        const soi = state === 'seek' || core === undefined ? findSoi(pos) : -1;
        const delimiterAt = delimiter === undefined ? -1 : 'partial' in delimiter ? delimiter.partial : delimiter.start;
        if (soi !== -1 && (delimiterAt === -1 || soi < delimiterAt)) {
          headers = {};
          startBody(soi, false); // a JPEG with no delimiter before it
          continue;
        }
        if (delimiter !== undefined && !('partial' in delimiter)) {
          if (delimiter.close) toSeek(delimiter.end);
          else startHeaders(delimiter.end);
          continue;
        }
        // Nothing complete: keep only what may begin a delimiter or an SOI.
        const keep = delimiter !== undefined ? delimiter.partial : safeDiscardPoint();
        if (keep > pos) consume(keep);
        return;
      }

      if (state === 'headers') {
        if (len - pos < 2) return;
        if (buf[pos] === 0xff && buf[pos + 1] === 0xd8) {
          startBody(pos, false); // no empty line after the headers
          continue;
        }
        const lf = buf.subarray(0, len).indexOf(LF, pos);
        if (lf === -1) {
          if (len - pos > maxHeaderBytes) startBody(pos, posAtLineStart); // not a header line: the body starts here
          return;
        }
        const lineEnd = lf > pos && buf[lf - 1] === CR ? lf - 1 : lf;
        const delimiter = core !== undefined && buf.subarray(pos, lineEnd).includes(core) ? findDelimiter(pos) : undefined;
        if (delimiter !== undefined && !('partial' in delimiter) && delimiter.start === pos) {
          // An extra delimiter: the part before it had no body.
          if (delimiter.close) toSeek(delimiter.end);
          else startHeaders(delimiter.end);
          continue;
        }
        if (lineEnd === pos) {
          if (headerCount > 0) startBody(lf + 1, true);
          else consume(lf + 1); // an extra line break before the headers
          continue;
        }
        const line = buf.toString('latin1', pos, lineEnd);
        if (!HEADER_LINE.test(line)) {
          startBody(pos, posAtLineStart); // not a header: a body without headers, or garbage
          continue;
        }
        headerBytes += lf + 1 - pos;
        if (headerBytes > maxHeaderBytes) {
          dropPart(events, headerBytes, `part headers longer than maxHeaderBytes (${maxHeaderBytes})`);
          continue;
        }
        const colon = line.indexOf(':');
        headers[line.slice(0, colon).trim().toLowerCase()] = line.slice(colon + 1).trim();
        headerCount++;
        consume(lf + 1);
        continue;
      }

      // state === 'body': the body starts at pos.
      if (contentLength !== undefined && contentLength > maxPartBytes) {
        const declared = contentLength;
        contentLength = undefined;
        dropPart(events, declared, `part declares ${declared} bytes (Content-Length), more than maxPartBytes (${maxPartBytes})`);
        continue;
      }
      if (mode === 'start') {
        const type = headers['content-type'];
        if (type !== undefined && !/^image\/(p?jpeg|jpg)\b/i.test(type)) {
          mode = 'raw';
          continue;
        }
        // A JPEG is expected: skip line breaks and spaces before it, and any garbage before an SOI
        // that comes before the next delimiter; a body that is no JPEG ends at that delimiter.
        let s = pos;
        while (s < len && (buf[s] === CR || buf[s] === LF || buf[s] === SPACE || buf[s] === TAB)) s++;
        if (len - s < 2) return;
        if (buf[s] === 0xff && buf[s + 1] === 0xd8) {
          consume(s);
          mode = 'jpeg';
          continue;
        }
        const soi = findSoi(s);
        const delimiter = findDelimiter(pos);
        const delimiterAt = delimiter === undefined ? -1 : 'partial' in delimiter ? delimiter.partial : delimiter.start;
        if (soi !== -1 && (delimiterAt === -1 || soi < delimiterAt)) {
          consume(soi);
          mode = 'jpeg';
          continue;
        }
        if ((delimiter !== undefined && !('partial' in delimiter)) || (contentLength !== undefined && len - pos >= contentLength)) {
          mode = 'raw';
          continue;
        }
        if (core === undefined && contentLength === undefined && len - pos > maxHeaderBytes) {
          mode = 'raw'; // nothing will end it but the next JPEG
          continue;
        }
        if (len - pos > maxPartBytes) dropPart(events, len - pos, `part longer than maxPartBytes (${maxPartBytes})`);
        return;
      }
      if (mode === 'jpeg') {
        const result = scanJpeg(buf, pos, len, jpeg);
        const walked = result.status === 'end' ? pos + result.length : result.status === 'more' ? Math.min(len, pos + result.state.offset) : len;
        // A delimiter inside the walked bytes means the JPEG was cut short.
        const delimiter = findDelimiter(pos + delimiterSearched);
        const complete = delimiter !== undefined && !('partial' in delimiter) ? delimiter : undefined;
        if (complete !== undefined && complete.start < walked) {
          emitPart(events, pos, bodyEndBefore(complete.start));
          if (complete.close) toSeek(complete.end);
          else startHeaders(complete.end);
          continue;
        }
        if (result.status === 'end') {
          emitPart(events, pos, pos + result.length);
          toSeek(pos + result.length);
          posAtLineStart = true; // a bare boundary may follow the EOI directly
          continue;
        }
        if (result.status === 'invalid') {
          // Broken structure: the part runs to the next delimiter or SOI; the decoder will say what is wrong.
          const soi = findSoi(pos + 2);
          const delimiterAt = delimiter === undefined ? -1 : 'partial' in delimiter ? delimiter.partial : delimiter.start;
          if (soi !== -1 && (delimiterAt === -1 || soi < delimiterAt)) {
            emitPart(events, pos, soi);
            headers = {};
            startBody(soi, false);
            continue;
          }
          mode = 'raw';
          continue;
        }
        jpeg = result.state;
        delimiterSearched = resumeSearchAt(delimiter);
        if (len - pos > maxPartBytes) dropPart(events, len - pos, `part longer than maxPartBytes (${maxPartBytes})`);
        return;
      }
      // mode === 'raw': up to the next delimiter; or Content-Length bytes when no delimiter starts within them.
      const delimiter = findDelimiter(pos + delimiterSearched);
      if (delimiter !== undefined && !('partial' in delimiter)) {
        const end = bodyEndBefore(delimiter.start);
        if (end > pos) emitPart(events, pos, end);
        if (delimiter.close) toSeek(delimiter.end);
        else startHeaders(delimiter.end);
        continue;
      }
      if (contentLength !== undefined && len - pos >= contentLength && (delimiter === undefined || delimiter.partial >= pos + contentLength)) {
        emitPart(events, pos, pos + contentLength);
        toSeek(pos + contentLength);
        continue;
      }
      delimiterSearched = resumeSearchAt(delimiter);
      if (core === undefined && contentLength === undefined) {
        // No boundary and no length: nothing can end this part but the next JPEG.
        const soi = findSoi(pos + 1);
        if (soi !== -1) {
          emitPart(events, pos, soi);
          headers = {};
          startBody(soi, false);
          continue;
        }
      }
      if (len - pos > maxPartBytes) dropPart(events, len - pos, `part longer than maxPartBytes (${maxPartBytes})`);
      return;
    }
  };

  /** Where (relative to pos) the next delimiter search starts: at a partial one, else near the end of the bytes searched. */
  const resumeSearchAt = (delimiter: Delimiter | { partial: number } | undefined): number => {
    if (delimiter !== undefined) return ('partial' in delimiter ? delimiter.partial : delimiter.start) - pos;
    return Math.max(0, len - coreLength - MAX_PADDING - 4 - pos);
  };

  return {
    feed(chunk) {
      if (!(chunk instanceof Uint8Array)) throw new TypeError('feed(chunk): chunk must be a Uint8Array or Buffer');
      const events: MultipartEvent[] = [];
      if (chunk.length === 0) return events;
      append(chunk);
      run(events);
      if (pos === len) {
        pos = 0;
        len = 0;
      }
      return events;
    },
    end() {
      const events: MultipartEvent[] = [];
      if (state === 'body' && len > pos) {
        events.push({ type: 'dropped', bytes: len - pos, reason: `the stream ended inside a part, after ${len - pos} bytes` });
      }
      pos = 0;
      len = 0;
      posAtLineStart = true;
      state = 'seek';
      headers = {};
      return events;
    },
    get buffered() {
      return len - pos;
    },
  };
}
