import fc from 'fast-check';
import { beforeAll, describe, expect, it } from 'vitest';
import { decodeImage } from '../../../src/frames/decodeImage.ts';
import { multipartBoundary, parseMultipart, type MultipartEvent, type ParseMultipartOptions } from '../../../src/frames/live/parseMultipart.ts';
import { stripedJpeg } from './liveFixtures.ts';

const b = (text: string): Buffer => Buffer.from(text, 'latin1');

/** Parses `stream` cut into chunks at the given offsets (sorted, within the stream), then ends it. */
function parseChunked(stream: Buffer, cuts: readonly number[], options: ParseMultipartOptions): MultipartEvent[] {
  const parser = parseMultipart(options);
  const events: MultipartEvent[] = [];
  let from = 0;
  for (const cut of [...cuts, stream.length]) {
    events.push(...parser.feed(stream.subarray(from, cut)));
    from = cut;
  }
  events.push(...parser.end());
  expect(parser.buffered).toBe(0);
  return events;
}

/** The parts' bodies named by which of `known` they equal ('?' + length for none), and dropped parts. */
function summary(events: readonly MultipartEvent[], known: Record<string, Buffer>): string[] {
  return events.map((event) => {
    if (event.type === 'dropped') return `dropped ${event.bytes}`;
    const body = Buffer.from(event.body);
    const name = Object.keys(known).find((key) => known[key].equals(body));
    return name ?? `?${body.length}:${JSON.stringify(body.subarray(0, 40).toString('latin1'))}`;
  });
}

/**
 * The same events whatever the chunking: whole, byte by byte, and cut in two at every offset.
 * Returns the summary of the whole-stream parse.
 */
function parseEveryWay(stream: Buffer, options: ParseMultipartOptions, known: Record<string, Buffer>): string[] {
  const whole = summary(parseChunked(stream, [], options), known);
  const bytewise = summary(parseChunked(stream, Array.from({ length: stream.length - 1 }, (_, i) => i + 1), options), known);
  expect(bytewise, 'byte by byte').toEqual(whole);
  for (let cut = 1; cut < stream.length; cut++) {
    const two = summary(parseChunked(stream, [cut], options), known);
    if (JSON.stringify(two) !== JSON.stringify(whole)) expect(two, `cut at ${cut}`).toEqual(whole);
  }
  return whole;
}

describe('multipartBoundary', () => {
  // check: RFC 2046 §5.1.1 — the boundary parameter, quoted when it has spaces ("simple boundary").
  it('reads quoted and unquoted boundary parameters', () => {
    expect(multipartBoundary('multipart/mixed; boundary="simple boundary"')).toBe('simple boundary');
    expect(multipartBoundary('multipart/x-mixed-replace; boundary=myboundary')).toBe('myboundary');
    expect(multipartBoundary('multipart/x-mixed-replace;boundary=--frame;charset=x')).toBe('--frame');
    expect(multipartBoundary('Multipart/X-Mixed-Replace; BOUNDARY = frame')).toBe('frame');
    expect(multipartBoundary('multipart/x-mixed-replace')).toBeUndefined();
    expect(multipartBoundary('multipart/x-mixed-replace; boundary=')).toBeUndefined();
  });
});

