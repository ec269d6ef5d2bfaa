import type { EventInput } from '../domain/event.ts';
import type { Sample } from '../domain/sample.ts';
import type { Store } from './openStore.ts';
import type { Log } from '../domain/log.ts';

/**
 * Who hears of what the store committed: an output such as MQTT publishing, or the camera
 * worker's relay to the main thread. The store does not know which.
 */
export interface CommitListener {
  publishSample(sample: Sample): void;
  publishEvent(event: EventInput): void;
}

/**
 * The store as the camera pipeline should see it when MQTT is configured: every method is the
 * store's own, except that `insertSample`, `insertSamples` and `insertEvent` hand what they
 * committed to the publisher afterwards. A write that throws publishes nothing, so MQTT never
 * carries a sample or event the database does not have; a publisher that throws (it should not)
 * is logged and does not fail the write, which has already been committed.
 *
 * ```ts
 * const pipeline = createCameraPipeline({ camera, store: reportingStore(store, publisher), … });
 * ```
 */
export function reportingStore(store: Store, publisher: CommitListener, log: Log = () => {}): Store {
  const quietly = (what: string, publish: () => void) => {
    try {
      publish();
    } catch (error) {
      log(`mqtt: could not queue ${what} (${(error as Error).message})`, 'error');
    }
  };
  const wrapped: Partial<Store> = {
    insertSample(sample) {
      store.insertSample(sample);
      quietly('a sample', () => publisher.publishSample(sample));
    },
    insertSamples(samples) {
      const n = store.insertSamples(samples);
      quietly('samples', () => {
        for (const s of samples) publisher.publishSample(s);
      });
      return n;
    },
    insertEvent(event) {
      const id = store.insertEvent(event);
      quietly('an event', () => publisher.publishEvent(event));
      return id;
    },
  };
  return new Proxy(store, {
    get(target, key) {
      if (typeof key === 'string' && Object.hasOwn(wrapped, key)) return wrapped[key as keyof Store];
      return Reflect.get(target, key);
    },
  });
}
