import { hostname } from 'node:os';
import type { CameraLive, ZoneLive } from '../../counting/cameraPipeline.ts';
import type { Zone, ZoneKind } from '../../domain/zone.ts';
import type { BackoffOptions } from '../../frames/live/backoff.ts';
import { EventType, type Sample } from '../../store/index.ts';
import { checkEpochMs, checkId, checkOneOf } from '../../store/validate.ts';
import { connectMqtt, type MqttConnection } from './connectMqtt.ts';
import type { MqttQos, MqttSettings } from './mqttSettings.ts';
import type { AckMessage } from './ackMessage.ts';
import type { CollectorStore, SampleOutcome } from '../../store/collectorStore.ts';
import { parseSampleMessage, type SampleMessage } from './sampleMessage.ts';
import { ackTopic, collectorCameraId, collectorFilters, parseTopic, SITE_ID_PATTERN, stateTopic, topicSegment } from './topics.ts';
import { ZoneStateName, type ZoneStateMessage } from './zoneState.ts';
import type { Log } from '../../domain/log.ts';

/**
 * The collector: subscribes to the samples, states and events of every site under the topic
 * prefix and keeps them in one Residuum database, so that `residuum export` and the dashboard
 * work on many sites at once.
 *
 * Camera ids: camera `door` of site `riverside` is stored as `riverside--door` (collectorCameraId
 * in topics.ts: site ids never contain `--`; over-long pairs are shortened with a hash), named
 * `door (riverside)`. Zones keep their ids. The collector does not know a zone's polygon: it
 * stores the whole frame as the polygon, the kind from the sample (count → room, fill → shelf),
 * the creation time sent with the sample (else the start of its first sample), and the name and
 * capacity from the zone's state messages.
 *
 * Exactly the publisher's samples: QoS ≥ 1 may deliver a sample twice, a reconnect or a refill
 * from the publisher's database may send it again, and messages may come out of order. The
 * store refuses a sample whose interval overlaps a stored one; before inserting, the collector
 * looks for a stored sample of the zone with the same `time`: the same interval, value, kind and
 * quality is a duplicate (ignored, counted), anything else a conflict (refused, counted, logged).
 * An older sample that overlaps nothing is simply inserted: order does not matter, and the
 * rollups (exact integer sums) come out the same in any order.
 *
 * Samples are written in batches (up to `batchSize`, at most `batchMs` after the first one
 * arrived), one transaction each. Confirmation: a sample with a sequence number (`seq`, `stream`;
 * see sampleOutbox.ts) counts as held once its batch is committed, stored or found already
 * stored. Per camera and stream the collector keeps the highest number up to which it holds every
 * sample (its cursor, saved in the settings as `collector.seq.<camera id>` after each batch and
 * before any ack announces it) and the numbers it holds
 * above it (a gap: some are missing), and publishes the cursor, retained, on
 * `<prefix>/<site>/<camera>/ack` after each batch and every `ackRefreshMs`; the site sends again
 * whatever stays unconfirmed. A sample at or below the cursor is a duplicate without looking at
 * the database.
 *
 * Session: the collector connects with a fixed client id and clean session off (MQTT 3.1.1
 * §3.1.2.4), so the broker keeps its subscriptions and queues QoS 1 and 2 messages while it is
 * away; it subscribes again on every connection in case the broker lost the session.
 */

export interface CollectorOptions {
  readonly store: CollectorStore;
  /** Most samples written in one transaction, 1..100 000; default 1000. */
  readonly batchSize?: number;
  /** Longest a received sample waits for its batch to be written, ms; default 100. */
  readonly batchMs?: number;
  /** Every camera's ack is published again this often, ms; default 10 000. */
  readonly ackRefreshMs?: number;
  /** A site announced offline (its will) whose status is not back `online` within this time gets its zone states set `offline`, ms; default 5000. */
  readonly offlineGraceMs?: number;
  /** Log lines. Default: none. */
  readonly log?: Log;
  /** Reconnection delays; default 1 s doubling to 60 s with full jitter. */
  readonly backoff?: BackoffOptions;
}