describe('parseMultipart: RFC 2046 syntax', () => {
  // check: RFC 2046 §5.1.1, the example "Sample message" (its body reproduced from memory):
  // a preamble, a part with no headers, a part with a Content-type header, the close delimiter,
  // an epilogue. The CRLF before each delimiter belongs to the delimiter, not to the part.
  const rfcExample = b(
    'This is the preamble.  It is to be ignored, though it\r\n' +
      'is a handy place for composition agents to include an\r\n' +
      'explanatory note to non-MIME conformant readers.\r\n' +
      '\r\n' +
      '--simple boundary\r\n' +
      '\r\n' +
      'This is implicitly typed plain US-ASCII text.\r\n' +
      'It does NOT end with a linebreak.\r\n' +
      '--simple boundary\r\n' +
      'Content-type: text/plain; charset=us-ascii\r\n' +
      '\r\n' +
      'This is explicitly typed plain US-ASCII text.\r\n' +
      'It DOES end with a linebreak.\r\n' +
      '\r\n' +
      '--simple boundary--\r\n' +
      '\r\n' +
      'This is the epilogue.  It is also to be ignored.\r\n',
  );

  it('splits the RFC 2046 example into its two parts, however it is chunked', () => {
    const first = b('This is implicitly typed plain US-ASCII text.\r\nIt does NOT end with a linebreak.');
    const second = b('This is explicitly typed plain US-ASCII text.\r\nIt DOES end with a linebreak.\r\n');
    expect(parseEveryWay(rfcExample, { boundary: 'simple boundary' }, { first, second })).toEqual(['first', 'second']);
    const events = parseChunked(rfcExample, [], { boundary: 'simple boundary' });
    expect(events[1]).toMatchObject({ type: 'part', headers: { 'content-type': 'text/plain; charset=us-ascii' } });
  });

  it('accepts transport padding after a delimiter and LF-only line breaks', () => {
    // check: RFC 2046 §5.1.1 — "dash-boundary transport-padding CRLF", transport-padding := *LWSP-char.
    const stream = b('--xyz  \t\r\nContent-Type: text/plain\r\n\r\nhello\r\n--xyz \nContent-Type: text/plain\n\nworld\n--xyz--\n');
    expect(parseEveryWay(stream, { boundary: 'xyz' }, { hello: b('hello'), world: b('world') })).toEqual(['hello', 'world']);
  });
});

