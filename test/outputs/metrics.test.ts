import { describe, expect, it } from 'vitest';
import type { CameraLive } from '../../src/counting/cameraPipeline.ts';
import { createMetrics } from '../../src/outputs/metrics.ts';
import type { MqttPublisherStats } from '../../src/outputs/mqtt/mqttPublisher.ts';

/**
 * A reader of the Prometheus text format, written from its definition
 * (https://prometheus.io/docs/instrumenting/exposition_formats/, "Text format details"): lines
 * end with \n, the last one too; `# HELP name docstring` and `# TYPE name type` lines, other `#`
 * lines are comments; a sample is `name{label="value",…} value [timestamp]`, label values escape
 * `\\`, `\"` and `\n`; values are floats as Go's ParseFloat reads them, with `NaN`, `+Inf`, `-Inf`.
 */
interface Exposition {
  readonly types: Map<string, string>;
  readonly help: Map<string, string>;
  readonly samples: { name: string; labels: Record<string, string>; value: number }[];
}

function parseExposition(text: string): Exposition {
  expect(text.endsWith('\n')).toBe(true);
  const types = new Map<string, string>();
  const help = new Map<string, string>();
  const samples: Exposition['samples'] = [];
  for (const line of text.split('\n')) {
    if (line.trim() === '') continue;
    if (line.startsWith('#')) {
      const m = /^#\s+(HELP|TYPE)\s+([a-zA-Z_:][a-zA-Z0-9_:]*)\s+(.*)$/.exec(line);
      if (!m) continue;
      if (m[1] === 'TYPE') {
        expect(['counter', 'gauge', 'histogram', 'summary', 'untyped']).toContain(m[3]);
        expect(types.has(m[2])).toBe(false); // only one TYPE line per metric name
        types.set(m[2], m[3]);
      } else help.set(m[2], m[3].replace(/\\n/g, '\n').replace(/\\\\/g, '\\'));
      continue;
    }
    const m = /^([a-zA-Z_:][a-zA-Z0-9_:]*)(\{(.*)\})?\s+(\S+)(\s+-?\d+)?\s*$/.exec(line);
    if (!m) throw new Error(`not a sample line: ${line}`);
    const labels: Record<string, string> = {};
    if (m[3]) {
      const re = /\s*([a-zA-Z_][a-zA-Z0-9_]*)\s*=\s*"((?:[^"\\]|\\.)*)"\s*(,|$)/y;
      let match: RegExpExecArray | null;
      while (re.lastIndex < m[3].length && (match = re.exec(m[3])) !== null) {
        labels[match[1]] = match[2].replace(/\\(["\\n])/g, (_, c: string) => (c === 'n' ? '\n' : c));
      }
      expect(re.lastIndex).toBe(m[3].length);
    }
    // Values are read as Go's strconv.ParseFloat reads them: NaN and ±Inf in any case (recalled from memory).
    const raw = m[4];
    const value = /^nan$/i.test(raw) ? NaN : /^\+?inf(inity)?$/i.test(raw) ? Infinity : /^-inf(inity)?$/i.test(raw) ? -Infinity : Number(raw);
    expect(Number.isNaN(value) && !/^nan$/i.test(raw)).toBe(false);
    samples.push({ name: m[1], labels, value });
  }
  return { types, help, samples };
}

function valueOf(e: Exposition, name: string, labels: Record<string, string> = {}): number | undefined {
  const s = e.samples.filter((x) => x.name === name && Object.entries(labels).every(([k, v]) => x.labels[k] === v) && Object.keys(x.labels).length === Object.keys(labels).length);
  expect(s.length).toBeLessThanOrEqual(1);
  return s[0]?.value;
}

const T = Date.UTC(2026, 2, 2, 9, 0);
const live = (lastFrameAt: number | undefined, patch: Partial<CameraLive> = {}): CameraLive => ({
  camera: 'door',
  name: 'Front door',
  state: 'online',
  viewChanged: false,
  ...(lastFrameAt !== undefined && { lastFrameAt }),
  zones: [
    { id: 'entrance', name: 'Entrance', kind: 'room', count: 2.5, fill: 0.031, capacity: 10 },
    { id: 'returns', name: 'Returns', kind: 'shelf', count: 3, fill: 0.42 },
  ],
  ...patch,
});

