import { collectDefaultMetrics, Counter, Gauge, Histogram, Registry } from 'prom-client';
import type { CameraLive } from '../counting/cameraPipeline.ts';
import type { WorkerHeap } from '../counting/cameraWorkerProtocol.ts';
import type { CollectorStats } from './mqtt/mqttCollector.ts';
import type { MqttPublisherStats } from './mqtt/mqttPublisher.ts';

/**
 * Prometheus metrics of the counting service, with prom-client, in the text exposition format
 * (https://prometheus.io/docs/instrumenting/exposition_formats/, "Text-based format"; served with
 * `contentType`, `text/plain; version=0.0.4; charset=utf-8`).
 *
 * | metric | type | labels | meaning |
 * | --- | --- | --- | --- |
 * | `residuum_zone_people` | gauge | camera, zone | smoothed people (rooms) or items (shelves) |
 * | `residuum_zone_fill_ratio` | gauge | camera, zone | smoothed share of the zone covered, 0..1 |
 * | `residuum_zone_capacity_people` | gauge | camera, zone | configured capacity (zones with one) |
 * | `residuum_camera_up` | gauge | camera | 1 while the camera delivers frames and counts, else 0 |
 * | `residuum_camera_view_changed` | gauge | camera | 1 while the view does not match the learned scene |
 * | `residuum_frames_processed_total` | counter | camera | frames counted |
 * | `residuum_camera_frames_per_second` | gauge | camera | frames counted per second over the last `fpsWindowSeconds` (at scrape time) |
 * | `residuum_last_frame_age_seconds` | gauge | camera | now − capture time of the last counted frame (at scrape time; cameras that counted a frame) |
 * | `residuum_source_errors_total` | counter | camera | bad frames and lost connections of the source |
 * | `residuum_stage_seconds` | histogram | stage | processing time per stage (see below) |
 * | `residuum_camera_thread_utilization_ratio` | gauge | camera | share of time the camera's worker thread was busy since the previous scrape, 0..1 (with the `threadUtilization` option) |
 * | `residuum_camera_thread_heap_bytes` | gauge | camera, space | the camera worker's V8 heap at its last heartbeat: `used`, `total` (reserved) and `external` (typed-array buffers and other memory outside the heap) bytes (with the `threadHeap` option) |
 * | `residuum_camera_worker_restarts_total` | counter | camera | the camera's worker thread failed (crashed, exited, hung) and was started again |
 * | `residuum_mqtt_connected`, `residuum_mqtt_queued_samples`, `residuum_mqtt_samples_published_total`, `residuum_mqtt_samples_dropped_total` | | | with the `mqtt` option |
 *
 * Stages of the counting service (each camera's worker thread times them): `frame` (all the
 * pipeline does with one frame: count, smoothing, events, sample writes), `count` (the counter on
 * one frame), `store` (one batch of samples written, one transaction), `source` (from the capture
 * time to the pipeline, i.e. decoding — with the download for snapshots — or rendering a synthetic
 * frame; not for drop folders and ffmpeg). The counter's own stages (`residual`, `noise_scale`,
 * `threshold`, `morphology`, `labelling`, `zones`: COUNTER_STAGES of createMaskCounter.ts) come
 * once the pipeline passes the counter's stage times on (see forwardCounterStages in
 * src/counting/cameraWorker.ts).
 *
 * Per-zone series disappear when the zone is no longer in the camera's live view. No label ever
 * carries anything but camera, zone and stage ids (letters, digits, `-`, `_`).
 *
 * Names follow the Prometheus naming conventions (https://prometheus.io/docs/practices/naming/):
 * the unit in the name, plural (`_people`, `_seconds`, `_bytes`), `_ratio` for a 0..1 share,
 * `_total` only on counters; `_count`, `_sum` and `_bucket` belong to histograms and summaries,
 * so a gauge of people is `residuum_zone_people`, not `…_count`.
 */

export interface MetricsOptions {
  /** Also export prom-client's default process metrics (CPU, memory, event loop, GC); default true. */
  readonly processMetrics?: boolean;
  /** Clock for frame ages and rates, epoch ms; default Date.now. */
  readonly clock?: () => number;
  /** Window of `residuum_camera_frames_per_second`, seconds, > 0 and ≤ 3600; default 10. */
  readonly fpsWindowSeconds?: number;
  /** Upper bounds of the stage histogram's buckets, seconds, increasing; default 0.5 ms … 2.5 s. */
  readonly stageBuckets?: readonly number[];
  /** The MQTT publisher's figures, read at scrape time; default none (no mqtt metrics). */
  readonly mqtt?: () => MqttPublisherStats;
  /** Each camera's worker-thread utilization (0..1) since the previous scrape, read at scrape time; default none (no utilization metric). */
  readonly threadUtilization?: () => Iterable<readonly [camera: string, utilization: number]>;
  /** Each camera worker's heap at its last heartbeat, read at scrape time; default none (no heap metric). */
  readonly threadHeap?: () => Iterable<readonly [camera: string, heap: WorkerHeap | undefined]>;
}

