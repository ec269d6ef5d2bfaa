import { randomBytes } from 'node:crypto';
import type { CameraLive } from '../../counting/cameraPipeline.ts';
import type { BackoffOptions } from '../../frames/live/backoff.ts';
import { EventType, type EventInput, type Sample, type Store } from '../../store/index.ts';
import { checkEpochMs, checkId, checkOneOf } from '../../store/validate.ts';
import { boundedQueue } from './boundedQueue.ts';
import { connectMqtt, type MqttConnection } from './connectMqtt.ts';
import type { MqttQos, MqttSettings } from './mqttSettings.ts';
import { parseAckMessage } from './ackMessage.ts';
import { discoveryConfig } from './discovery.ts';
import { sampleMessage } from './sampleMessage.ts';
import { createSampleOutbox, type OutboxStore, type ReplayTiming, type SampleOutbox } from './sampleOutbox.ts';
import { ackTopic, eventsTopic, parseTopic, samplesTopic, siteStatusTopic, SITE_ID_PATTERN, stateTopic } from './topics.ts';
import { zoneState, ZoneStateName, type ZoneStateMessage } from './zoneState.ts';
import type { Log } from '../../domain/log.ts';

/**
 * Publishes the counting service's live states, events and stored samples to an MQTT broker
 * (topics: see topics.ts).
 *
 * The database comes first: samples and events are published only after the store has committed
 * them (see src/store/reportingStore.ts), so nothing is lost from the database when the broker is away.
 *
 * With a store that numbers its samples (a full Residuum store, src/store/sequence.ts), the
 * database itself is the queue (sampleOutbox.ts): samples are read from it in sequence order and
 * sent until a collector confirms them on `<prefix>/<site>/<camera>/ack`; unconfirmed ones are
 * sent again after a reconnection or when the acks stall. So nothing a site stored is lost
 * between it and a collector, whatever the broker drops. Without such a store, MQTT is best
 * effort:
 * - unsent samples wait in a bounded in-memory queue (`queueLimit`); when it is full the oldest is
 *   dropped and counted (`samplesDropped`). With `store` given, dropped samples are re-read from
 *   the database once the queue has drained again (`samplesBackfilled`), so a collector still
 *   gets every sample the database kept;
 * - samples go with QoS max(1, qos) and are sent again after a reconnect until the broker
 *   acknowledges them; a collector may so see a sample twice and must (and does) ignore the copy;
 * - zone states are retained and rate limited per zone: a changed state is sent at once unless
 *   the zone's last state went out less than `stateIntervalSeconds` ago (then when that time is
 *   up, the latest only); an unchanged state is sent again after `stateRefreshSeconds`. After a
 *   reconnect every zone's latest state is sent. A zone that disappears gets an empty retained
 *   message, which deletes its retained state (MQTT 3.1.1 §3.3.1.3, recalled from memory);
 * - `<prefix>/<site>/status` is retained `online` while connected; the broker publishes the will
 *   `offline` when the connection dies without a DISCONNECT, and `stop()` sends it itself.
 */

export interface MqttPublisherOptions {
  /** The site's topic level (see SITE_ID_PATTERN), e.g. `settings.site ?? siteSlug(config.site.name)`. */
  readonly site: string;
  /**
   * The store samples were written to: zones' creation times are sent with samples, and dropped
   * samples are re-read from it. A store that numbers its samples (has `samplesAfter`) is the
   * queue itself, and collectors' acks decide what is sent again.
   */
  readonly store?: Pick<Store, 'listSamples' | 'getZone'> & Partial<OutboxStore>;
  /** When unconfirmed samples are sent again (sequenced stores only); see sampleOutbox.ts. */
  readonly replay?: ReplayTiming;
  /** Log lines (never credentials, never pixels). Default: none. */
  readonly log?: Log;
  /** Clock for state and event times and state rate limits, epoch ms; default Date.now. */
  readonly clock?: () => number;
  /** Reconnection delays; default 1 s doubling to 60 s with full jitter. */
  readonly backoff?: BackoffOptions;
  /** Most messages handed to the client and not yet acknowledged, 1..10 000 inclusive; default 100. */
  readonly maxInFlight?: number;
  /** Most unsent events kept in memory, 1..100 000 inclusive; default 1000 (the oldest go first). */
  readonly eventQueueLimit?: number;
}