describe('the exposition reader of this test', () => {
  it('reads the escaping example of the format definition', () => {
    // check: the "Text format example" of prometheus.io exposition formats (lines recalled from memory)
    const e = parseExposition(
      '# HELP http_requests_total The total number of HTTP requests.\n' +
        '# TYPE http_requests_total counter\n' +
        'http_requests_total{method="post",code="200"} 1027 1395066363000\n' +
        'msdos_file_access_time_seconds{path="C:\\\\DIR\\\\FILE.TXT",error="Cannot find file:\\n\\"FILE.TXT\\""} 1.458255915e9\n' +
        'metric_without_timestamp_and_labels 12.47\n' +
        'something_weird{problem="division by zero"} +Inf -3982045\n',
    );
    expect(valueOf(e, 'http_requests_total', { method: 'post', code: '200' })).toBe(1027);
    expect(e.samples[1].labels).toEqual({ path: 'C:\\DIR\\FILE.TXT', error: 'Cannot find file:\n"FILE.TXT"' });
    expect(e.samples[1].value).toBe(1.458255915e9);
    expect(valueOf(e, 'metric_without_timestamp_and_labels')).toBe(12.47);
    expect(valueOf(e, 'something_weird', { problem: 'division by zero' })).toBe(Infinity);
  });
});

