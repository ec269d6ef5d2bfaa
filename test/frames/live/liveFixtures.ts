/**
 * Test fixtures for the live sources: a recorder of what a source delivers, waiting for events
 * with generous limits (no timing assertions), local HTTP and DNS servers on 127.0.0.1 only,
 * synthetic JPEGs made in memory with sharp (flat levels and stripes, no people), and a check
 * that a stopped source left no handle behind.
 */
import { createSocket } from 'node:dgram';
import { Resolver } from 'node:dns';
import http, { type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo, LookupFunction } from 'node:net';
import type { ColourFrame } from '../../../src/domain/colourFrame.ts';
import type { GreyFrame } from '../../../src/domain/frame.ts';
import type { FrameError } from '../../../src/frames/FrameError.ts';
import type { CameraHandlers, SourceState, StatusDetail } from '../../../src/frames/live/cameraSource.ts';
import type { Clock } from '../../../src/frames/live/clock.ts';
import { encodeGrey, greyPixels } from '../fixtures.ts';

/** Everything a source delivered, in order. */
export interface Recording {
  readonly handlers: CameraHandlers;
  readonly frames: { frame: GreyFrame; capturedAt: number; colour?: ColourFrame }[];
  readonly statuses: { state: SourceState; detail: StatusDetail }[];
  readonly bad: FrameError[];
  /** Every call, in order: 'frame', 'bad' or the state. */
  readonly log: string[];
  /** The latest state reported. */
  state(): SourceState | undefined;
}

export function record(): Recording {
  const frames: Recording['frames'] = [];
  const statuses: Recording['statuses'] = [];
  const bad: FrameError[] = [];
  const log: string[] = [];
  return {
    frames,
    statuses,
    bad,
    log,
    state: () => statuses.at(-1)?.state,
    handlers: {
      frame(frame, capturedAt, colour) {
        frames.push(colour === undefined ? { frame, capturedAt } : { frame, capturedAt, colour });
        log.push('frame');
      },
      status(state, detail) {
        statuses.push({ state, detail });
        log.push(state);
      },
      badFrame(error) {
        bad.push(error);
        log.push('bad');
      },
    },
  };
}

/** Resolves once `condition()` is true; rejects after `timeoutMs` (default 10 s) naming `what`. */
export async function waitFor(condition: () => boolean | Promise<boolean>, what: string, timeoutMs = 10_000): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!(await condition())) {
    if (Date.now() > deadline) throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
    await sleep(20);
  }
}

export function sleep(ms: number): Promise<void> {
  return new Promise((resolve) => setTimeout(resolve, ms));
}

/** A grey JPEG of width × height: a flat `level` with a darker vertical stripe at x in [w/4, w/2). */
export function stripedJpeg(width: number, height: number, level: number, quality = 95): Promise<Buffer> {
  const pixels = greyPixels(width, height, (x) => (x >= width / 4 && x < width / 2 ? level / 2 : level));
  return encodeGrey(pixels, width, height, 'jpeg', { quality });
}

/** The mean grey level of a frame's columns [x0, x1) (to tell frames apart by their level). */
export function meanLevel(frame: GreyFrame, x0 = 0, x1 = frame.width): number {
  let sum = 0;
  for (let y = 0; y < frame.height; y++) for (let x = x0; x < x1; x++) sum += frame.data[y * frame.width + x];
  return sum / ((x1 - x0) * frame.height);
}

/** A local HTTP server on 127.0.0.1 with an OS-chosen port, and the requests it has had. */
export interface TestServer {
  readonly url: string;
  readonly requests: IncomingMessage[];
  /** Open sockets, destroyed by close(). */
  close(): Promise<void>;
}

