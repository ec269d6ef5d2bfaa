import fc from 'fast-check';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { BUCKET_MS, bucketPieces, MAX_INTERVAL_MS, type Rollup, type Sample } from '../../src/store/index.ts';
import { addCameraWithZones, tempStore, type TempStore } from './tempStore.ts';

const B = BUCKET_MS;
const T0 = Date.UTC(2026, 0, 5, 8); // a bucket boundary

describe('bucketPieces', () => {
  it('keeps an interval inside one bucket whole', () => {
    expect(bucketPieces(T0 + 10_000, 5000)).toEqual([{ bucketStart: T0, overlapMs: 5000, ends: true }]);
  });

  it('splits an interval straddling a boundary proportionally; the sample counts where it ends', () => {
    expect(bucketPieces(T0 + 4000, 10_000)).toEqual([
      { bucketStart: T0 - B, overlapMs: 6000, ends: false },
      { bucketStart: T0, overlapMs: 4000, ends: true },
    ]);
  });

  it('a sample ending exactly on a boundary belongs wholly to the bucket before it', () => {
    expect(bucketPieces(T0, 5000)).toEqual([{ bucketStart: T0 - B, overlapMs: 5000, ends: true }]);
  });

  it('an hour-long interval covers 4 aligned or 5 unaligned buckets, overlaps adding up', () => {
    expect(bucketPieces(T0, MAX_INTERVAL_MS).map((p) => p.overlapMs)).toEqual([B, B, B, B]);
    const unaligned = bucketPieces(T0 + 60_000, MAX_INTERVAL_MS);
    expect(unaligned.map((p) => p.overlapMs)).toEqual([B - 60_000, B, B, B, 60_000]);
    expect(unaligned.filter((p) => p.ends).map((p) => p.bucketStart)).toEqual([T0]);
  });
});

