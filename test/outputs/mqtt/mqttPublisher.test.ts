import { afterEach, describe, expect, it } from 'vitest';
import type { CameraLive, ZoneLive } from '../../../src/counting/cameraPipeline.ts';
import { createMqttPublisher, type MqttPublisher } from '../../../src/outputs/mqtt/mqttPublisher.ts';
import { validateMqttSettings } from '../../../src/outputs/mqtt/mqttSettings.ts';
import { waitUntil } from '../../service/waitUntil.ts';
import { observe, startBroker, type Observer, type TestBroker } from './broker.ts';
import { FAST } from './fixtures.ts';

/** Checked against aedes, an independent MQTT 3.1.1 broker, and a plain mqtt.js subscriber. */

const T = Date.UTC(2026, 2, 2, 9, 0);
const entrance = (count: number): ZoneLive => ({ id: 'entrance', name: 'Entrance', kind: 'room', count, fill: 0.04, capacity: 10 });
const returns = (fill: number): ZoneLive => ({ id: 'returns', name: 'Returns shelf', kind: 'shelf', count: 4, fill });
const live = (zones: ZoneLive[], patch: Partial<CameraLive> = {}): CameraLive => ({ camera: 'door', name: 'Front door', state: 'online', viewChanged: false, lastFrameAt: T, zones, ...patch });

let broker: TestBroker | undefined;
let publisher: MqttPublisher | undefined;
const observers: Observer[] = [];
afterEach(async () => {
  await publisher?.stop();
  for (const o of observers.splice(0)) await o.close();
  await broker?.close();
  publisher = undefined;
  broker = undefined;
});

const wait = { timeoutMs: 30_000, intervalMs: 20 };
const STATE = 'residuum/riverside/door/entrance/state';
const SHELF = 'residuum/riverside/door/returns/state';
const STATUS = 'residuum/riverside/status';

async function start(mqtt: Record<string, unknown> = {}, clock: () => number = () => T): Promise<MqttPublisher> {
  broker = await startBroker();
  const settings = validateMqttSettings({ url: broker.url, clientId: 'counter-1', ...mqtt });
  publisher = createMqttPublisher(settings, { site: 'riverside', clock, backoff: FAST });
  await waitUntil(() => publisher!.stats().connected, { what: 'the publisher to connect', ...wait });
  return publisher;
}

async function watch(filter: string): Promise<Observer> {
  const o = await observe(broker!.url, filter);
  observers.push(o);
  return o;
}