export async function startServer(handler: (request: IncomingMessage, response: ServerResponse, index: number) => void): Promise<TestServer> {
  const requests: IncomingMessage[] = [];
  const sockets = new Set<import('node:net').Socket>();
  const server: Server = http.createServer((request, response) => {
    requests.push(request);
    handler(request, response, requests.length - 1);
  });
  // Idle keep-alive connections stay open until the client closes them (Node's default closes them
  // after 5 s), so that a client that forgets its sockets is caught.
  server.keepAliveTimeout = 0;
  server.on('connection', (socket) => {
    sockets.add(socket);
    socket.on('close', () => sockets.delete(socket));
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const { port } = server.address() as AddressInfo;
  return {
    url: `http://127.0.0.1:${port}`,
    requests,
    close: () =>
      new Promise<void>((resolve) => {
        for (const socket of sockets) socket.destroy();
        server.close(() => resolve());
      }),
  };
}

/** Kinds of handle that a stopped source must not leave behind (see process.getActiveResourcesInfo). */
const WATCHED = ['Timeout', 'TCPSocketWrap', 'TCPServerWrap', 'FSEventWrap', 'ProcessWrap', 'PipeWrap', 'FSReqCallback', 'FSReqPromise'];

/** Counts of the watched handle kinds now active. */
export function activeHandles(): Record<string, number> {
  const counts: Record<string, number> = {};
  for (const kind of WATCHED) counts[kind] = 0;
  for (const kind of process.getActiveResourcesInfo()) if (kind in counts) counts[kind]++;
  return counts;
}

/** Waits until no watched kind of handle is more numerous than in `before` (sockets close asynchronously). */
export async function expectReleased(before: Record<string, number>): Promise<void> {
  let now = activeHandles();
  const extra = (): string[] => WATCHED.filter((kind) => now[kind] > before[kind]);
  await waitFor(
    () => {
      now = activeHandles();
      return extra().length === 0;
    },
    'handles to be released',
  ).catch(() => {
    throw new Error(`handles left after stop: ${extra().map((kind) => `${kind} ${before[kind]} → ${now[kind]}`).join(', ')}`);
  });
}

/** A clock whose time moves only by advance(); timers fire in time order, including ones set while advancing. */
export interface ManualClock extends Clock {
  advance(ms: number): void;
  /** Timers not yet fired. */
  pending(): number;
}

export function manualClock(start = 0): ManualClock {
  let now = start;
  let next = 1;
  const timers = new Map<number, { at: number; callback: () => void }>();
  return {
    now: () => now,
    setTimeout(callback, ms) {
      const handle = next++;
      timers.set(handle, { at: now + Math.max(0, ms), callback });
      return handle;
    },
    clearTimeout(handle) {
      timers.delete(handle as number);
    },
    advance(ms) {
      const target = now + ms;
      for (;;) {
        let earliest: [number, { at: number; callback: () => void }] | undefined;
        for (const entry of timers) if (entry[1].at <= target && (earliest === undefined || entry[1].at < earliest[1].at)) earliest = entry;
        if (earliest === undefined) break;
        timers.delete(earliest[0]);
        now = earliest[1].at;
        earliest[1].callback();
      }
      now = target;
    },
    pending: () => timers.size,
  };
}

/** A DNS server on 127.0.0.1 (UDP) that answers A queries from a function, and the names asked. */
export interface TestDnsServer {
  readonly port: number;
  /** The names queried, in order (as sent, lower-cased). */
  readonly queries: string[];
  /** A lookup function for http.request / net.connect that asks only this server (see loopbackLookup). */
  readonly lookup: LookupFunction;
  close(): Promise<void>;
}

/**
 * Starts a DNS server for tests (RFC 1035 §4.1 message format): each query for `name` is
 * answered with `answer(name, index)` — an IPv4 address as one A record (TTL 0, so that no
 * resolver keeps it), or undefined for NXDOMAIN (RCODE 3, "name error"). Queries of another type
 * than A get an empty NOERROR answer. Only ever asked through {@link TestDnsServer.lookup}, so no
 * name leaves the machine.
 */
export async function startDnsServer(answer: (name: string, index: number) => string | undefined): Promise<TestDnsServer> {
  const queries: string[] = [];
  const socket = createSocket('udp4');
  socket.on('message', (query, peer) => {
    // Header: ID, flags, QDCOUNT, ANCOUNT, NSCOUNT, ARCOUNT (16 bits each); then the question: QNAME as labels, QTYPE, QCLASS.
    if (query.length < 12 || query.readUInt16BE(4) !== 1) return;
    let at = 12;
    const labels: string[] = [];
    while (at < query.length && query[at] !== 0) {
      labels.push(query.subarray(at + 1, at + 1 + query[at]).toString('latin1'));
      at += 1 + query[at];
    }
    const questionEnd = at + 5; // the zero octet, QTYPE, QCLASS
    if (questionEnd > query.length) return;
    const name = labels.join('.').toLowerCase();
    const type = query.readUInt16BE(at + 1);
    const index = queries.push(name) - 1;
    const address = type === 1 ? answer(name, index) : undefined;
    const header = Buffer.alloc(12);
    header.writeUInt16BE(query.readUInt16BE(0), 0); // ID
    // QR = 1, the query's opcode and RD, AA = 1, RA = 1; RCODE 3 (name error) when there is no address for an A query.
    header.writeUInt16BE(0x8000 | (query.readUInt16BE(2) & 0x7900) | 0x0400 | 0x0080 | (type === 1 && address === undefined ? 3 : 0), 2);
    header.writeUInt16BE(1, 4); // QDCOUNT
    header.writeUInt16BE(address === undefined ? 0 : 1, 6); // ANCOUNT
    const parts = [header, query.subarray(12, questionEnd)];
    if (address !== undefined) {
      const record = Buffer.alloc(16);
      record.writeUInt16BE(0xc00c, 0); // NAME: a pointer to the question's name at offset 12 (§4.1.4)
      record.writeUInt16BE(1, 2); // TYPE A
      record.writeUInt16BE(1, 4); // CLASS IN
      record.writeUInt32BE(0, 6); // TTL
      record.writeUInt16BE(4, 10); // RDLENGTH
      address.split('.').forEach((octet, k) => record.writeUInt8(Number(octet), 12 + k));
      parts.push(record);
    }
    socket.send(Buffer.concat(parts), peer.port, peer.address);
  });
  await new Promise<void>((resolve) => socket.bind(0, '127.0.0.1', resolve));
  const { port } = socket.address();
  const resolver = new Resolver({ timeout: 2000, tries: 2 });
  resolver.setServers([`127.0.0.1:${port}`]);
  return {
    port,
    queries,
    lookup: loopbackLookup(resolver),
    close: () =>
      new Promise<void>((resolve) => {
        resolver.cancel();
        socket.close(() => resolve());
      }),
  };
}

/**
 * A lookup function (the signature of dns.lookup, as http.request's `lookup` option calls it:
 * one address, or all of them with `options.all`) that asks `resolver` for A records only.
 * Its errors are the resolver's own (code ENOTFOUND for NXDOMAIN, syscall queryA).
 */
export function loopbackLookup(resolver: Resolver): LookupFunction {
  return (hostname, options, callback) => {
    resolver.resolve4(hostname, (error, addresses) => {
      if (error !== null) callback(error, '', 4);
      else if (options.all === true) callback(null, addresses.map((address) => ({ address, family: 4 })));
      else callback(null, addresses[0], 4);
    });
  };
}
