import { afterEach, describe, expect, it } from 'vitest';
import { createSampleOutbox, SettingKeys, type SampleOutbox } from '../../../src/outputs/mqtt/sampleOutbox.ts';
import type { TempStore } from '../../store/tempStore.ts';
import { inventedBatches, sourceStore } from './fixtures.ts';

/**
 * The site's outbox on its own (no broker): which numbers it hands out, when it starts over from
 * the collector's ack, and what it remembers. The numbers are the store's (src/store/sequence.ts).
 */

let site: TempStore | undefined;
afterEach(() => {
  site?.cleanup();
  site = undefined;
});

/** Takes everything the outbox has now: [camera, seq, gap?] per sample. */
function drain(outbox: SampleOutbox): [string, number, [number, number]?][] {
  const out: [string, number, [number, number]?][] = [];
  for (let s = outbox.take(); s !== undefined; s = outbox.take()) out.push(s.gap ? [s.camera, s.seq, s.gap] : [s.camera, s.seq]);
  return out;
}

const seqsOf = (taken: [string, number, unknown?][], camera: string) => taken.filter(([c]) => c === camera).map(([, n]) => n);

describe('createSampleOutbox', () => {
  it('numbers per camera in commit order; a camera never acknowledged starts with what comes next, and is not replayed', () => {
    site = sourceStore();
    const batches = inventedBatches(1);
    site.store.insertSamples(batches[0]); // door: 1, 2; stacks: 1 — before the outbox existed
    let now = 1000;
    const outbox = createSampleOutbox(site.store, { clock: () => now });
    expect(drain(outbox)).toEqual([]);
    site.store.insertSamples(batches[1]);
    outbox.committed('door');
    outbox.committed('stacks');
    const taken = drain(outbox);
    expect(seqsOf(taken, 'door')).toEqual([3, 4]);
    expect(seqsOf(taken, 'stacks')).toEqual([2]);
    now += 100_000;
    outbox.reconnected(now);
    outbox.tick(now);
    expect(drain(outbox)).toEqual([]);
    expect(outbox.stats()).toMatchObject({ waiting: 0, unconfirmed: 0, replays: 0 });
  });

  it('an ack that leaves old samples unconfirmed sends them again from the ack; progress resets the wait; acks are remembered', () => {
    site = sourceStore();
    let now = 0;
    const outbox = createSampleOutbox(site.store, { clock: () => now, replay: { graceMs: 5000, afterMs: 30_000, maxMs: 120_000 } });
    for (const b of inventedBatches(2).slice(0, 10)) site.store.insertSamples(b);
    outbox.committed('door');
    expect(seqsOf(drain(outbox), 'door')).toEqual([...Array(20).keys()].map((i) => i + 1));
    const stream = outbox.stream;
    // An ack within the grace: no replay yet.
    now = 1000;
    expect(outbox.acknowledge('door', { stream, seq: 0 }, now)).toBe(false);
    // The same ack after the grace: everything from 1 again.
    now = 6000;
    expect(outbox.acknowledge('door', { stream, seq: 0 }, now)).toBe(true);
    expect(seqsOf(drain(outbox), 'door')).toEqual([...Array(20).keys()].map((i) => i + 1));
    // Progress: confirmed 12; then silence for 30 s: 13..20 again; the next wait is 60 s.
    now = 7000;
    expect(outbox.acknowledge('door', { stream, seq: 12 }, now)).toBe(false);
    expect(outbox.stats().unconfirmed).toBe(8); // door 13..20; stacks was never acknowledged, so it does not count
    now = 7000 + 29_000;
    outbox.tick(now);
    expect(drain(outbox)).toEqual([]);
    now = 7000 + 30_000;
    outbox.tick(now);
    expect(seqsOf(drain(outbox), 'door')).toEqual([13, 14, 15, 16, 17, 18, 19, 20]);
    now += 59_000;
    outbox.tick(now);
    expect(drain(outbox)).toEqual([]);
    now += 1000;
    outbox.tick(now);
    expect(seqsOf(drain(outbox), 'door').length).toBe(8);
    outbox.save();
    expect(site.store.getSetting(SettingKeys.confirmed)).toEqual({ stream, cameras: { door: 12 } });
    // A restarted site continues from the remembered ack: 13.. after its reconnection.
    const again = createSampleOutbox(site.store, { clock: () => now });
    expect(again.stream).toBe(stream);
    again.reconnected(now);
    expect(seqsOf(drain(again), 'door')).toEqual([13, 14, 15, 16, 17, 18, 19, 20]);
  });

  it('ignores acks of another stream and beyond its numbers; follows an ack that went back; marks a pruned hole as a gap', () => {
    site = sourceStore();
    let now = 0;
    const outbox = createSampleOutbox(site.store, { clock: () => now, replay: { graceMs: 1000 } });
    const batches = inventedBatches(3);
    for (const b of batches.slice(0, 40)) site.store.insertSamples(b);
    outbox.committed('stacks');
    drain(outbox);
    const { stream } = outbox;
    expect(outbox.acknowledge('stacks', { stream: '0123456789abcdef', seq: 5 }, now)).toBe(false);
    expect(outbox.acknowledge('stacks', { stream, seq: 41 }, now)).toBe(false);
    expect(outbox.acknowledge('stacks', { stream, seq: 30 }, now)).toBe(false);
    expect(outbox.acknowledge('stacks', { stream, seq: 20 }, now)).toBe(true);
    expect(seqsOf(drain(outbox), 'stacks')).toEqual([...Array(20).keys()].map((i) => i + 21));
    // The site prunes its oldest samples (stacks 1..k) and the collector, having lost its database, confirms 0.
    // batches are 30 s apart from 07:00:30: pruning before 07:15 removes the first 29 of each zone.
    const { deleted } = site.store.pruneSamples(Date.UTC(2026, 2, 2, 7, 15));
    expect(deleted).toBe(29 * 3);
    const first = site.store.sequenceRange('stacks').first;
    expect(first).toBe(30);
    now = 10_000;
    expect(outbox.acknowledge('stacks', { stream, seq: 0 }, now)).toBe(true);
    const taken = drain(outbox).filter(([c]) => c === 'stacks');
    expect(taken[0]).toEqual(['stacks', 30, [1, 29]]);
    expect(taken.slice(1).every((t) => t.length === 2)).toBe(true);
    expect(taken.map(([, n]) => n)).toEqual([...Array(11).keys()].map((i) => i + 30));
  });
});