describe('createMqttPublisher: zone states', () => {
  it('publishes retained states with the documented JSON, which a later subscriber receives', async () => {
    const p = await start({ stateIntervalSeconds: 0 });
    p.publishLive(live([entrance(8), returns(0.1)]));
    await waitUntil(() => p.stats().statesPublished === 2, { what: 'two states', ...wait });
    const o = await watch('residuum/#');
    await waitUntil(() => o.messages.length >= 3, { what: 'the retained messages', ...wait });
    // check: MQTT 3.1.1 §3.3.1.3 — a new subscriber gets the retained message with RETAIN set (recalled from memory)
    expect(o.messages.filter((m) => m.topic === STATE).map((m) => m.retain)).toEqual([true]);
    expect(o.bodies(STATE)).toEqual([
      { camera: 'door', cameraName: 'Front door', zone: 'entrance', zoneName: 'Entrance', kind: 'room', count: 8, capacity: 10, state: 'near', time: '2026-03-02T09:00:00.000Z' },
    ]);
    expect(o.bodies(SHELF)).toEqual([{ camera: 'door', cameraName: 'Front door', zone: 'returns', zoneName: 'Returns shelf', kind: 'shelf', fill: 0.1, state: 'low', time: '2026-03-02T09:00:00.000Z' }]);
    expect(o.bodies(STATUS)).toEqual([{ site: 'riverside', state: 'online', time: '2026-03-02T09:00:00.000Z' }]);
  });

  it('sends a changed state at most every stateIntervalSeconds (the latest), an unchanged one every stateRefreshSeconds', async () => {
    let now = T;
    const p = await start({ stateIntervalSeconds: 5, stateRefreshSeconds: 60 }, () => now);
    const sent = () => p.stats().statesPublished;
    p.publishLive(live([entrance(1)]));
    expect(sent()).toBe(1);
    now += 1000;
    p.publishLive(live([entrance(2)])); // changed, but only 1 s after the last: held back
    p.publishLive(live([entrance(3)]));
    expect(sent()).toBe(1);
    now += 4000;
    p.publishLive(live([entrance(4)])); // 5 s after the last (inclusive): the latest goes out
    expect(sent()).toBe(2);
    now += 30_000;
    p.publishLive(live([entrance(4)])); // unchanged, 30 s
    expect(sent()).toBe(2);
    now += 30_000;
    p.publishLive(live([entrance(4)])); // unchanged, 60 s: refreshed
    expect(sent()).toBe(3);
    const o = await watch(STATE);
    await waitUntil(() => o.messages.length >= 1, { what: 'the retained state', ...wait });
    expect(o.bodies(STATE)).toMatchObject([{ count: 4, state: 'below', time: new Date(now).toISOString() }]);
  });

  it('sends a held-back change once its interval is up, without another live update', async () => {
    const p = await start({ stateIntervalSeconds: 0.05 }, () => Date.now());
    const o = await watch(STATE);
    p.publishLive(live([entrance(1)]));
    p.publishLive(live([entrance(9)]));
    await waitUntil(() => o.messages.length >= 2, { what: 'the held-back state', ...wait });
    expect(o.bodies(STATE)).toMatchObject([{ count: 1 }, { count: 9, state: 'near' }]);
    expect(p.stats().statesPublished).toBe(2);
  });

  it('clears the retained state of a zone that is gone, and marks everything offline on stop', async () => {
    const p = await start({ stateIntervalSeconds: 0 });
    const o = await watch('residuum/#');
    p.publishLive(live([entrance(3), returns(0.5)]));
    p.publishLive(live([entrance(3)]));
    // check: MQTT 3.1.1 §3.3.1.3 — a retained PUBLISH with a zero-length payload deletes the retained message (recalled from memory)
    await waitUntil(() => o.bodies(SHELF).length >= 2, { what: 'the empty retained message', ...wait });
    expect(o.bodies(SHELF)).toEqual([expect.objectContaining({ fill: 0.5, state: 'ok' }), null]);
    await p.stop();
    publisher = undefined;
    await waitUntil(() => o.bodies(STATE).length >= 2 && o.bodies(STATUS).length >= 2, { what: 'the offline messages', ...wait });
    expect(o.bodies(STATE).at(-1)).toMatchObject({ zone: 'entrance', count: null, capacity: 10, state: 'offline' });
    expect(o.bodies(STATUS).at(-1)).toMatchObject({ site: 'riverside', state: 'offline' });
    const late = await watch('residuum/#');
    await waitUntil(() => late.messages.length >= 2, { what: 'the retained messages after stop', ...wait });
    expect(late.messages.map((m) => m.topic).sort()).toEqual([STATE, STATUS]);
  });

  it('sends every zone state again after a reconnect', async () => {
    const p = await start({ stateIntervalSeconds: 0 });
    p.publishLive(live([entrance(3)]));
    broker!.down();
    await waitUntil(() => !p.stats().connected, { what: 'the publisher to notice', ...wait });
    p.publishLive(live([entrance(6)])); // not connected: kept as the latest
    expect(p.stats().statesPublished).toBe(1);
    broker!.up();
    await waitUntil(() => p.stats().statesPublished === 2, { what: 'the state after reconnecting', ...wait });
    const o = await watch(STATE);
    await waitUntil(() => o.messages.length >= 1, { what: 'the retained state', ...wait });
    expect(o.bodies(STATE)).toMatchObject([{ count: 6 }]);
  });
});