export interface Metrics {
  readonly registry: Registry;
  /** Content-Type of `render()`'s text. */
  readonly contentType: string;
  /** Call on every pipeline 'live' event: updates the zone and camera gauges, counts a frame when `lastFrameAt` moved on. */
  observeLive(live: CameraLive): void;
  /** Adds one measurement of `stage` (a lower-case id: letters, digits, `_`; ≤ 32) in seconds (≥ 0). */
  observeStage(stage: string, seconds: number): void;
  /** Counts `n` (default 1) source errors of `camera`: a bad frame, a failed connection. */
  sourceError(camera: string, n?: number): void;
  /** Counts one restart of `camera`'s worker thread after it failed. */
  workerRestart(camera: string): void;
  /** The text exposition of every metric. */
  render(): Promise<string>;
}

/** Default stage buckets, seconds: a frame's stages take from well under a millisecond to a few hundred. */
export const STAGE_BUCKETS = [0.0005, 0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5] as const;

const STAGE_PATTERN = /^[a-z][a-z0-9_]{0,31}$/;

interface CameraTrack {
  lastFrameAt?: number;
  /** Clock times of frames counted within the fps window, oldest first. */
  arrivals: number[];
  zones: Set<string>;
}

/** A fresh registry with Residuum's metrics (one per service; tests make their own). */
export function createMetrics(options: MetricsOptions = {}): Metrics {
  const { processMetrics = true, clock = Date.now, fpsWindowSeconds = 10, stageBuckets = STAGE_BUCKETS, mqtt, threadUtilization, threadHeap } = options;
  if (!(fpsWindowSeconds > 0 && fpsWindowSeconds <= 3600)) throw new RangeError(`fpsWindowSeconds: expected a number in (0, 3600], got ${String(fpsWindowSeconds)}`);
  if (!(stageBuckets.length > 0 && stageBuckets.every((b, i) => Number.isFinite(b) && b > 0 && (i === 0 || b > stageBuckets[i - 1])))) {
    throw new RangeError(`stageBuckets: expected increasing positive numbers of seconds, got ${JSON.stringify(stageBuckets)}`);
  }
  const windowMs = fpsWindowSeconds * 1000;
  const registry = new Registry();
  const registers = [registry];
  const cameras = new Map<string, CameraTrack>();

  const prune = (track: CameraTrack, now: number) => {
    let drop = 0;
    while (drop < track.arrivals.length && track.arrivals[drop] <= now - windowMs) drop++;
    if (drop > 0) track.arrivals.splice(0, drop);
  };

  const zoneCount = new Gauge({ name: 'residuum_zone_people', help: 'Smoothed people (room zones) or items (shelf zones) in the zone.', labelNames: ['camera', 'zone'] as const, registers });
  const zoneFill = new Gauge({ name: 'residuum_zone_fill_ratio', help: 'Smoothed share of the zone covered by foreground, 0..1.', labelNames: ['camera', 'zone'] as const, registers });
  const zoneCapacity = new Gauge({ name: 'residuum_zone_capacity_people', help: 'Configured capacity of the zone (people for rooms).', labelNames: ['camera', 'zone'] as const, registers });
  const cameraUp = new Gauge({ name: 'residuum_camera_up', help: 'Whether the camera delivers frames and counts (1) or not (0: connecting, offline, learning, stopped).', labelNames: ['camera'] as const, registers });
  const viewChanged = new Gauge({ name: 'residuum_camera_view_changed', help: 'Whether the view no longer matches the learned empty scene (1) or does (0).', labelNames: ['camera'] as const, registers });
  const frames = new Counter({ name: 'residuum_frames_processed_total', help: 'Frames counted.', labelNames: ['camera'] as const, registers });
  const sourceErrors = new Counter({ name: 'residuum_source_errors_total', help: 'Bad frames and failed connections of the camera source.', labelNames: ['camera'] as const, registers });
  const stages = new Histogram({ name: 'residuum_stage_seconds', help: 'Processing time per stage, seconds.', labelNames: ['stage'] as const, buckets: [...stageBuckets], registers });
  const restarts = new Counter({ name: 'residuum_camera_worker_restarts_total', help: "Restarts of the camera's worker thread after it crashed, exited or hung.", labelNames: ['camera'] as const, registers });
  if (threadUtilization) {
    new Gauge({
      name: 'residuum_camera_thread_utilization_ratio',
      help: "Share of time the camera's worker thread was busy (event-loop utilization) since the previous scrape, 0..1.",
      labelNames: ['camera'] as const,
      registers,
      collect() {
        this.reset();
        for (const [camera, utilization] of threadUtilization()) if (Number.isFinite(utilization)) this.set({ camera }, Math.min(1, Math.max(0, utilization)));
      },
    });
  }
  if (threadHeap) {
    new Gauge({
      name: 'residuum_camera_thread_heap_bytes',
      help: "The camera worker's V8 heap at its last heartbeat, bytes: used, total (reserved) and external (outside the heap, typed-array buffers among them).",
      labelNames: ['camera', 'space'] as const,
      registers,
      collect() {
        this.reset();
        for (const [camera, heap] of threadHeap()) {
          if (!heap) continue;
          this.set({ camera, space: 'used' }, heap.usedBytes);
          this.set({ camera, space: 'total' }, heap.totalBytes);
          this.set({ camera, space: 'external' }, heap.externalBytes);
        }
      },
    });
  }
  new Gauge({
    name: 'residuum_camera_frames_per_second',
    help: `Frames counted per second, over the last ${fpsWindowSeconds} s.`,
    labelNames: ['camera'] as const,
    registers,
    collect() {
      const now = clock();
      for (const [camera, track] of cameras) {
        prune(track, now);
        this.set({ camera }, track.arrivals.length / fpsWindowSeconds);
      }
    },
  });
  new Gauge({
    name: 'residuum_last_frame_age_seconds',
    help: 'Seconds since the capture of the last counted frame.',
    labelNames: ['camera'] as const,
    registers,
    collect() {
      const now = clock();
      for (const [camera, track] of cameras) if (track.lastFrameAt !== undefined) this.set({ camera }, Math.max(0, (now - track.lastFrameAt) / 1000));
    },
  });
  if (mqtt) {
    let published = 0;
    let dropped = 0;
    new Gauge({ name: 'residuum_mqtt_connected', help: 'Whether the MQTT publisher is connected to the broker (1) or not (0).', registers, collect() { this.set(mqtt().connected ? 1 : 0); } });
    new Gauge({ name: 'residuum_mqtt_queued_samples', help: 'Samples waiting in memory for the MQTT broker.', registers, collect() { this.set(mqtt().queuedSamples); } });
    new Counter({
      name: 'residuum_mqtt_samples_published_total',
      help: 'Samples the MQTT broker acknowledged.',
      registers,
      collect() {
        const now = mqtt().samplesPublished;
        if (now > published) this.inc(now - published);
        published = Math.max(published, now);
      },
    });
    new Counter({
      name: 'residuum_mqtt_samples_dropped_total',
      help: 'Samples dropped from the full MQTT queue (they stay in the database).',
      registers,
      collect() {
        const now = mqtt().samplesDropped;
        if (now > dropped) this.inc(now - dropped);
        dropped = Math.max(dropped, now);
      },
    });
  }
  if (mqtt) {
    new Gauge({ name: 'residuum_mqtt_unconfirmed_samples', help: 'Numbered samples a collector has not confirmed yet (they are sent again until it does).', registers, collect() { this.set(mqtt().unconfirmedSamples); } });
    monotonic('residuum_mqtt_replays_total', 'Times unconfirmed samples were sent to the broker again.', () => mqtt().replays, registers);
  }
  if (processMetrics) collectDefaultMetrics({ register: registry });

  return {
    registry,
    contentType: registry.contentType,
    observeLive(live) {
      const { camera } = live;
      let track = cameras.get(camera);
      if (track === undefined) {
        track = { arrivals: [], zones: new Set<string>() };
        cameras.set(camera, track);
        // Counters start at 0 on first sight, so that rate() has a starting point (Prometheus
        // instrumentation practice: avoid missing metrics).
        frames.inc({ camera }, 0);
        sourceErrors.inc({ camera }, 0);
        restarts.inc({ camera }, 0);
      }
      if (live.lastFrameAt !== undefined && live.lastFrameAt !== track.lastFrameAt) {
        track.lastFrameAt = live.lastFrameAt;
        frames.inc({ camera });
        const now = clock();
        track.arrivals.push(now);
        prune(track, now);
      }
      cameraUp.set({ camera }, live.state === 'online' ? 1 : 0);
      viewChanged.set({ camera }, live.viewChanged ? 1 : 0);
      const zones = new Set<string>();
      for (const z of live.zones) {
        zones.add(z.id);
        const labels = { camera, zone: z.id };
        zoneCount.set(labels, z.count);
        zoneFill.set(labels, z.fill);
        if (z.capacity !== undefined) zoneCapacity.set(labels, z.capacity);
        else zoneCapacity.remove(labels);
      }
      for (const old of track.zones) {
        if (zones.has(old)) continue;
        const labels = { camera, zone: old };
        zoneCount.remove(labels);
        zoneFill.remove(labels);
        zoneCapacity.remove(labels);
      }
      track.zones = zones;
    },
    observeStage(stage, seconds) {
      if (typeof stage !== 'string' || !STAGE_PATTERN.test(stage)) throw new RangeError(`stage: expected a lower-case id (letters, digits, "_"; ≤ 32), got ${JSON.stringify(stage)}`);
      if (typeof seconds !== 'number' || !Number.isFinite(seconds) || seconds < 0) throw new RangeError(`seconds: expected a finite number ≥ 0, got ${String(seconds)}`);
      stages.observe({ stage }, seconds);
    },
    sourceError(camera, n = 1) {
      if (!(Number.isInteger(n) && n >= 1)) throw new RangeError(`n: expected a whole number ≥ 1, got ${String(n)}`);
      sourceErrors.inc({ camera }, n);
    },
    workerRestart(camera) {
      restarts.inc({ camera });
    },
    render: () => registry.metrics(),
  };
}

