import { randomBytes } from 'node:crypto';
import type { SequencedSample, Store } from '../../store/index.ts';
import { STREAM_PATTERN } from './sampleMessage.ts';
import type { Log } from '../../domain/log.ts';

/**
 * The site's database as the queue of samples to publish (an outbox): nothing is held in memory
 * but a page of the next samples. Per camera it keeps three sequence numbers (src/store/sequence.ts):
 *
 * - `confirmed`: the collector's last ack (ackMessage.ts): everything up to it is stored centrally;
 * - `next`: the next number to hand to MQTT;
 * - `last`: the last number the database gave (read as pages run dry).
 *
 * Sending again ("replay") sets `next` back to `confirmed + 1`; the collector ignores what it
 * already holds, so a replay costs messages, never double counts. A camera is replayed
 * - after a reconnection to the broker (what was in flight may be lost);
 * - when an ack arrives that does not cover samples sent more than `graceMs` ago (the collector
 *   restarted, or the broker dropped messages from its queue: it acknowledges what it has);
 * - when no ack has advanced for `afterMs` while samples are unconfirmed (the collector is away or
 *   its acks are lost); this wait doubles after each such replay, up to `maxMs`, and is reset by
 *   progress, so an absent collector costs one replay every `maxMs` at most.
 * Only cameras that have been acknowledged at least once are replayed: a site without a collector
 * (e.g. publishing to a home automation system only) publishes each sample once, as before.
 *
 * The acks are remembered in the site's settings (`mqtt.confirmed`), so a restarted site
 * continues where the collector stands even when the broker lost its retained messages. The
 * stream id (`mqtt.stream`, made once per database) tells a collector that a site started over
 * with a new database, whose numbers begin again at 1.
 */

/** What the outbox needs of the store. */
export type OutboxStore = Pick<Store, 'samplesAfter' | 'sequenceRange' | 'listCameras' | 'getSetting' | 'setSetting'>;

export interface ReplayTiming {
  /** An ack that leaves samples sent this long ago unconfirmed starts a replay, ms; default 5000. */
  readonly graceMs?: number;
  /** With samples unconfirmed and no ack advancing for this long, replay, ms; default 30 000. */
  readonly afterMs?: number;
  /** Longest wait between replays without progress, ms; default 300 000. */
  readonly maxMs?: number;
}

export interface OutboxStats {
  /** Samples in the database not yet handed to MQTT (from next to last). */
  readonly waiting: number;
  /** Samples numbered but not confirmed by a collector (cameras with an ack only). */
  readonly unconfirmed: number;
  /** Replays started. */
  readonly replays: number;
}

export interface SampleOutbox {
  readonly stream: string;
  /**
   * The next sample to send (its camera's `next` moves past it), or undefined when all are sent;
   * `gap` when the numbers before it up to the one expected are no longer stored.
   */
  take(): (SequencedSample & { gap?: [number, number] }) | undefined;
  /** A sample of `camera` was committed: there is more to read. */
  committed(camera: string): void;
  /** An ack arrived for `camera`; returns whether a replay started. */
  acknowledge(camera: string, ack: { stream: string; seq: number }, now: number): boolean;
  /** Connected (again) to the broker: replay every acknowledged camera. */
  reconnected(now: number): void;
  /** Call every second or so: replays cameras whose acks stalled. */
  tick(now: number): void;
  stats(): OutboxStats;
  /** Writes the confirmed numbers to the settings now (also done at most once a second by itself). */
  save(): void;
}

interface Cursor {
  confirmed: number;
  acked: boolean;
  next: number;
  last: number;
  /** Read from the store, not yet taken. */
  page: SequencedSample[];
  /** More may be stored beyond what was read. */
  more: boolean;
  /** When the camera was last fully confirmed or its ack advanced, or a replay started. */
  progressAt: number;
  /** When the first sample above `confirmed` was handed to MQTT since then (undefined: none). */
  sentAt?: number;
  replayWaitMs: number;
}

export const SettingKeys = { stream: 'mqtt.stream', confirmed: 'mqtt.confirmed' } as const;

const PAGE = 500;