describe('rollups', () => {
  let t: TempStore;
  beforeEach(() => {
    t = tempStore();
    addCameraWithZones(t.store);
  });
  afterEach(() => t.cleanup());

  it('are updated with each sample: hand-computed example', () => {
    // 2 people for 10 s ending 4 s after the boundary: 6 s before, 4 s after.
    t.store.insertSample({ time: T0 + 4000, camera: 'cam', zone: 'room', value: 2, kind: 'count', intervalMs: 10_000 });
    // 0.5 (smoothed) for 5 s, flagged.
    t.store.insertSample({ time: T0 + 9000, camera: 'cam', zone: 'room', value: 0.5, kind: 'count', intervalMs: 5000, quality: 1 });
    // 0 people for 60 s: covered but not occupied.
    t.store.insertSample({ time: T0 + 69_000, camera: 'cam', zone: 'room', value: 0, kind: 'count', intervalMs: 60_000 });
    expect(t.store.listRollups()).toEqual([
      { camera: 'cam', zone: 'room', bucketStart: T0 - B, samples: 0, weightedSum: 2e6 * 6000, min: 2, max: 2, occupiedMs: 6000, flaggedMs: 0, coveredMs: 6000 },
      {
        camera: 'cam',
        zone: 'room',
        bucketStart: T0,
        samples: 3,
        weightedSum: 2e6 * 4000 + 0.5e6 * 5000,
        min: 0,
        max: 2,
        occupiedMs: 9000,
        flaggedMs: 5000,
        coveredMs: 69_000,
      },
    ]);
  });

  it('a rebuild restores exactly the buckets in its range and leaves the others', () => {
    for (let i = 1; i <= 12; i++) {
      t.store.insertSample({ time: T0 + i * 300_000, camera: 'cam', zone: 'room', value: i / 3, kind: 'count', intervalMs: 300_000 });
    }
    const good = t.store.listRollups();
    expect(good).toHaveLength(4);
    t.store.db.exec('UPDATE rollups SET covered_ms = 1, samples = 99');
    const result = t.store.rebuildRollups(T0 + B + 1, T0 + 3 * B - 1); // widened to [T0+B, T0+3B)
    expect(result).toEqual({ from: T0 + B, to: T0 + 3 * B, rows: 2 });
    const after = t.store.listRollups();
    expect(after.slice(1, 3)).toEqual(good.slice(1, 3));
    expect(after[0].coveredMs).toBe(1);
    expect(after[3].samples).toBe(99);
    t.store.rebuildRollups();
    expect(t.store.listRollups()).toEqual(good);
  });

  it('incremental rollups equal a rebuild and an independent reference, for random samples in random order', () => {
    // Per zone: a run of samples with random intervals and gaps, never overlapping.
    const run = fc.array(
      fc.record({
        gap: fc.oneof(fc.constant(0), fc.integer({ min: 1, max: 2 * B })),
        interval: fc.oneof(fc.integer({ min: 1, max: 10_000 }), fc.integer({ min: 1, max: MAX_INTERVAL_MS })),
        micro: fc.oneof(fc.constant(0), fc.integer({ min: 0, max: 1000 * 1e6 })),
        quality: fc.integer({ min: 0, max: 31 }),
      }),
      { minLength: 1, maxLength: 40 },
    );
    fc.assert(
      fc.property(run, run, fc.integer({ min: 0, max: 2 ** 31 }), fc.integer({ min: 0, max: B - 1 }), (rooms, shelves, seed, shift) => {
        const local = tempStore();
        try {
          addCameraWithZones(local.store);
          const samples: Sample[] = [];
          for (const [zone, list] of [['room', rooms], ['shelf', shelves]] as const) {
            let end = T0 + shift;
            for (const s of list) {
              end += s.gap + s.interval;
              const value = zone === 'room' ? s.micro / 1e6 : s.micro / 1e9;
              samples.push({ time: end, camera: 'cam', zone, value, kind: zone === 'room' ? 'count' : 'fill', intervalMs: s.interval, quality: s.quality });
            }
          }
          // Shuffle deterministically from the seed (insertion order must not matter).
          let x = seed;
          const order = samples.map((s) => {
            x = (x * 1103515245 + 12345) % 2 ** 31;
            return { s, k: x };
          });
          order.sort((a, b) => a.k - b.k);
          for (const { s } of order) local.store.insertSample(s);

          const incremental = local.store.listRollups();
          expect(incremental).toEqual(reference(samples));
          local.store.rebuildRollups();
          expect(local.store.listRollups()).toEqual(incremental);
        } finally {
          local.cleanup();
        }
      }),
      { numRuns: 60 },
    );
  });

  it('arbitrary doubles: incremental equals rebuild bit for bit', () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: 0, max: 1000, noNaN: true }), { minLength: 1, maxLength: 50 }), (values) => {
        const local = tempStore();
        try {
          addCameraWithZones(local.store);
          // Reverse time order, 7 s intervals, so rounding and order both get exercised.
          values.forEach((value, i) =>
            local.store.insertSample({ time: T0 + (values.length - i) * 7000, camera: 'cam', zone: 'room', value, kind: 'count', intervalMs: 7000 }),
          );
          const incremental = local.store.listRollups();
          local.store.rebuildRollups();
          expect(local.store.listRollups()).toEqual(incremental);
        } finally {
          local.cleanup();
        }
      }),
      { numRuns: 30 },
    );
  });

  it('refuses to rebuild before the retention horizon', () => {
    t.store.pruneSamples(T0 + 100);
    expect(t.store.samplesPrunedBefore()).toBe(T0);
    expect(() => t.store.rebuildRollups(T0 - B)).toThrow(/^rebuildRollups from: .* before the retention horizon/);
    expect(t.store.rebuildRollups()).toEqual({ from: T0, to: 9e15, rows: 0 });
  });
});

/**
 * Straightforward reference: walk every sample's interval bucket by bucket with plain arithmetic
 * (values are whole micro-units here, so the weighted sum is exact in doubles).
 */
function reference(samples: readonly Sample[]): Rollup[] {
  const map = new Map<string, { -readonly [K in keyof Rollup]: Rollup[K] }>();
  for (const s of samples) {
    for (let b = Math.floor((s.time - s.intervalMs) / B) * B; b < s.time; b += B) {
      const overlap = Math.min(s.time, b + B) - Math.max(s.time - s.intervalMs, b);
      const key = `${s.camera}/${s.zone}/${String(b).padStart(16, '0')}`;
      const r = map.get(key) ?? { camera: s.camera, zone: s.zone, bucketStart: b, samples: 0, weightedSum: 0, min: Infinity, max: -Infinity, occupiedMs: 0, flaggedMs: 0, coveredMs: 0 };
      if (s.time - 1 >= b && s.time - 1 < b + B) r.samples += 1;
      r.weightedSum += Math.round(s.value * 1e6) * overlap;
      r.min = Math.min(r.min, s.value);
      r.max = Math.max(r.max, s.value);
      if (s.value > 0) r.occupiedMs += overlap;
      if ((s.quality ?? 0) !== 0) r.flaggedMs += overlap;
      r.coveredMs += overlap;
      map.set(key, r);
    }
  }
  return [...map.entries()].sort(([a], [b]) => (a < b ? -1 : 1)).map(([, r]) => r);
}