/** A counter that follows a monotonic figure read at scrape time (it never goes down). */
function monotonic(name: string, help: string, read: () => number, registers: Registry[]): Counter {
  let seen = 0;
  return new Counter({
    name,
    help,
    registers,
    collect() {
      const now = read();
      if (now > seen) this.inc(now - seen);
      seen = Math.max(seen, now);
    },
  });
}

export interface CollectorMetricsOptions {
  /** The collector's figures, read at scrape time. */
  readonly collector: () => CollectorStats;
  /** Also export prom-client's default process metrics; default true. */
  readonly processMetrics?: boolean;
}

/**
 * Prometheus metrics of `residuum collect` (served at its `/metrics`):
 *
 * | metric | type | meaning |
 * | --- | --- | --- |
 * | `residuum_collector_mqtt_connected` | gauge | 1 while connected to the broker |
 * | `residuum_collector_mqtt_subscribed` | gauge | 1 while the broker granted every subscription |
 * | `residuum_collector_samples_stored_total` | counter | samples written to the central store |
 * | `residuum_collector_samples_duplicate_total` | counter | samples received again (replays, QoS 1 redelivery): ignored |
 * | `residuum_collector_samples_conflicting_total` | counter | samples refused: a different stored sample covers their interval |
 * | `residuum_collector_samples_lost_total` | counter | samples a site no longer held when asked again (pruned there first) |
 * | `residuum_collector_samples_missing` | gauge | numbered samples not yet received below the highest received (gaps being filled) |
 * | `residuum_collector_samples_pending` | gauge | received samples waiting for their batch |
 * | `residuum_collector_batches_total` | counter | batches written (one transaction each) |
 * | `residuum_collector_messages_rejected_total` | counter | messages that could not be read or stored |
 * | `residuum_collector_events_stored_total` | counter | events written |
 */