export interface CollectorStats {
  readonly connected: boolean;
  /** Whether the broker granted every subscription on the current connection. */
  readonly subscribed: boolean;
  /** Samples inserted into the store. */
  readonly samplesStored: number;
  /** Samples that were already stored, identical: ignored. */
  readonly duplicates: number;
  /** Samples refused because a different sample covers (part of) their interval. */
  readonly conflicts: number;
  /** Messages that could not be read or stored (malformed, wrong kind for the zone, …). */
  readonly rejected: number;
  readonly eventsStored: number;
  readonly eventDuplicates: number;
  /** State messages received. */
  readonly states: number;
  /** Batches written. */
  readonly batches: number;
  /** Samples the sites said they no longer hold (pruned before a collector confirmed them). */
  readonly samplesLost: number;
  /** Over all cameras: numbered samples missing below the highest one received (a gap waiting to be filled). */
  readonly samplesMissing: number;
  /** Samples received and not yet written. */
  readonly pendingSamples: number;
}

export interface Collector {
  readonly connected: boolean;
  /** Cameras as their last state messages describe them (ids as stored: `site--camera`). */
  live(): CameraLive[];
  stats(): CollectorStats;
  /** Unsubscribes nothing (the session keeps queuing for the next start) and disconnects. */
  stop(): Promise<void>;
}

/** The polygon stored for a collected zone, whose real shape only the counting site knows: the whole frame. */
export const WHOLE_FRAME: Zone['polygon'] = [
  [0, 0],
  [1, 0],
  [1, 1],
  [0, 1],
];

interface CollectedCamera {
  site: string;
  name: string;
  readonly zones: Map<string, ZoneStateMessage>;
}

/** Connects, subscribes and stores what arrives until `stop()`. */
interface SequenceCursor {
  stream: string;
  /** Every sample numbered 1..seq is held. */
  seq: number;
  /** The cursor as last saved in the store: acks never say more than this. */
  saved: number;
  /** Held numbers above seq. */
  readonly above: Set<number>;
  /** Highest number received. */
  received: number;
  site: string;
  camera: string;
  /** Changed since the last ack / since it was last saved. */
  unacked: boolean;
  unsaved: boolean;
}

interface Pending {
  readonly sample: Sample;
  readonly message: SampleMessage;
  readonly cameraId: string;
}