describe('parseMultipart: MJPEG streams', () => {
  let red: Buffer;
  let green: Buffer;
  let blue: Buffer;
  let known: Record<string, Buffer>;

  beforeAll(async () => {
    red = await stripedJpeg(16, 12, 200);
    green = await stripedJpeg(16, 12, 120);
    blue = await stripedJpeg(16, 12, 40);
    known = { red, green, blue };
  });

  /** One part as cameras commonly send it (common practice): delimiter, headers, JPEG, CRLF. */
  const part = (jpeg: Buffer, { delimiter = '--frame', length = jpeg.length as number | undefined, type = 'image/jpeg' } = {}): Buffer =>
    Buffer.concat([
      b(`${delimiter}\r\nContent-Type: ${type}\r\n${length === undefined ? '' : `Content-Length: ${length}\r\n`}\r\n`),
      jpeg,
      b('\r\n'),
    ]);

  it('gives each JPEG with and without Content-Length, however the stream is chunked', () => {
    const stream = Buffer.concat([part(red), part(green, { length: undefined }), part(blue), b('--frame--\r\n')]);
    expect(parseEveryWay(stream, { boundary: 'frame' }, known)).toEqual(['red', 'green', 'blue']);
  });

  it('emits a JPEG as soon as its EOI arrives, before the next delimiter', () => {
    const parser = parseMultipart({ boundary: 'frame' });
    const events = parser.feed(Buffer.concat([b('--frame\r\nContent-Type: image/jpeg\r\n\r\n'), red]));
    expect(summary(events, known)).toEqual(['red']);
    expect(events[0]).toMatchObject({ headers: { 'content-type': 'image/jpeg' } });
  });

  it('accepts the boundary with or without leading dashes, in the parameter and in the stream', () => {
    for (const [parameter, delimiter] of [
      ['--myboundary', '--myboundary'], // the parameter has the dashes, the stream does not add more
      ['--myboundary', '----myboundary'], // RFC-correct for that parameter
      ['myboundary', '--myboundary'], // RFC-correct
      ['myboundary', 'myboundary'], // a bare boundary line
    ]) {
      const stream = Buffer.concat([part(red, { delimiter }), part(green, { delimiter, length: undefined }), b(`${delimiter}--\r\n`)]);
      expect(parseEveryWay(stream, { boundary: parameter }, known), `${parameter} / ${delimiter}`).toEqual(['red', 'green']);
    }
  });

  it('falls back to the JPEG markers when Content-Length is wrong', () => {
    const stream = Buffer.concat([part(red, { length: red.length - 100 }), part(green, { length: green.length + 250 }), part(blue, { length: 7 })]);
    expect(parseEveryWay(stream, { boundary: 'frame' }, known)).toEqual(['red', 'green', 'blue']);
  });

  it('copes with missing and extra delimiters, extra line breaks and garbage between parts', () => {
    const stream = Buffer.concat([
      b('HTTP junk before the first part\r\n\r\n'),
      part(red),
      green, // no delimiter, no headers: straight after the previous part
      b('\r\n\r\n\r\n--frame\r\n--frame\r\n\r\n\r\nContent-Type: image/jpeg\r\n\r\n\r\n'), // an extra delimiter and line breaks
      blue,
      b('\r\nsome garbage \x00\x01\x02 between parts\r\n'),
      part(red, { length: undefined }),
      b('Content-Type: image/jpeg\r\nContent-Length: 99\r\n\r\n'), // headers without their delimiter
      green,
    ]);
    expect(parseEveryWay(stream, { boundary: 'frame' }, known)).toEqual(['red', 'green', 'blue', 'red', 'green']);
  });

  it('cuts JPEGs by SOI/EOI alone when there is no boundary', () => {
    const stream = Buffer.concat([b('--whatever\r\nContent-Type: image/jpeg\r\n\r\n'), red, b('\r\n--whatever\r\n\r\n'), green, blue]);
    expect(parseEveryWay(stream, {}, known)).toEqual(['red', 'green', 'blue']);
  });

  it('ends a JPEG at its own EOI, not at the EOI of a thumbnail embedded in an APP segment', async () => {
    // check: ITU-T T.81 Annex B — an APPn segment is skipped by its length, whatever it holds.
    const thumbnail = await stripedJpeg(8, 8, 90);
    const payload = Buffer.concat([b('THUMB\0'), thumbnail]);
    const app15 = Buffer.alloc(4);
    app15.writeUInt16BE(0xffef, 0);
    app15.writeUInt16BE(payload.length + 2, 2);
    const withThumbnail = Buffer.concat([red.subarray(0, 2), app15, payload, red.subarray(2)]);
    // A valid JPEG for a real decoder too.
    const frame = await decodeImage(withThumbnail, { width: 16, height: 12 });
    expect([frame.width, frame.height]).toEqual([16, 12]);
    const stream = Buffer.concat([part(withThumbnail, { length: undefined }), part(green, { length: undefined })]);
    expect(parseEveryWay(stream, { boundary: 'frame' }, { ...known, withThumbnail })).toEqual(['withThumbnail', 'green']);
  });

  it('passes on a JPEG cut short by the next delimiter (the decoder then reports it), and goes on', () => {
    const cut = red.subarray(0, Math.floor(red.length * 0.6));
    const stream = Buffer.concat([part(cut, { length: undefined }), part(green)]);
    expect(parseEveryWay(stream, { boundary: 'frame' }, { ...known, cut })).toEqual(['cut', 'green']);
  });

  it('drops a part larger than maxPartBytes, by its Content-Length or by its bytes, and goes on', () => {
    const big = Buffer.concat([red.subarray(0, 2), Buffer.alloc(4), red.subarray(2)]);
    big.writeUInt16BE(0xffee, 2); // APP14
    big.writeUInt16BE(2, 4);
    const huge = Buffer.alloc(3000, 0x41);
    const declared = Buffer.concat([b('--frame\r\nContent-Type: image/jpeg\r\nContent-Length: 5000\r\n\r\n'), huge, b('\r\n')]);
    const limit = { boundary: 'frame', maxPartBytes: 1000 };
    // A JPEG of ~2 kB: a comment segment (COM, FF FE) of 1500 bytes makes it too big.
    const comment = Buffer.alloc(1504, 0x20);
    comment.writeUInt16BE(0xfffe, 0);
    comment.writeUInt16BE(1502, 2);
    const long = Buffer.concat([red.subarray(0, 2), comment, red.subarray(2)]);
    const stream = Buffer.concat([declared, part(green), part(long, { length: undefined }), part(blue)]);
    const events = parseChunked(stream, [], limit);
    expect(summary(events, known)).toEqual(['dropped 5000', 'green', expect.stringMatching(/^dropped \d+$/), 'blue']);
    expect(events[0]).toMatchObject({ reason: expect.stringContaining('maxPartBytes') });
    const bytewise = parseChunked(stream, Array.from({ length: stream.length - 1 }, (_, i) => i + 1), limit);
    expect(summary(bytewise, known).filter((s) => !s.startsWith('dropped'))).toEqual(['green', 'blue']);
    expect(big.length).toBeGreaterThan(red.length);
  });

  it('reports a part cut off by the end of the stream as dropped, and holds no bytes after end()', () => {
    const parser = parseMultipart({ boundary: 'frame' });
    expect(parser.feed(Buffer.concat([b('--frame\r\n\r\n'), red.subarray(0, 100)]))).toEqual([]);
    expect(parser.buffered).toBe(100);
    expect(parser.end()).toEqual([{ type: 'dropped', bytes: 100, reason: 'the stream ended inside a part, after 100 bytes' }]);
    expect(parser.buffered).toBe(0);
  });

  it('keeps little of long garbage between parts', () => {
    const parser = parseMultipart({ boundary: 'frame' });
    parser.feed(Buffer.alloc(100_000, 0x61));
    expect(parser.buffered).toBeLessThan(200);
  });

  it('ignores the boundary word inside header values and in longer words', () => {
    const stream = Buffer.concat([
      b('--frame\r\nX-Frame: frame\r\nContent-Type: image/jpeg\r\n\r\n'),
      red,
      b('\r\nframe2\r\n--frame\r\n\r\n'),
      green,
    ]);
    expect(parseEveryWay(stream, { boundary: 'frame' }, known)).toEqual(['red', 'green']);
  });

  it('finds every JPEG of random streams mixing all the quirks above, chunked at random', () => {
    const jpegs = [red, green, blue];
    const names = ['red', 'green', 'blue'];
    const partSpec = fc.record({
      jpeg: fc.integer({ min: 0, max: 2 }),
      delimiter: fc.constantFrom('--frame', '----frame', 'frame', ''),
      length: fc.constantFrom('right', 'none', 'short', 'long'),
      before: fc.constantFrom('', '\r\n', '\r\n\r\n', 'junk text\r\n', '\x00\x7f garbage '),
      extraDelimiter: fc.boolean(),
    });
    fc.assert(
      fc.property(fc.array(partSpec, { minLength: 1, maxLength: 6 }), fc.array(fc.double({ min: 0, max: 1, noNaN: true }), { maxLength: 12 }), (specs, fractions) => {
        const pieces: Buffer[] = [];
        for (const spec of specs) {
          const jpeg = jpegs[spec.jpeg];
          const length = { right: jpeg.length, none: undefined, short: jpeg.length - 50, long: jpeg.length + 80 }[spec.length];
          pieces.push(b(spec.before));
          if (spec.extraDelimiter && spec.delimiter !== '') pieces.push(b(`${spec.delimiter}\r\n`));
          if (spec.delimiter === '') pieces.push(jpeg); // no delimiter, no headers
          else pieces.push(part(jpeg, { delimiter: spec.delimiter, length }));
        }
        const stream = Buffer.concat(pieces);
        const cuts = [...new Set(fractions.map((f) => Math.floor(f * stream.length)))].filter((c) => c > 0 && c < stream.length).sort((x, y) => x - y);
        const got = summary(parseChunked(stream, cuts, { boundary: 'frame' }), known);
        expect(got).toEqual(specs.map((spec) => names[spec.jpeg]));
      }),
      { numRuns: 300, seed: 2046 },
    );
  });

  it('rejects bad options naming the field', () => {
    expect(() => parseMultipart({ maxPartBytes: 0 })).toThrow(/maxPartBytes/);
    expect(() => parseMultipart({ maxHeaderBytes: 1.5 })).toThrow(/maxHeaderBytes/);
  });
});