describe('createMetrics', () => {
  it('exposes zone, camera, frame, stage and error metrics in the text format', async () => {
    let now = T;
    const m = createMetrics({ processMetrics: false, clock: () => now, fpsWindowSeconds: 10 });
    // 20 frames, 0.2 s apart, captured 0.5 s before they are counted.
    for (let i = 0; i < 20; i++) {
      now = T + i * 200;
      m.observeLive(live(now - 500));
    }
    m.observeLive(live(now - 500, { viewChanged: true })); // a status update, no new frame
    m.observeStage('residual', 0.004);
    m.observeStage('residual', 0.02);
    m.observeStage('label', 3);
    m.sourceError('door');
    m.sourceError('door', 2);
    now += 1500;
    // check: Prometheus exposition formats, text format 0.0.4 (prometheus.io/docs/instrumenting/exposition_formats)
    expect(m.contentType).toMatch(/^text\/plain; version=0\.0\.4/);
    const e = parseExposition(await m.render());

    expect(e.types.get('residuum_zone_people')).toBe('gauge');
    expect(e.types.get('residuum_frames_processed_total')).toBe('counter');
    expect(e.types.get('residuum_stage_seconds')).toBe('histogram');
    expect(e.types.get('residuum_source_errors_total')).toBe('counter');
    for (const name of e.types.keys()) expect(e.help.get(name)?.length).toBeGreaterThan(0);

    expect(valueOf(e, 'residuum_zone_people', { camera: 'door', zone: 'entrance' })).toBe(2.5);
    expect(valueOf(e, 'residuum_zone_people', { camera: 'door', zone: 'returns' })).toBe(3);
    expect(valueOf(e, 'residuum_zone_fill_ratio', { camera: 'door', zone: 'returns' })).toBe(0.42);
    expect(valueOf(e, 'residuum_zone_capacity_people', { camera: 'door', zone: 'entrance' })).toBe(10);
    expect(valueOf(e, 'residuum_zone_capacity_people', { camera: 'door', zone: 'returns' })).toBeUndefined();
    expect(valueOf(e, 'residuum_camera_up', { camera: 'door' })).toBe(1);
    expect(valueOf(e, 'residuum_camera_view_changed', { camera: 'door' })).toBe(1);
    expect(valueOf(e, 'residuum_frames_processed_total', { camera: 'door' })).toBe(20);
    // 20 frames counted within the last 10 s of the scrape.
    expect(valueOf(e, 'residuum_camera_frames_per_second', { camera: 'door' })).toBe(2);
    // Last frame captured at (T + 3800 − 500); scraped at T + 5300: 2 s.
    expect(valueOf(e, 'residuum_last_frame_age_seconds', { camera: 'door' })).toBe(2);
    expect(valueOf(e, 'residuum_source_errors_total', { camera: 'door' })).toBe(3);

    // check: Prometheus histogram exposition — cumulative _bucket{le} series ending in le="+Inf" equal to _count, and _sum
    const buckets = e.samples.filter((s) => s.name === 'residuum_stage_seconds_bucket' && s.labels.stage === 'residual');
    expect(buckets.at(-1)!.labels.le).toBe('+Inf');
    for (let i = 1; i < buckets.length; i++) expect(buckets[i].value).toBeGreaterThanOrEqual(buckets[i - 1].value);
    expect(valueOf(e, 'residuum_stage_seconds_bucket', { stage: 'residual', le: '0.0025' })).toBe(0);
    expect(valueOf(e, 'residuum_stage_seconds_bucket', { stage: 'residual', le: '0.005' })).toBe(1);
    expect(valueOf(e, 'residuum_stage_seconds_bucket', { stage: 'residual', le: '0.025' })).toBe(2);
    expect(valueOf(e, 'residuum_stage_seconds_bucket', { stage: 'residual', le: '+Inf' })).toBe(2);
    expect(valueOf(e, 'residuum_stage_seconds_count', { stage: 'residual' })).toBe(2);
    expect(valueOf(e, 'residuum_stage_seconds_sum', { stage: 'residual' })).toBeCloseTo(0.024, 12);
    expect(valueOf(e, 'residuum_stage_seconds_bucket', { stage: 'label', le: '2.5' })).toBe(0);
    expect(valueOf(e, 'residuum_stage_seconds_bucket', { stage: 'label', le: '+Inf' })).toBe(1);
  });

  it('computes rates and ages at scrape time, and drops the series of a zone that is gone', async () => {
    let now = T;
    const m = createMetrics({ processMetrics: false, clock: () => now, fpsWindowSeconds: 10 });
    m.observeLive(live(T));
    m.observeLive(live(undefined, { camera: 'hall', state: 'learning', zones: [] }));
    now = T + 11_000;
    let e = parseExposition(await m.render());
    expect(valueOf(e, 'residuum_camera_frames_per_second', { camera: 'door' })).toBe(0);
    expect(valueOf(e, 'residuum_last_frame_age_seconds', { camera: 'door' })).toBe(11);
    // A camera that counted nothing yet: no age, counters at 0, not up.
    expect(valueOf(e, 'residuum_last_frame_age_seconds', { camera: 'hall' })).toBeUndefined();
    expect(valueOf(e, 'residuum_frames_processed_total', { camera: 'hall' })).toBe(0);
    expect(valueOf(e, 'residuum_source_errors_total', { camera: 'hall' })).toBe(0);
    expect(valueOf(e, 'residuum_camera_up', { camera: 'hall' })).toBe(0);

    m.observeLive(live(T + 11_000, { zones: [{ id: 'entrance', name: 'Entrance', kind: 'room', count: 1, fill: 0.01 }] }));
    e = parseExposition(await m.render());
    expect(valueOf(e, 'residuum_zone_people', { camera: 'door', zone: 'entrance' })).toBe(1);
    expect(valueOf(e, 'residuum_zone_people', { camera: 'door', zone: 'returns' })).toBeUndefined();
    expect(valueOf(e, 'residuum_zone_fill_ratio', { camera: 'door', zone: 'returns' })).toBeUndefined();
    expect(valueOf(e, 'residuum_zone_capacity_people', { camera: 'door', zone: 'entrance' })).toBeUndefined();
    expect(valueOf(e, 'residuum_frames_processed_total', { camera: 'door' })).toBe(2);
  });

  it('reads the MQTT publisher figures at scrape time; counters never go down', async () => {
    let stats: MqttPublisherStats = { connected: true, queuedSamples: 0, queuedEvents: 0, inFlight: 0, samplesPublished: 5, samplesDropped: 0, samplesBackfilled: 0, backfillPending: 0, eventsPublished: 0, eventsDropped: 0, statesPublished: 0, unconfirmedSamples: 0, replays: 0 };
    const m = createMetrics({ processMetrics: false, mqtt: () => stats });
    let e = parseExposition(await m.render());
    expect(valueOf(e, 'residuum_mqtt_connected')).toBe(1);
    expect(valueOf(e, 'residuum_mqtt_samples_published_total')).toBe(5);
    stats = { ...stats, connected: false, queuedSamples: 7, samplesPublished: 9, samplesDropped: 3 };
    e = parseExposition(await m.render());
    expect(valueOf(e, 'residuum_mqtt_connected')).toBe(0);
    expect(valueOf(e, 'residuum_mqtt_queued_samples')).toBe(7);
    expect(valueOf(e, 'residuum_mqtt_samples_published_total')).toBe(9);
    expect(valueOf(e, 'residuum_mqtt_samples_dropped_total')).toBe(3);
    expect(e.types.get('residuum_mqtt_samples_dropped_total')).toBe('counter');
  });

  it('adds the process metrics by default and checks its inputs', async () => {
    const m = createMetrics();
    const e = parseExposition(await m.render());
    expect(e.types.get('process_cpu_seconds_total')).toBe('counter');
    expect(() => m.observeStage('Residual Energy', 0.1)).toThrow(/stage: expected a lower-case id/);
    expect(() => m.observeStage('residual', -1)).toThrow(/seconds: expected a finite number ≥ 0/);
    expect(() => m.sourceError('door', 0)).toThrow(/n: expected a whole number ≥ 1/);
    expect(() => createMetrics({ stageBuckets: [0.1, 0.05] })).toThrow(/stageBuckets/);
  });
});