/** The JSON body of an event message on `<prefix>/<site>/<camera>/events`. */
export interface EventMessage {
  readonly site: string;
  readonly camera: string;
  readonly zone: string | null;
  readonly type: EventType;
  /** Epoch ms. */
  readonly time: number;
  readonly timeIso: string;
  readonly detail: unknown;
}

export interface MqttPublisherStats {
  readonly connected: boolean;
  /** Samples waiting to be sent (in memory, or with a numbering store, in the database). */
  readonly queuedSamples: number;
  /** Numbered samples a collector has not confirmed yet (0 without a numbering store or collector). */
  readonly unconfirmedSamples: number;
  /** Times unconfirmed samples were sent again. */
  readonly replays: number;
  readonly queuedEvents: number;
  /** Samples and events handed to the client, not yet acknowledged. */
  readonly inFlight: number;
  /** Samples the broker acknowledged (a sample sent again counts again). */
  readonly samplesPublished: number;
  /** Samples dropped from the full queue (still in the database). */
  readonly samplesDropped: number;
  /** Samples re-read from the store after being dropped. */
  readonly samplesBackfilled: number;
  /** Zones whose dropped samples still wait to be re-read. */
  readonly backfillPending: number;
  readonly eventsPublished: number;
  readonly eventsDropped: number;
  readonly statesPublished: number;
}

export interface MqttPublisher {
  /** Call on every pipeline 'live' event: updates (rate-limited) the retained state of each zone. */
  publishLive(live: CameraLive): void;
  /** Call after the store committed an event. */
  publishEvent(event: EventInput): void;
  /** Call after the store committed a sample. */
  publishSample(sample: Sample): void;
  stats(): MqttPublisherStats;
  /** Marks every zone and the site offline, waits (up to 5 s) for messages in flight, disconnects. */
  stop(): Promise<void>;
}

interface Outgoing {
  readonly topic: string;
  readonly payload: string;
  readonly qos: MqttQos;
  readonly sample?: { readonly camera: string; readonly zone: string; readonly time: number };
}

interface StateEntry {
  readonly topic: string;
  latest: ZoneStateMessage;
  latestKey: string;
  sentKey?: string;
  sentAt: number;
  timer?: NodeJS.Timeout;
}

/** Longest stretch of samples re-read from the store at once, ms. */
const BACKFILL_WINDOW_MS = 3_600_000;