export function createCollectorMetrics(options: CollectorMetricsOptions): Metrics {
  const { collector, processMetrics = true } = options;
  const registry = new Registry();
  const registers = [registry];
  new Gauge({ name: 'residuum_collector_mqtt_connected', help: 'Whether the collector is connected to the broker (1) or not (0).', registers, collect() { this.set(collector().connected ? 1 : 0); } });
  new Gauge({ name: 'residuum_collector_mqtt_subscribed', help: 'Whether the broker granted every subscription of the collector (1) or not (0).', registers, collect() { this.set(collector().subscribed ? 1 : 0); } });
  monotonic('residuum_collector_samples_stored_total', 'Samples written to the central store.', () => collector().samplesStored, registers);
  monotonic('residuum_collector_samples_duplicate_total', 'Samples received again (replays, QoS 1 redelivery) and ignored.', () => collector().duplicates, registers);
  monotonic('residuum_collector_samples_conflicting_total', 'Samples refused because a different stored sample covers their interval.', () => collector().conflicts, registers);
  monotonic('residuum_collector_samples_lost_total', 'Samples a site no longer held when they were asked for again.', () => collector().samplesLost, registers);
  new Gauge({ name: 'residuum_collector_samples_missing', help: 'Numbered samples not received yet below the highest received, over all cameras.', registers, collect() { this.set(collector().samplesMissing); } });
  new Gauge({ name: 'residuum_collector_samples_pending', help: 'Received samples waiting for their batch to be written.', registers, collect() { this.set(collector().pendingSamples); } });
  monotonic('residuum_collector_batches_total', 'Batches of samples written, one transaction each.', () => collector().batches, registers);
  monotonic('residuum_collector_messages_rejected_total', 'Messages that could not be read or stored.', () => collector().rejected, registers);
  monotonic('residuum_collector_events_stored_total', 'Events written to the central store.', () => collector().eventsStored, registers);
  if (processMetrics) collectDefaultMetrics({ register: registry });
  const none = () => {};
  return { registry, contentType: registry.contentType, observeLive: none, observeStage: none, sourceError: none, workerRestart: none, render: () => registry.metrics() };
}
