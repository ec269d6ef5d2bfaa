import { afterEach, describe, expect, it } from 'vitest';
import type { EventInput } from '../../src/domain/event.ts';
import { reportingStore } from '../../src/store/reportingStore.ts';
import type { Sample } from '../../src/store/index.ts';
import { addCameraWithZones, tempStore, type TempStore } from './tempStore.ts';

let t: TempStore | undefined;
afterEach(() => {
  t?.cleanup();
  t = undefined;
});

/** Records what reaches the publisher (the real publisher is exercised in roundTrip.test.ts). */
function recorder() {
  const samples: Sample[] = [];
  const events: EventInput[] = [];
  return { samples, events, publishSample: (s: Sample) => void samples.push(s), publishEvent: (e: EventInput) => void events.push(e) };
}

const T = Date.UTC(2026, 2, 2, 9, 0);
const room = (time: number, value: number): Sample => ({ time, camera: 'cam', zone: 'room', kind: 'count', value, intervalMs: 10_000 });

describe('reportingStore', () => {
  it('publishes what the store committed, after committing it', () => {
    t = tempStore();
    addCameraWithZones(t.store);
    const r = recorder();
    const store = reportingStore(t.store, {
      publishSample: (s) => {
        // The database comes first: the sample is already stored when the publisher sees it.
        expect(t!.store.listSamples({ camera: s.camera, zone: s.zone, from: s.time, to: s.time + 1 })).toHaveLength(1);
        r.publishSample(s);
      },
      publishEvent: r.publishEvent,
    });
    store.insertSample(room(T, 1));
    expect(store.insertSamples([room(T + 10_000, 2), room(T + 20_000, 3)])).toBe(2);
    store.insertEvent({ camera: 'cam', type: 'offline', time: T + 30_000, detail: { reason: 'x' } });
    expect(r.samples.map((s) => s.value)).toEqual([1, 2, 3]);
    expect(r.events).toEqual([{ camera: 'cam', type: 'offline', time: T + 30_000, detail: { reason: 'x' } }]);
  });

  it('publishes nothing of a write the store refused, and passes every other method through', () => {
    t = tempStore();
    addCameraWithZones(t.store);
    const r = recorder();
    const store = reportingStore(t.store, r);
    store.insertSample(room(T, 1));
    // The second sample of the batch overlaps the first: the whole batch is refused.
    expect(() => store.insertSamples([room(T + 10_000, 2), room(T + 5_000, 9)])).toThrow(/overlaps/);
    expect(() => store.insertEvent({ camera: 'nope', type: 'offline' })).toThrow();
    expect(r.samples.map((s) => s.value)).toEqual([1]);
    expect(r.events).toEqual([]);
    expect(store.listSamples({ camera: 'cam', zone: 'room' }).map((s) => s.value)).toEqual([1]);
    expect(store.file).toBe(t.file);
    expect(store.getCamera('cam')?.name).toBe('Camera');
  });

  it('does not fail a committed write when publishing throws', () => {
    t = tempStore();
    addCameraWithZones(t.store);
    const lines: string[] = [];
    const store = reportingStore(
      t.store,
      {
        publishSample: () => {
          throw new Error('queue broken');
        },
        publishEvent: () => {},
      },
      (l) => lines.push(l),
    );
    store.insertSample(room(T, 1));
    expect(t.store.listSamples({ camera: 'cam', zone: 'room' })).toHaveLength(1);
    expect(lines).toEqual(['mqtt: could not queue a sample (queue broken)']);
  });
});