describe('createMqttPublisher: events and the site status', () => {
  it('publishes events, not retained, with the stored fields', async () => {
    const p = await start();
    const o = await watch('residuum/+/+/events');
    p.publishEvent({ camera: 'door', zone: 'entrance', type: 'capacity-exceeded', time: T, detail: { count: 11, capacity: 10 } });
    p.publishEvent({ camera: 'door', type: 'offline', time: T + 1000, detail: { reason: 'timeout' } });
    await waitUntil(() => o.messages.length >= 2, { what: 'two events', ...wait });
    expect(o.messages.map((m) => [m.topic, m.retain])).toEqual([
      ['residuum/riverside/door/events', false],
      ['residuum/riverside/door/events', false],
    ]);
    expect(o.bodies('residuum/riverside/door/events')).toEqual([
      { site: 'riverside', camera: 'door', zone: 'entrance', type: 'capacity-exceeded', time: T, timeIso: '2026-03-02T09:00:00.000Z', detail: { count: 11, capacity: 10 } },
      { site: 'riverside', camera: 'door', zone: null, type: 'offline', time: T + 1000, timeIso: '2026-03-02T09:00:01.000Z', detail: { reason: 'timeout' } },
    ]);
    expect(() => p.publishEvent({ camera: 'door', type: 'exploded' as 'offline' })).toThrow(/event\.type/);
  });

  it('leaves a will: the broker announces the site offline when the publisher vanishes; it comes back online', async () => {
    const p = await start();
    const o = await watch(STATUS);
    await waitUntil(() => o.messages.length >= 1, { what: 'the online status', ...wait });
    broker!.cut('counter-1');
    // check: MQTT 3.1.1 §3.1.2.5 — the server publishes the will when the network connection closes without DISCONNECT (recalled from memory)
    await waitUntil(() => o.bodies(STATUS).length >= 3, { what: 'offline then online again', ...wait });
    expect(o.bodies(STATUS).map((b) => (b as { state: string }).state)).toEqual(['online', 'offline', 'online']);
    expect(p.stats().connected).toBe(true);
  });

  it('announces zones as Home Assistant sensors (MQTT discovery), retained, and removes them with their zone', async () => {
    const p = await start({ discovery: true });
    const o = await watch('homeassistant/#');
    p.publishLive(live([entrance(3), returns(0.5)]));
    const room = 'homeassistant/sensor/residuum_riverside/door_entrance/config';
    const shelf = 'homeassistant/sensor/residuum_riverside/door_returns/config';
    await waitUntil(() => o.bodies(room).length >= 1 && o.bodies(shelf).length >= 1, { what: 'two discovery messages', ...wait });
    // check: Home Assistant MQTT discovery documentation — topic <discovery_prefix>/<component>/[<node_id>/]<object_id>/config,
    // keys state_topic, value_template, unique_id, availability_topic, device.identifiers (recalled from memory)
    expect(o.bodies(room)[0]).toMatchObject({
      name: 'Entrance',
      unique_id: 'residuum_riverside_door_entrance',
      state_topic: STATE,
      json_attributes_topic: STATE,
      value_template: '{{ value_json.count }}',
      unit_of_measurement: 'people',
      availability_topic: STATUS,
      payload_available: 'online',
      payload_not_available: 'offline',
      device: { identifiers: ['residuum_riverside_door'], name: 'Front door (riverside)' },
    });
    expect(o.bodies(shelf)[0]).toMatchObject({ state_topic: SHELF, unit_of_measurement: '%' });
    // Sent once, not with every live update.
    p.publishLive(live([entrance(4), returns(0.5)]));
    await new Promise((done) => setTimeout(done, 200));
    expect(o.bodies(room).length).toBe(1);
    // The shelf zone goes away: its sensor is removed by an empty retained config.
    p.publishLive(live([entrance(4)]));
    await waitUntil(() => o.bodies(shelf).includes(null), { what: 'the shelf sensor removed', ...wait });
  });
});
