import { MAX_INTERVAL_MS, type Sample, type Store, type StoredSample } from './index.ts';

/**
 * What `residuum collect` writes to and reads from: the embedded SQLite store (this file's
 * {@link sqliteCollectorStore}) or the PostgreSQL central store (src/store/postgres/). Both keep
 * the same cameras, zones, events, settings and quarter-hour rollups, so that the hourly export
 * and the read-only dashboard work on either.
 */
export interface CollectorStore
  extends Pick<
    Store,
    | 'timeZone'
    | 'getCamera'
    | 'upsertCamera'
    | 'listCameras'
    | 'getZone'
    | 'upsertZone'
    | 'listZones'
    | 'zoneHistory'
    | 'listRollups'
    | 'listSamples'
    | 'listEvents'
    | 'insertEvent'
    | 'getSetting'
    | 'setSetting'
    | 'listSettings'
    | 'applyRetention'
    | 'samplesPrunedBefore'
  > {
  /**
   * Stores the samples that are new, all in one transaction; returns per sample `stored`,
   * `duplicate` (the same sample is stored: same end, interval, value, kind, quality) or
   * `conflict` (a different stored sample overlaps it; the stored one is kept, and returned).
   * Samples of the batch that overlap each other are judged in order, as if stored one by one.
   */
  storeSamples(samples: readonly Sample[]): SampleOutcome[];
  close(): void | Promise<void>;
}

export type SampleOutcome = { readonly outcome: 'stored' | 'duplicate' } | { readonly outcome: 'conflict'; readonly stored: StoredSample };

/** Same sample: the same interval, value, kind and quality. */
export function sameSample(a: Sample, b: Sample): boolean {
  return a.time === b.time && a.intervalMs === b.intervalMs && a.value === b.value && a.kind === b.kind && (a.quality ?? 0) === (b.quality ?? 0);
}

/** The collector's view of a SQLite store: `storeSamples` checks each sample against the stored ones of its zone. */
export function sqliteCollectorStore(store: Store): CollectorStore {
  /** A stored sample of the zone whose interval overlaps the sample's (the one with the same end first), if any. */
  function overlapping(s: Sample): StoredSample | undefined {
    const start = s.time - s.intervalMs;
    // A stored [t − i, t) overlaps [start, s.time) iff t > start and t − i < s.time; i ≤ MAX_INTERVAL_MS bounds t.
    const near = store.listSamples({ camera: s.camera, zone: s.zone, from: start + 1, to: s.time + MAX_INTERVAL_MS });
    return near.find((x) => x.time === s.time) ?? near.find((x) => x.time - x.intervalMs < s.time);
  }
  const batch = store.db.transaction((samples: readonly Sample[]): SampleOutcome[] =>
    samples.map((s): SampleOutcome => {
      const clash = overlapping(s);
      if (clash === undefined) {
        store.insertSample(s);
        return { outcome: 'stored' };
      }
      return sameSample(clash, s) ? { outcome: 'duplicate' } : { outcome: 'conflict', stored: clash };
    }),
  );
  return { ...store, storeSamples: (samples) => batch.immediate(samples), close: () => store.close() };
}