/** Connects and returns the publisher; it reconnects by itself until `stop()`. */
export function createMqttPublisher(settings: MqttSettings, options: MqttPublisherOptions): MqttPublisher {
  const { site, store, log = () => {}, clock = Date.now, backoff, maxInFlight = 100, eventQueueLimit = 1000 } = options;
  if (typeof site !== 'string' || !SITE_ID_PATTERN.test(site)) throw new RangeError(`site: expected 1..32 letters and digits with single "-" or "_" between them, got ${JSON.stringify(site)}`);
  if (!(Number.isInteger(maxInFlight) && maxInFlight >= 1 && maxInFlight <= 10_000)) throw new RangeError(`maxInFlight: expected a whole number in 1..10000, got ${String(maxInFlight)}`);
  if (!(Number.isInteger(eventQueueLimit) && eventQueueLimit >= 1 && eventQueueLimit <= 100_000)) throw new RangeError(`eventQueueLimit: expected a whole number in 1..100000, got ${String(eventQueueLimit)}`);
  const { topicPrefix: prefix, qos } = settings;
  const sampleQos: MqttQos = qos === 0 ? 1 : qos;
  const minStateMs = settings.stateIntervalSeconds * 1000;
  const refreshStateMs = settings.stateRefreshSeconds * 1000;
  const statusTopic = siteStatusTopic(prefix, site);

  const samples = boundedQueue<Outgoing>(settings.queueLimit);
  const events = boundedQueue<Outgoing>(eventQueueLimit);
  /** Per zone, the span of sample times [from, to] (inclusive) dropped and not yet re-read. */
  const backfill = new Map<string, { camera: string; zone: string; from: number; to: number }>();
  const zoneCreated = new Map<string, number | undefined>();
  const states = new Map<string, StateEntry>();
  const cameraTopics = new Map<string, Set<string>>();
  let inFlight = 0;
  let stopped = false;
  let pumpScheduled = false;
  let warnedFull = false;
  const count = { samplesPublished: 0, samplesDropped: 0, samplesBackfilled: 0, eventsPublished: 0, eventsDropped: 0, statesPublished: 0 };
  const outbox: SampleOutbox | undefined =
    store && typeof store.samplesAfter === 'function' ? createSampleOutbox(store as OutboxStore, { ...(options.replay && { replay: options.replay }), clock, log }) : undefined;
  const ackFilter = `${prefix}/${site}/+/ack`;

  const connection: MqttConnection = connectMqtt(settings, {
    clientId: settings.clientId ?? `residuum-${site}-${randomBytes(3).toString('hex')}`,
    clean: true,
    will: { topic: statusTopic, payload: JSON.stringify({ site, state: 'offline' }), qos, retain: true },
    ...(backoff && { backoff }),
    log,
    onConnect() {
      warnedFull = false;
      raw(statusTopic, JSON.stringify({ site, state: 'online', time: new Date(clock()).toISOString() }), true);
      const now = clock();
      for (const entry of states.values()) sendState(entry, now);
      discovered.clear();
      for (const entry of states.values()) discover(entry.latest);
      if (outbox) {
        outbox.reconnected(now);
        client.subscribe(ackFilter, { qos: 1 }, (error) => {
          if (error) log(`mqtt: could not subscribe to the collector's acks (${error.message})`, 'error');
        });
      }
      pump();
    },
  });
  const client = connection.client;
  if (outbox) {
    client.on('message', (topic, payload) => {
      const parsed = parseTopic(prefix, topic);
      if (parsed?.kind !== 'ack' || parsed.site !== site || payload.length === 0) return;
      try {
        if (outbox.acknowledge(parsed.camera, parseAckMessage(payload), clock())) schedulePump();
      } catch (error) {
        log(`mqtt: ignored an ack on ${topic} (${(error as Error).message})`, 'warn');
      }
    });
  }
  const ticker = outbox
    ? setInterval(() => {
        outbox.tick(clock());
        pump();
      }, 1000)
    : undefined;
  ticker?.unref();

  /** Discovery config topics sent on this connection, by state topic. */
  const discovered = new Map<string, string>();
  function discover(state: ZoneStateMessage): void {
    if (!settings.discovery || !connection.connected) return;
    const key = stateTopic(prefix, site, state.camera, state.zone);
    const config = discoveryConfig(settings.discoveryPrefix, prefix, site, state);
    const text = JSON.stringify(config.payload);
    if (discovered.get(key) === text) return;
    discovered.set(key, text);
    raw(config.topic, text, true);
  }

  function raw(topic: string, payload: string, retain: boolean): void {
    client.publish(topic, payload, { qos, retain }, () => {});
  }

  function dropped(m: Outgoing | undefined): void {
    if (m === undefined) return;
    if (m.sample === undefined) {
      count.eventsDropped++;
      return;
    }
    count.samplesDropped++;
    if (!warnedFull) log(`mqtt: ${samples.limit} samples wait for the broker; dropping the oldest (they stay in the database${store ? ' and are sent later' : ''})`, 'warn');
    warnedFull = true;
    if (!store) return;
    const { camera, zone, time } = m.sample;
    const key = `${camera}/${zone}`;
    const span = backfill.get(key);
    if (span === undefined) backfill.set(key, { camera, zone, from: time, to: time });
    else {
      span.from = Math.min(span.from, time);
      span.to = Math.max(span.to, time);
    }
  }

  /** Moves samples of the first pending span from the store into the (empty) queue. */
  function refill(): void {
    if (!store) return;
    for (const [key, span] of backfill) {
      const end = Math.min(span.to + 1, span.from + BACKFILL_WINDOW_MS);
      let page;
      try {
        page = store.listSamples({ camera: span.camera, zone: span.zone, from: span.from, to: end });
      } catch (error) {
        log(`mqtt: cannot re-read samples of ${key} (${(error as Error).message}); they stay in the database only`, 'error');
        backfill.delete(key);
        continue;
      }
      const room = samples.limit - samples.length;
      const taken = page.slice(0, room);
      for (const s of taken) samples.push(sampleOutgoing(s));
      count.samplesBackfilled += taken.length;
      span.from = taken.length < page.length ? taken[taken.length - 1].time + 1 : end;
      if (span.from > span.to) backfill.delete(key);
      if (taken.length > 0) return;
    }
  }

  function sampleOutgoing(sample: Sample & { seq?: number; gap?: [number, number] }): Outgoing {
    const key = `${sample.camera}/${sample.zone}`;
    if (store && !zoneCreated.has(key)) {
      let created: number | undefined;
      try {
        created = store.getZone(sample.camera, sample.zone)?.created;
      } catch {
        created = undefined;
      }
      zoneCreated.set(key, created);
    }
    const created = zoneCreated.get(key);
    const message = sampleMessage(sample, site, {
      ...(created !== undefined && { zoneCreated: created }),
      ...(outbox && sample.seq !== undefined && { seq: sample.seq, stream: outbox.stream, ...(sample.gap && { gap: sample.gap }) }),
    });
    return {
      topic: samplesTopic(prefix, site, message.camera, message.zone),
      payload: JSON.stringify(message),
      qos: sampleQos,
      sample: { camera: message.camera, zone: message.zone, time: message.time },
    };
  }

  function schedulePump(): void {
    if (pumpScheduled) return;
    pumpScheduled = true;
    setImmediate(() => {
      pumpScheduled = false;
      pump();
    });
  }

  function pump(): void {
    if (!connection.connected) return;
    while (inFlight < maxInFlight) {
      if (samples.length === 0 && events.length === 0 && backfill.size > 0 && !stopped) refill();
      let m = events.shift() ?? samples.shift();
      if (m === undefined && outbox && !stopped) {
        const s = outbox.take();
        if (s !== undefined) m = sampleOutgoing(s);
      }
      if (m === undefined) return;
      send(m);
    }
  }

  function send(m: Outgoing): void {
    inFlight++;
    client.publish(m.topic, m.payload, { qos: m.sample ? m.qos : qos, retain: false }, (error) => {
      inFlight--;
      if (error) {
        // Not delivered (the connection closed under a QoS 0 message): back to the front. The
        // outbox sends its samples again after the reconnection anyway.
        if (!stopped && !(outbox && m.sample)) dropped((m.sample ? samples : events).unshift(m));
      } else if (m.sample) count.samplesPublished++;
      else count.eventsPublished++;
      schedulePump();
    });
  }

  function stateKey(m: ZoneStateMessage): string {
    return JSON.stringify({ ...m, time: undefined });
  }

  function sendState(entry: StateEntry, now: number): void {
    if (entry.timer) clearTimeout(entry.timer);
    entry.timer = undefined;
    raw(entry.topic, JSON.stringify(entry.latest), true);
    entry.sentKey = entry.latestKey;
    entry.sentAt = now;
    count.statesPublished++;
  }

  function considerState(entry: StateEntry, now: number): void {
    if (!connection.connected || stopped) return;
    const changed = entry.latestKey !== entry.sentKey;
    const since = now - entry.sentAt;
    if ((changed && since >= minStateMs) || since >= refreshStateMs) sendState(entry, now);
    else if (changed && entry.timer === undefined) {
      entry.timer = setTimeout(() => {
        entry.timer = undefined;
        considerState(entry, clock());
      }, minStateMs - since);
      entry.timer.unref();
    }
  }

  return {
    publishLive(live) {
      if (stopped) return;
      const now = clock();
      const topics = new Set<string>();
      for (const zone of live.zones) {
        const topic = stateTopic(prefix, site, live.camera, zone.id);
        topics.add(topic);
        const latest = zoneState(live, zone, { time: now, lowFill: settings.lowFill });
        let entry = states.get(topic);
        if (entry === undefined) {
          entry = { topic, latest, latestKey: stateKey(latest), sentAt: -Infinity };
          states.set(topic, entry);
        } else {
          entry.latest = latest;
          entry.latestKey = stateKey(latest);
        }
        considerState(entry, now);
        discover(latest);
      }
      for (const old of cameraTopics.get(live.camera) ?? []) {
        if (topics.has(old)) continue;
        const entry = states.get(old);
        if (entry?.timer) clearTimeout(entry.timer);
        states.delete(old);
        if (connection.connected) raw(old, '', true);
        if (entry && settings.discovery && connection.connected) {
          raw(discoveryConfig(settings.discoveryPrefix, prefix, site, entry.latest).topic, '', true);
          discovered.delete(old);
        }
      }
      cameraTopics.set(live.camera, topics);
    },

    publishEvent(event) {
      if (stopped) return;
      const time = checkEpochMs(event.time ?? clock(), 'event.time');
      const message: EventMessage = {
        site,
        camera: checkId(event.camera, 'event.camera'),
        zone: event.zone == null ? null : checkId(event.zone, 'event.zone'),
        type: checkOneOf(event.type, 'event.type', EventType),
        time,
        timeIso: new Date(time).toISOString(),
        detail: event.detail ?? {},
      };
      dropped(events.push({ topic: eventsTopic(prefix, site, message.camera), payload: JSON.stringify(message), qos }));
      pump();
    },

    publishSample(sample) {
      if (stopped) return;
      if (outbox) {
        // Read back from the database in sequence order (this one and whatever else is new).
        outbox.committed(checkId(sample.camera, 'sample.camera'));
        schedulePump();
        return;
      }
      dropped(samples.push(sampleOutgoing(sample)));
      pump();
    },

    stats() {
      const box = outbox?.stats();
      return {
        connected: connection.connected,
        queuedSamples: samples.length + (box?.waiting ?? 0),
        unconfirmedSamples: box?.unconfirmed ?? 0,
        replays: box?.replays ?? 0,
        queuedEvents: events.length,
        inFlight,
        backfillPending: backfill.size,
        ...count,
      };
    },

    async stop() {
      if (stopped) return;
      stopped = true;
      if (ticker) clearInterval(ticker);
      outbox?.save();
      const now = clock();
      for (const entry of states.values()) {
        if (entry.timer) clearTimeout(entry.timer);
        entry.timer = undefined;
        if (!connection.connected) continue;
        const offline: ZoneStateMessage = {
          ...entry.latest,
          ...(entry.latest.kind === 'shelf' ? { fill: null } : { count: null }),
          state: ZoneStateName.offline,
          time: new Date(now).toISOString(),
        };
        raw(entry.topic, JSON.stringify(offline), true);
      }
      if (connection.connected) raw(statusTopic, JSON.stringify({ site, state: 'offline', time: new Date(now).toISOString() }), true);
      await connection.stop();
    },
  };
}
