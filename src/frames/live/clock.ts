/**
 * The time source of the live camera sources: wall-clock milliseconds and timers, injectable so
 * that tests can drive time themselves.
 */
export interface Clock {
  /** Milliseconds since the epoch (like Date.now()). */
  now(): number;
  /** Calls `callback` once after `ms` milliseconds; returns a handle for {@link Clock.clearTimeout}. */
  setTimeout(callback: () => void, ms: number): unknown;
  /** Cancels a timer made by {@link Clock.setTimeout}; a handle that has fired or is undefined is ignored. */
  clearTimeout(handle: unknown): void;
}

/** The real clock: Date.now and Node's timers (which keep the process alive while pending). */
export const systemClock: Clock = {
  now: () => Date.now(),
  setTimeout: (callback, ms) => setTimeout(callback, ms),
  clearTimeout: (handle) => {
    if (handle !== undefined) clearTimeout(handle as NodeJS.Timeout);
  },
};