export function createSampleOutbox(store: OutboxStore, options: { replay?: ReplayTiming; clock?: () => number; log?: Log } = {}): SampleOutbox {
  const { replay = {}, clock = Date.now, log = () => {} } = options;
  const { graceMs = 5000, afterMs = 30_000, maxMs = 300_000 } = replay;
  const known = store.getSetting(SettingKeys.stream);
  const stream = typeof known === 'string' && STREAM_PATTERN.test(known) ? known : randomBytes(8).toString('hex');
  if (stream !== known) store.setSetting(SettingKeys.stream, stream);
  const saved = store.getSetting(SettingKeys.confirmed) as { stream?: unknown; cameras?: Record<string, unknown> } | undefined;
  const savedCameras = saved && saved.stream === stream && typeof saved.cameras === 'object' && saved.cameras !== null ? saved.cameras : {};
  const cursors = new Map<string, Cursor>();
  const order: string[] = [];
  let turn = 0;
  let replays = 0;
  let dirty = false;
  let saveTimer: NodeJS.Timeout | undefined;

  function cursor(camera: string): Cursor {
    let c = cursors.get(camera);
    if (c) return c;
    const { last } = store.sequenceRange(camera);
    const stored = savedCameras[camera];
    const confirmed = typeof stored === 'number' && Number.isSafeInteger(stored) && stored >= 0 && stored <= last ? stored : undefined;
    // Acknowledged before: continue from the ack (replaying what was not confirmed). Never
    // acknowledged: from now on, so that a site without a collector does not flood the broker.
    c = { confirmed: confirmed ?? 0, acked: confirmed !== undefined, next: (confirmed ?? last) + 1, last, page: [], more: confirmed !== undefined && confirmed < last, progressAt: clock(), replayWaitMs: afterMs };
    cursors.set(camera, c);
    order.push(camera);
    return c;
  }
  for (const cam of store.listCameras()) cursor(cam.id);

  function startReplay(camera: string, c: Cursor, now: number, why: string): void {
    if (c.next <= c.confirmed + 1) return;
    const n = c.next - c.confirmed - 1;
    if (replays < 5 || Number.isInteger(Math.log10(replays + 1))) log(`mqtt: sending ${n} unconfirmed samples of ${camera} again (${why})`);
    replays++;
    c.next = c.confirmed + 1;
    c.page = [];
    c.more = true;
    c.progressAt = now;
    c.sentAt = undefined;
  }

  function scheduleSave(): void {
    dirty = true;
    if (saveTimer) return;
    saveTimer = setTimeout(() => {
      saveTimer = undefined;
      save();
    }, 1000);
    saveTimer.unref();
  }

  function save(): void {
    if (!dirty) return;
    dirty = false;
    const cameras: Record<string, number> = {};
    for (const [camera, c] of cursors) if (c.acked) cameras[camera] = c.confirmed;
    try {
      store.setSetting(SettingKeys.confirmed, { stream, cameras });
    } catch (error) {
      log(`mqtt: cannot remember the collector's acks (${(error as Error).message}); they are asked for again after a restart`, 'warn');
    }
  }

  return {
    stream,
    take() {
      for (let k = 0; k < order.length; k++) {
        const camera = order[(turn + k) % order.length];
        const c = cursors.get(camera)!;
        if (c.page.length === 0 && c.more) {
          c.page = store.samplesAfter(camera, c.next - 1, PAGE);
          c.more = c.page.length === PAGE;
          if (c.page.length > 0) c.last = Math.max(c.last, c.page[c.page.length - 1].seq);
        }
        const s = c.page.shift();
        if (s === undefined) continue;
        turn = (turn + k + 1) % order.length;
        const gap: [number, number] | undefined = s.seq > c.next ? [c.next, s.seq - 1] : undefined;
        c.next = s.seq + 1;
        if (c.sentAt === undefined && s.seq > c.confirmed) c.sentAt = clock();
        return gap ? { ...s, gap } : s;
      }
      return undefined;
    },
    committed(camera) {
      const c = cursor(camera);
      c.more = true;
    },
    acknowledge(camera, ack, now) {
      if (ack.stream !== stream) return false;
      const c = cursor(camera);
      if (ack.seq > c.last) {
        // More than this database ever numbered: not an ack of ours (a restored backup?). Ignored.
        log(`mqtt: the collector confirms ${ack.seq} samples of ${camera}, more than the ${c.last} numbered here; ignored`, 'warn');
        return false;
      }
      c.acked = true;
      if (ack.seq > c.confirmed) {
        c.confirmed = ack.seq;
        c.progressAt = now;
        c.replayWaitMs = afterMs;
        c.sentAt = c.next - 1 > c.confirmed ? now : undefined;
        if (c.next <= c.confirmed) {
          c.next = c.confirmed + 1;
          c.page = [];
          c.more = true;
        }
        scheduleSave();
        return false;
      }
      if (ack.seq < c.confirmed) {
        // The collector holds less than it confirmed before (its database was restored from a backup?): send again from there.
        log(`mqtt: the collector now confirms ${ack.seq} samples of ${camera}, fewer than the ${c.confirmed} before; sending the rest again`, 'warn');
        c.confirmed = ack.seq;
        scheduleSave();
        startReplay(camera, c, now, 'the collector lost samples');
        return true;
      }
      if (c.next - 1 > c.confirmed && c.sentAt !== undefined && now - c.sentAt >= graceMs) {
        startReplay(camera, c, now, 'the collector has not confirmed them');
        return true;
      }
      return false;
    },
    reconnected(now) {
      for (const [camera, c] of cursors) if (c.acked) startReplay(camera, c, now, 'reconnected');
    },
    tick(now) {
      for (const [camera, c] of cursors) {
        if (!c.acked || c.next - 1 <= c.confirmed || now - c.progressAt < c.replayWaitMs) continue;
        startReplay(camera, c, now, `no confirmation for ${Math.round((now - c.progressAt) / 1000)} s`);
        c.replayWaitMs = Math.min(maxMs, c.replayWaitMs * 2);
      }
    },
    stats() {
      let waiting = 0;
      let unconfirmed = 0;
      for (const [camera, c] of cursors) {
        // Read here, not only with the pages: samples committed since the last page count too.
        c.last = Math.max(c.last, store.sequenceRange(camera).last);
        waiting += Math.max(0, c.last - c.next + 1);
        if (c.acked) unconfirmed += Math.max(0, c.last - c.confirmed);
      }
      return { waiting, unconfirmed, replays };
    },
    save() {
      if (saveTimer) clearTimeout(saveTimer);
      saveTimer = undefined;
      save();
    },
  };
}