export function startCollector(settings: MqttSettings, options: CollectorOptions): Collector {
  const { store, log = () => {}, backoff, batchSize = 1000, batchMs = 100, ackRefreshMs = 10_000, offlineGraceMs = 5000 } = options;
  const offlineTimers = new Map<string, NodeJS.Timeout>();
  if (!(Number.isInteger(batchSize) && batchSize >= 1 && batchSize <= 100_000)) throw new RangeError(`batchSize: expected a whole number in 1..100000, got ${String(batchSize)}`);
  const prefix = settings.topicPrefix;
  const filters = collectorFilters(prefix);
  const sampleQos: MqttQos = settings.qos === 0 ? 1 : settings.qos;
  const known = new Set<string>();
  const cameras = new Map<string, CollectedCamera>();
  const offlineSites = new Set<string>();
  const count = { samplesStored: 0, duplicates: 0, conflicts: 0, rejected: 0, eventsStored: 0, eventDuplicates: 0, states: 0, batches: 0, samplesLost: 0 };
  const cursors = new Map<string, SequenceCursor>();
  let pending: Pending[] = [];
  let flushTimer: NodeJS.Timeout | undefined;
  let stopped = false;
  const complaints = new Map<string, number>();
  let subscribed = false;

  /** Logs the 1st–5th, 10th, 100th, … complaint of a kind, so a flood of bad messages does not flood the log. */
  function complain(kind: string, line: string): void {
    const n = (complaints.get(kind) ?? 0) + 1;
    complaints.set(kind, n);
    if (n <= 5 || Number.isInteger(Math.log10(n))) log(`collect: ${line}${n > 5 ? ` (${n} so far)` : ''}`, 'warn');
  }

  const connection: MqttConnection = connectMqtt(settings, {
    clientId: settings.clientId ?? `residuum-collector-${topicSegment(hostname())}`.slice(0, 64),
    clean: false,
    ...(settings.sessionExpirySeconds !== undefined && { sessionExpirySeconds: settings.sessionExpirySeconds }),
    ...(backoff && { backoff }),
    log,
    onClose() {
      subscribed = false;
    },
    onConnect() {
      subscribed = false;
      for (const c of cursors.values()) c.unacked = true;
      publishAcks();
      client.subscribe(
        { [filters.samples]: { qos: sampleQos }, [filters.state]: { qos: settings.qos }, [filters.events]: { qos: settings.qos }, [filters.status]: { qos: settings.qos } },
        (error, granted) => {
          if (error) log(`collect: could not subscribe (${error.message})`, 'error');
          for (const g of granted ?? []) if (g.qos === 128) log(`collect: the broker refused the subscription to ${g.topic}`, 'error');
          subscribed = !error && (granted ?? []).every((g) => g.qos !== 128);
        },
      );
    },
  });
  const client = connection.client;

  client.on('message', (topic, payload) => {
    const parsed = parseTopic(prefix, topic);
    if (parsed === undefined) return;
    try {
      if (!SITE_ID_PATTERN.test(parsed.site)) throw new RangeError(`topic: "${parsed.site}" is not a site id`);
      switch (parsed.kind) {
        case 'samples':
          onSample(parseSampleMessage(parsed, payload));
          break;
        case 'state':
          onState(parsed.site, parsed.camera, parsed.zone, payload);
          break;
        case 'events':
          onEvent(parsed.site, parsed.camera, payload);
          break;
        case 'status':
          onStatus(parsed.site, payload);
          break;
      }
    } catch (error) {
      count.rejected++;
      complain('rejected', `refused a message on ${topic}: ${(error as Error).message}`);
    }
  });

  function ensureCamera(site: string, camera: string, time: number): string {
    const id = collectorCameraId(site, camera);
    if (!known.has(id)) {
      if (store.getCamera(id) === undefined) store.upsertCamera({ id, name: cameras.get(id)?.name ?? `${camera} (${site})` }, { time });
      known.add(id);
    }
    return id;
  }

  function ensureZone(site: string, camera: string, zone: string, kind: ZoneKind, time: number): string {
    const id = ensureCamera(site, camera, time);
    const key = `${id}/${zone}`;
    if (known.has(key)) return id;
    const record = store.getZone(id, zone);
    if (record === undefined) {
      const state = cameras.get(id)?.zones.get(zone);
      store.upsertZone(id, { id: zone, kind, polygon: WHOLE_FRAME, ...zoneDetails(state) }, { time });
    } else if (record.zone.kind !== kind) {
      throw new RangeError(`zone ${key} is stored as a ${record.zone.kind} zone and cannot take samples of a ${kind} zone`);
    } else if (record.removed !== null) {
      store.upsertZone(id, record.zone);
    }
    known.add(key);
    return id;
  }

  function zoneDetails(state: ZoneStateMessage | undefined): Partial<Zone> {
    if (state === undefined) return {};
    const name = typeof state.zoneName === 'string' && state.zoneName.length >= 1 && state.zoneName.length <= 200 ? state.zoneName : undefined;
    const capacity = Number.isInteger(state.capacity) && (state.capacity as number) >= 0 && (state.capacity as number) <= 1_000_000 ? state.capacity : undefined;
    return { ...(name !== undefined && name !== state.zone && { name }), ...(capacity !== undefined && { capacity }) };
  }

  /** The camera's sequence cursor for the message's stream (a new stream starts over at 0). */
  function cursorOf(cameraId: string, m: SampleMessage): SequenceCursor {
    let c = cursors.get(cameraId);
    if (c === undefined) {
      const saved = store.getSetting(`collector.seq.${cameraId}`) as { stream?: unknown; seq?: unknown } | undefined;
      const seq = saved && saved.stream === m.stream && Number.isSafeInteger(saved.seq) ? (saved.seq as number) : 0;
      c = { stream: m.stream!, seq, saved: seq, above: new Set(), received: seq, site: m.site, camera: m.camera, unacked: true, unsaved: false };
      cursors.set(cameraId, c);
    } else if (c.stream !== m.stream) {
      log(`collect: ${m.site}/${m.camera} numbers its samples in a new stream ${m.stream} (was ${c.stream}): its database was replaced; confirming from 0`, 'warn');
      c.stream = m.stream!;
      c.seq = 0;
      c.saved = 0;
      c.received = 0;
      c.above.clear();
      c.unacked = c.unsaved = true;
    }
    return c;
  }

  /** Marks `seq` as held and moves the cursor over every contiguous held number. */
  function hold(c: SequenceCursor, seq: number): void {
    if (seq <= c.seq) return;
    c.above.add(seq);
    while (c.above.delete(c.seq + 1)) c.seq++;
    c.unacked = c.unsaved = true;
  }

  function onSample(m: SampleMessage): void {
    const camera = ensureZone(m.site, m.camera, m.zone, m.zoneKind, m.zoneCreated ?? m.time - m.intervalMs);
    if (m.seq !== undefined) {
      const c = cursorOf(camera, m);
      c.received = Math.max(c.received, m.seq);
      if (m.gap && m.gap[0] <= c.seq + 1 && m.gap[1] > c.seq) {
        // The site no longer has these: they cannot come. Counted, logged, and not waited for.
        const lost = m.gap[1] - c.seq - [...c.above].filter((n) => n <= m.gap![1]).length;
        count.samplesLost += lost;
        complain('lost', `${m.site}/${m.camera}: the site no longer holds samples ${c.seq + 1}..${m.gap[1]} (pruned before they were confirmed); ${lost} not collected`);
        for (let n = c.seq + 1; n <= m.gap[1]; n++) c.above.add(n);
        hold(c, m.gap[1]);
      }
      if (m.seq <= c.seq || c.above.has(m.seq)) {
        count.duplicates++;
        c.unacked = true;
        if (flushTimer === undefined) flushTimer = setTimeout(flush, batchMs);
        return;
      }
    }
    const sample: Sample = { time: m.time, camera, zone: m.zone, value: m.value, kind: m.kind, intervalMs: m.intervalMs, quality: m.quality };
    pending.push({ sample, message: m, cameraId: camera });
    if (pending.length >= batchSize) flush();
    else if (flushTimer === undefined) flushTimer = setTimeout(flush, batchMs);
  }

  /** Writes the pending samples in one transaction, then confirms them. */
  function flush(): void {
    if (flushTimer) clearTimeout(flushTimer);
    flushTimer = undefined;
    if (pending.length === 0) {
      publishAcks();
      return;
    }
    const batch = pending;
    pending = [];
    let outcomes: (SampleOutcome | undefined)[];
    try {
      outcomes = store.storeSamples(batch.map((p) => p.sample));
    } catch (error) {
      // Nothing of the batch was written (one transaction). A sample the store refuses (RangeError,
      // TypeError: it names the field) would fail every batch it is in: store them one by one.
      // Anything else (the database is away) leaves them all unconfirmed: the sites send them again.
      if (!isRefusal(error)) {
        count.rejected += batch.length;
        complain('store', `could not store ${batch.length} samples (${(error as Error).message}); they stay unconfirmed`);
        return;
      }
      outcomes = [];
      for (const p of batch) {
        try {
          outcomes.push(store.storeSamples([p.sample])[0]);
        } catch (one) {
          if (!isRefusal(one)) {
            complain('store', `could not store samples (${(one as Error).message}); they stay unconfirmed`);
            return;
          }
          count.rejected++;
          complain('refused', `the store refused sample ${p.message.site}/${p.message.id}: ${(one as Error).message}`);
          outcomes.push(undefined);
        }
      }
    }
    count.batches++;
    batch.forEach((p, i) => {
      const o = outcomes[i];
      const m = p.message;
      // Refused for good (counted and logged above): held, since sending it again cannot change that.
      if (o === undefined) {
        const c = cursors.get(p.cameraId);
        if (m.seq !== undefined && c && c.stream === m.stream) hold(c, m.seq);
        return;
      }
      if (o.outcome === 'stored') count.samplesStored++;
      else if (o.outcome === 'duplicate') count.duplicates++;
      else if (o.outcome === 'conflict') {
        count.conflicts++;
        const clash = o.stored;
        complain('conflict', `sample ${m.site}/${m.id} (value ${m.value} over ${m.intervalMs} ms) conflicts with the stored one ending ${new Date(clash.time).toISOString()} (value ${clash.value} over ${clash.intervalMs} ms); kept the stored one`);
      }
      // A conflict is held too: the central store keeps the sample it had, and asking again would not change that.
      if (m.seq !== undefined) {
        const c = cursors.get(p.cameraId);
        if (c && c.stream === m.stream) hold(c, m.seq);
      }
    });
    // Saved before it is announced: a collector killed right after an ack still knows what it confirmed.
    saveCursors();
    publishAcks();
  }

  /** Publishes the cursor of every camera that changed (all of them with `all`), retained. */
  function publishAcks(all = false): void {
    if (!connection.connected) return;
    const time = new Date().toISOString();
    for (const c of cursors.values()) {
      if (!c.unacked && !all) continue;
      c.unacked = false;
      const ack: AckMessage = { stream: c.stream, seq: c.saved, received: c.received, time };
      client.publish(ackTopic(prefix, c.site, c.camera), JSON.stringify(ack), { qos: 1, retain: true }, () => {});
    }
  }

  /** Remembers the cursors, so that a restarted collector does not ask for everything again. */
  function saveCursors(): void {
    for (const [id, c] of cursors) {
      if (!c.unsaved) continue;
      try {
        store.setSetting(`collector.seq.${id}`, { stream: c.stream, seq: c.seq });
        c.saved = c.seq;
        c.unsaved = false;
      } catch (error) {
        complain('store', `could not save the sequence cursor of ${id} (${(error as Error).message})`);
      }
    }
  }
  const housekeeping = setInterval(() => {
    saveCursors();
    publishAcks(true);
  }, ackRefreshMs);
  housekeeping.unref();

  function onState(site: string, camera: string, zone: string, payload: Uint8Array): void {
    const id = collectorCameraId(site, checkId(camera, 'topic camera'));
    checkId(zone, 'topic zone');
    const entry = cameras.get(id) ?? { site, name: `${camera} (${site})`, zones: new Map<string, ZoneStateMessage>() };
    cameras.set(id, entry);
    if (payload.length === 0) {
      entry.zones.delete(zone);
      return;
    }
    const m = readJson(payload) as Partial<ZoneStateMessage>;
    if (m.camera !== camera || m.zone !== zone) throw new RangeError(`message: camera/zone ${String(m.camera)}/${String(m.zone)} is not the topic's ${camera}/${zone}`);
    checkOneOf(m.state, 'message.state', ZoneStateName);
    if (m.kind !== 'room' && m.kind !== 'shelf') throw new RangeError(`message.kind: expected 'room' or 'shelf', got ${JSON.stringify(m.kind)}`);
    count.states++;
    const state = m as ZoneStateMessage;
    entry.zones.set(zone, state);
    if (typeof state.cameraName === 'string' && state.cameraName.length > 0 && state.cameraName.length <= 180) {
      const name = `${state.cameraName} (${site})`;
      if (name !== entry.name) {
        entry.name = name;
        if (store.getCamera(id) !== undefined) store.upsertCamera({ id, name });
      }
    }
    const record = store.getZone(id, zone);
    if (record !== undefined && record.zone.kind === state.kind) {
      const { name: _oldName, capacity: _oldCapacity, ...rest } = record.zone;
      const next: Zone = { ...rest, ...zoneDetails(state) };
      if (next.name !== record.zone.name || next.capacity !== record.zone.capacity) store.upsertZone(id, next);
    }
  }

  function onEvent(site: string, camera: string, payload: Uint8Array): void {
    const m = readJson(payload) as Record<string, unknown>;
    if (m.site !== site || m.camera !== camera) throw new RangeError(`message: site/camera ${String(m.site)}/${String(m.camera)} is not the topic's ${site}/${camera}`);
    const time = checkEpochMs(m.time, 'message.time');
    const type = checkOneOf(m.type, 'message.type', EventType);
    const zone = m.zone == null ? null : checkId(m.zone, 'message.zone');
    const id = ensureCamera(site, checkId(camera, 'message.camera'), time);
    // An event of a zone not stored yet (no sample of it arrived) is kept on the camera: { zone, detail }.
    const zoneKnown = zone !== null && store.getZone(id, zone) !== undefined;
    const detail = zone !== null && !zoneKnown ? { zone, detail: m.detail ?? {} } : (m.detail ?? {});
    const storedZone = zoneKnown ? zone : null;
    const text = JSON.stringify(detail);
    if (store.listEvents({ from: time, to: time + 1, camera: id, type }).some((e) => e.zone === storedZone && JSON.stringify(e.detail) === text)) {
      count.eventDuplicates++;
      return;
    }
    store.insertEvent({ time, camera: id, zone: storedZone, type, detail });
    count.eventsStored++;
  }

  function onStatus(site: string, payload: Uint8Array): void {
    if (payload.length === 0) return;
    const m = readJson(payload) as { state?: unknown };
    if (m.state === 'offline') {
      offlineSites.add(site);
      // After a grace: a site that reconnects at once sends its states itself, and ours must not overwrite them.
      if (!offlineTimers.has(site)) {
        const timer = setTimeout(() => {
          offlineTimers.delete(site);
          if (offlineSites.has(site)) markSiteOffline(site);
        }, offlineGraceMs);
        timer.unref();
        offlineTimers.set(site, timer);
      }
    } else if (m.state === 'online') {
      offlineSites.delete(site);
      clearTimeout(offlineTimers.get(site));
      offlineTimers.delete(site);
    }
  }

  /**
   * A site that died (its will said `offline`) cannot take back its retained zone states, which
   * would go on showing its last counts to every new subscriber. The collector does it for it: each
   * zone state it holds of that site that is not `offline` yet is published again, retained, as
   * `offline` with no value (as the site itself does when it stops). The site sends its real states
   * again as soon as it is back.
   */
  function markSiteOffline(site: string): void {
    if (!connection.connected) return;
    const time = new Date().toISOString();
    for (const entry of cameras.values()) {
      if (entry.site !== site) continue;
      for (const [zone, state] of entry.zones) {
        if (state.state === ZoneStateName.offline) continue;
        const offline: ZoneStateMessage = { ...state, ...(state.kind === 'shelf' ? { fill: null } : { count: null }), state: ZoneStateName.offline, time };
        entry.zones.set(zone, offline);
        client.publish(stateTopic(prefix, site, state.camera, zone), JSON.stringify(offline), { qos: settings.qos, retain: true }, () => {});
      }
    }
  }

  return {
    get connected() {
      return connection.connected;
    },
    live() {
      return [...cameras.entries()]
        .filter(([, c]) => c.zones.size > 0)
        .sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0))
        .map(([id, c]): CameraLive => {
          const states = [...c.zones.values()];
          const learning = states.some((s) => s.state === ZoneStateName.learning);
          const offline = offlineSites.has(c.site) || states.every((s) => s.state === ZoneStateName.offline);
          return {
            camera: id,
            name: c.name,
            state: offline ? 'offline' : learning ? 'learning' : 'online',
            viewChanged: states.some((s) => s.state === ZoneStateName.viewChanged),
            zones: states.map(
              (s): ZoneLive => ({
                id: s.zone,
                name: typeof s.zoneName === 'string' ? s.zoneName : s.zone,
                kind: s.kind,
                count: typeof s.count === 'number' ? s.count : 0,
                fill: typeof s.fill === 'number' ? s.fill : 0,
                ...(typeof s.capacity === 'number' && { capacity: s.capacity }),
              }),
            ),
          };
        });
    },
    stats() {
      let samplesMissing = 0;
      for (const c of cursors.values()) samplesMissing += c.received - c.seq - c.above.size;
      return { connected: connection.connected, subscribed, ...count, samplesMissing, pendingSamples: pending.length };
    },
    async stop() {
      if (stopped) return;
      stopped = true;
      clearInterval(housekeeping);
      for (const timer of offlineTimers.values()) clearTimeout(timer);
      flush();
      saveCursors();
      await connection.stop();
    },
  };
}

/** A store's refusal of the data itself (its messages name the field), as opposed to a failure of the database. */
function isRefusal(error: unknown): boolean {
  return error instanceof RangeError || error instanceof TypeError;
}

function readJson(payload: Uint8Array): unknown {
  let body: unknown;
  try {
    body = JSON.parse(Buffer.from(payload).toString('utf8'));
  } catch (error) {
    throw new TypeError(`message: not JSON (${(error as Error).message})`);
  }
  if (typeof body !== 'object' || body === null || Array.isArray(body)) throw new TypeError('message: expected a JSON object');
  return body;
}