describe('createMetrics: camera worker threads', () => {
  it('counts worker restarts per camera from 0, and reads thread utilization at scrape time', async () => {
    let busy: [string, number][] = [['door', 0.25], ['hall', 1.5]];
    const m = createMetrics({ processMetrics: false, threadUtilization: () => busy });
    m.observeLive({ camera: 'door', name: 'Door', state: 'online', viewChanged: false, zones: [] });
    m.observeLive({ camera: 'hall', name: 'Hall', state: 'offline', viewChanged: false, zones: [] });
    m.workerRestart('hall');
    m.workerRestart('hall');
    let e = parseExposition(await m.render());
    // check: Prometheus instrumentation practice — a counter that is 0 is exported, not missing.
    expect(valueOf(e, 'residuum_camera_worker_restarts_total', { camera: 'door' })).toBe(0);
    expect(valueOf(e, 'residuum_camera_worker_restarts_total', { camera: 'hall' })).toBe(2);
    expect(e.types.get('residuum_camera_worker_restarts_total')).toBe('counter');
    expect(e.types.get('residuum_camera_thread_utilization_ratio')).toBe('gauge');
    expect(valueOf(e, 'residuum_camera_thread_utilization_ratio', { camera: 'door' })).toBe(0.25);
    // A share of time: clamped to 0..1.
    expect(valueOf(e, 'residuum_camera_thread_utilization_ratio', { camera: 'hall' })).toBe(1);
    // A camera no longer reported leaves the gauge.
    busy = [['door', 0.5]];
    e = parseExposition(await m.render());
    expect(valueOf(e, 'residuum_camera_thread_utilization_ratio', { camera: 'door' })).toBe(0.5);
    expect(valueOf(e, 'residuum_camera_thread_utilization_ratio', { camera: 'hall' })).toBeUndefined();
  });

  it('exports each worker heap at scrape time, by space, and leaves out cameras without one', async () => {
    const m = createMetrics({ processMetrics: false, threadHeap: () => [['door', { usedBytes: 1000, totalBytes: 4000, externalBytes: 250 }], ['hall', undefined]] });
    const e = parseExposition(await m.render());
    expect(e.types.get('residuum_camera_thread_heap_bytes')).toBe('gauge');
    expect(valueOf(e, 'residuum_camera_thread_heap_bytes', { camera: 'door', space: 'used' })).toBe(1000);
    expect(valueOf(e, 'residuum_camera_thread_heap_bytes', { camera: 'door', space: 'total' })).toBe(4000);
    expect(valueOf(e, 'residuum_camera_thread_heap_bytes', { camera: 'door', space: 'external' })).toBe(250);
    expect(valueOf(e, 'residuum_camera_thread_heap_bytes', { camera: 'hall', space: 'used' })).toBeUndefined();
  });

  it('has no utilization metric without the option', async () => {
    const e = parseExposition(await createMetrics({ processMetrics: false }).render());
    expect(e.types.has('residuum_camera_thread_utilization_ratio')).toBe(false);
    expect(e.types.has('residuum_camera_thread_heap_bytes')).toBe(false);
    expect(e.types.get('residuum_camera_worker_restarts_total')).toBe('counter');
  });
});
