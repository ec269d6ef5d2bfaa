/**
 * A first-in first-out queue of at most `limit` items on a ring buffer: adding to a full queue
 * drops the oldest item (returned, so the caller can count it). O(1) at both ends, which an
 * Array's `shift` is not for large queues.
 *
 * Example: `const q = boundedQueue<number>(2); q.push(1); q.push(2); q.push(3)` returns 1 (dropped);
 * `q.shift()` → 2.
 */
export interface BoundedQueue<T> {
  readonly length: number;
  readonly limit: number;
  /** Adds at the back; returns the dropped oldest item when the queue was full. */
  push(item: T): T | undefined;
  /** Puts an item back at the front (it is the oldest); returns it as dropped when the queue is full. */
  unshift(item: T): T | undefined;
  /** Takes the oldest item, or undefined when empty. */
  shift(): T | undefined;
}

export function boundedQueue<T>(limit: number): BoundedQueue<T> {
  if (!(Number.isInteger(limit) && limit >= 1)) throw new RangeError(`limit must be a whole number ≥ 1, got ${String(limit)}`);
  // Grows by doubling up to `limit`, so a large limit costs nothing until it is used.
  let buffer: (T | undefined)[] = new Array(Math.min(limit, 16));
  let head = 0;
  let length = 0;
  const grow = () => {
    if (length < buffer.length || buffer.length === limit) return;
    const next: (T | undefined)[] = new Array(Math.min(limit, buffer.length * 2));
    for (let i = 0; i < length; i++) next[i] = buffer[(head + i) % buffer.length];
    buffer = next;
    head = 0;
  };
  const shift = (): T | undefined => {
    if (length === 0) return undefined;
    const item = buffer[head];
    buffer[head] = undefined;
    head = (head + 1) % buffer.length;
    length--;
    return item;
  };
  return {
    get length() {
      return length;
    },
    limit,
    push(item) {
      const dropped = length === limit ? shift() : undefined;
      grow();
      buffer[(head + length) % buffer.length] = item;
      length++;
      return dropped;
    },
    unshift(item) {
      if (length === limit) return item;
      grow();
      head = (head - 1 + buffer.length) % buffer.length;
      buffer[head] = item;
      length++;
      return undefined;
    },
    shift,
  };
}
