// The JSON API as the page uses it. The key lives in sessionStorage (this tab only) and is sent
// as `Authorization: Bearer …`; no cookies are used.

const KEY = 'residuum.key';
const listeners = new Set();

export function getKey() {
  return sessionStorage.getItem(KEY) ?? '';
}

export function setKey(key) {
  if (key) sessionStorage.setItem(KEY, key);
  else sessionStorage.removeItem(KEY);
  for (const l of listeners) l(key);
}

/** Calls `fn(key)` whenever the key changes. */
export function onKeyChange(fn) {
  listeners.add(fn);
}

/** An API error: the HTTP status and the server's message. */
export class ApiError extends Error {
  constructor(status, message) {
    super(message);
    this.status = status;
  }
}

function headers(extra = {}, key = getKey()) {
  return key ? { ...extra, Authorization: `Bearer ${key}` } : extra;
}

async function failure(res) {
  let message = `${res.status} ${res.statusText}`;
  try {
    const body = await res.json();
    if (body && typeof body.error === 'string') message = body.error;
  } catch {
    // not JSON
  }
  return new ApiError(res.status, message);
}

/** GET/PUT/POST JSON; throws ApiError. */
export async function api(path, { method = 'GET', body, key } = {}) {
  const init = { method, headers: headers(body === undefined ? {} : { 'Content-Type': 'application/json' }, key), cache: 'no-store' };
  if (body !== undefined) init.body = JSON.stringify(body);
  const res = await fetch(path, init);
  if (!res.ok) throw await failure(res);
  return res.status === 204 ? null : res.json();
}

/** GET as a Blob (images, CSV); throws ApiError. */
export async function apiBlob(path) {
  const res = await fetch(path, { headers: headers(), cache: 'no-store' });
  if (!res.ok) throw await failure(res);
  return { blob: await res.blob(), name: fileName(res.headers.get('content-disposition')) };
}

function fileName(disposition) {
  const m = /filename="?([^";]+)"?/.exec(disposition ?? '');
  return m ? m[1] : undefined;
}

/** Words for an error shown to a person. */
export function explain(error) {
  if (!(error instanceof ApiError)) return `Could not reach the service (${error?.message ?? error}).`;
  if (error.status === 401) {
    if (/not accepted/.test(error.message)) return 'Not allowed: the key in use was not accepted. Enter it again with “Enter key” at the top right.';
    if (/viewing needs a key/.test(error.message)) return 'This site needs a key to show counts. Enter it with “Enter key” at the top right.';
    return 'Not allowed: this needs the admin key. Enter it with “Enter key” at the top right and try again.';
  }
  if (error.status === 403) return `Not allowed: ${error.message}.`;
  if (error.status === 429) return `Paused: ${error.message}.`;
  return error.message;
}

/**
 * Follows GET /api/live/stream (Server-Sent Events read through fetch, so the key can go in a
 * header). Calls onData(state) per `live` event and onState('live' | 'reconnecting' | 'refused').
 */
export function followLive(onData, onState) {
  let stopped = false;
  let controller;
  let generation = 0;

  async function run(mine) {
    let delay = 1000;
    while (!stopped && mine === generation) {
      controller = new AbortController();
      try {
        const res = await fetch('/api/live/stream', { headers: headers(), signal: controller.signal, cache: 'no-store' });
        if (res.status === 401 || res.status === 403) {
          onState('refused');
          return;
        }
        if (!res.ok || !res.body) throw new Error(`HTTP ${res.status}`);
        onState('live');
        delay = 1000;
        const reader = res.body.pipeThrough(new TextDecoderStream()).getReader();
        let buffer = '';
        for (;;) {
          const { value, done } = await reader.read();
          if (done) break;
          buffer += value.replace(/\r\n?/g, '\n');
          let end;
          while ((end = buffer.indexOf('\n\n')) >= 0) {
            const block = buffer.slice(0, end);
            buffer = buffer.slice(end + 2);
            dispatch(block);
          }
        }
      } catch (error) {
        if (stopped || mine !== generation || error?.name === 'AbortError') return;
      }
      if (stopped || mine !== generation) return;
      onState('reconnecting');
      await new Promise((r) => setTimeout(r, delay));
      delay = Math.min(delay * 2, 15000);
    }
  }

  function dispatch(block) {
    let event = 'message';
    const data = [];
    for (const line of block.split('\n')) {
      if (line.startsWith(':')) continue;
      const colon = line.indexOf(':');
      const field = colon < 0 ? line : line.slice(0, colon);
      const value = colon < 0 ? '' : line.slice(colon + 1).replace(/^ /, '');
      if (field === 'event') event = value;
      else if (field === 'data') data.push(value);
    }
    if (event === 'live' && data.length > 0) {
      try {
        onData(JSON.parse(data.join('\n')));
      } catch {
        // a damaged event is skipped; the next one carries the whole state again
      }
    }
  }

  const start = () => {
    generation++;
    controller?.abort();
    run(generation);
  };
  start();
  return {
    restart: start,
    stop() {
      stopped = true;
      controller?.abort();
    },
  };
}
