import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { openStore, type OpenStoreOptions, type Store } from '../../src/store/index.ts';

/** A store in its own fresh temporary directory; `cleanup()` closes it and deletes the directory. */
export interface TempStore {
  store: Store;
  readonly dir: string;
  readonly file: string;
  /** Closes the current store and opens the same file again. */
  reopen(options?: OpenStoreOptions): Store;
  cleanup(): void;
}

export function tempStore(options: OpenStoreOptions = {}): TempStore {
  const dir = mkdtempSync(join(tmpdir(), 'residuum-store-'));
  const file = join(dir, 'test.db');
  const t: TempStore = {
    store: openStore(file, options),
    dir,
    file,
    reopen(again = options) {
      if (t.store.db.open) t.store.close();
      t.store = openStore(file, again);
      return t.store;
    },
    cleanup() {
      if (t.store.db.open) t.store.close();
      rmSync(dir, { recursive: true, force: true });
    },
  };
  return t;
}

/** A triangle covering half the frame: enough for a valid zone. */
export const HALF: readonly (readonly [number, number])[] = [
  [0, 0],
  [1, 0],
  [1, 1],
];

/** Adds camera `cam` with room zone `room` and shelf zone `shelf`, created at `time`. */
export function addCameraWithZones(store: Store, time = 0): void {
  store.upsertCamera({ id: 'cam', name: 'Camera' }, { time });
  store.upsertZone('cam', { id: 'room', kind: 'room', polygon: HALF }, { time });
  store.upsertZone('cam', { id: 'shelf', kind: 'shelf', polygon: HALF }, { time });
}
