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

/** Words for an error shown to a person: what happened and what to do, without the API's field paths. */
export function explain(error) {
  if (!(error instanceof ApiError)) return 'The Residuum service is not answering. Check that it is running and that this computer can reach it; the page keeps trying.';
  if (error.status === 401) {
    if (/not accepted/.test(error.message)) return 'Not allowed: the key in use was not accepted. Enter it again with “Enter key” at the top right.';
    if (/viewing needs a key/.test(error.message)) return 'This site needs a key to show counts. Enter it with “Enter key” at the top right.';
    return 'Not allowed: this needs the admin key. Enter it with “Enter key” at the top right and try again.';
  }
  if (error.status === 403) return `Not allowed: ${error.message}.`;
  if (error.status === 429) return 'Too many wrong keys from this computer: wait a minute, then try again.';
  if (error.status === 404) return `Not found: ${error.message}.`;
  if (error.status >= 500) return 'The service ran into a problem it could not handle. Try again; if it stays, look at the service log.';
  return sentence(error.message);
}

/** "request body: capacity must be …" → "Capacity must be …." (the field path stays for the details). */
function sentence(text) {
  const plain = String(text).replace(/^(request body|query parameter)s?:?\s*/i, '');
  const first = plain.charAt(0).toUpperCase() + plain.slice(1);
  return /[.!?]$/.test(first) ? first : `${first}.`;
}

/**
 * After this much silence on the live stream the page asks GET /api/health whether the service
 * still answers (an idle site sends only a keep-alive every 15 s, so silence alone proves nothing).
 */
export const STREAM_CHECK_MS = 8_000;
/** How long that question may take before the service counts as not answering. */
export const CHECK_TIMEOUT_MS = 4_000;
/** While the live stream is unavailable, GET /api/live is polled this often. */
export const POLL_MS = 5_000;

/**
 * Follows GET /api/live/stream (Server-Sent Events read through fetch, so the key can go in a
 * header) and falls back to polling GET /api/live whenever the stream is not open: refused
 * (any answer but 200, e.g. 429 or 503 when its slots are full, with the server's message),
 * broken, or silent while GET /api/health does not answer either (see {@link STREAM_CHECK_MS}).
 *
 * Calls onData(state) per `live` event or poll, and onState(state, info) with state
 * - `live`: the stream is open;
 * - `polling`: the stream is unavailable (`info.reason`), the page polls every POLL_MS;
 * - `lost`: neither answers; `info.lastContact` is when the service last answered (epoch ms, or
 *   undefined if it never did);
 * - `refused`: a key is needed.
 */
export function followLive(onData, onState) {
  let stopped = false;
  let controller;
  let generation = 0;
  let lastContact;
  let pollTimer;
  let state;
  let wake;

  const setState = (next, info = {}) => {
    state = next;
    onState(next, { lastContact, ...info });
  };
  const contact = () => {
    lastContact = Date.now();
  };

  async function pollOnce(mine, reason) {
    try {
      const res = await fetch('/api/live', { headers: headers(), cache: 'no-store', signal: AbortSignal.timeout(POLL_MS) });
      if (mine !== generation || stopped) return;
      if (res.status === 401 || res.status === 403) {
        setState('refused');
        return;
      }
      if (!res.ok) throw await failure(res);
      const data = await res.json();
      if (mine !== generation || stopped) return;
      const back = state === 'lost';
      contact();
      if (state !== 'live') setState('polling', { reason });
      // The service is back after an outage: try the stream again now rather than after the backoff.
      if (back) wake?.();
      onData(data);
    } catch {
      if (mine === generation && !stopped && state !== 'live') setState('lost');
    }
  }

  /** Whether the service answers GET /api/health within CHECK_TIMEOUT_MS. */
  async function answers() {
    try {
      const res = await fetch('/api/health', { cache: 'no-store', signal: AbortSignal.timeout(CHECK_TIMEOUT_MS) });
      return res.ok;
    } catch {
      return false;
    }
  }

  function startPolling(mine, reason) {
    if (pollTimer) return;
    pollOnce(mine, reason);
    pollTimer = setInterval(() => pollOnce(mine, reason), POLL_MS);
  }
  function stopPolling() {
    clearInterval(pollTimer);
    pollTimer = undefined;
  }

  async function run(mine) {
    let delay = 1000;
    while (!stopped && mine === generation) {
      controller = new AbortController();
      let reason = 'the connection was interrupted';
      let wait = delay;
      let watchdog;
      let reading = false;
      try {
        const res = await fetch('/api/live/stream', { headers: headers(), signal: controller.signal, cache: 'no-store' });
        if (res.status === 401 || res.status === 403) {
          stopPolling();
          setState('refused');
          return;
        }
        if (!res.ok || !res.body) {
          // Refused (e.g. 503 or 429 when the stream's slots are full): poll, try the stream again later.
          contact();
          const refusal = await failure(res);
          reason = refusal.message;
          const retry = Number(res.headers.get('retry-after'));
          wait = Math.max(delay, Number.isFinite(retry) && retry > 0 ? retry * 1000 : 30_000);
          throw refusal;
        }
        contact();
        stopPolling();
        setState('live');
        delay = 1000;
        const reader = res.body.pipeThrough(new TextDecoderStream()).getReader();
        const ctl = controller;
        reading = true;
        const arm = () => {
          clearTimeout(watchdog);
          watchdog = setTimeout(async () => {
            const up = await answers();
            if (!reading) return; // the stream ended meanwhile; the loop has taken over
            if (up) arm();
            else {
              // The stream went quiet and the service does not answer: say so now, then reconnect.
              if (mine === generation && !stopped) setState('lost');
              ctl.abort(new Error('silent'));
            }
          }, STREAM_CHECK_MS);
        };
        arm();
        let buffer = '';
        for (;;) {
          const { value, done } = await reader.read();
          if (done) break;
          contact();
          arm();
          buffer += value.replace(/\r\n?/g, '\n');
          let end;
          while ((end = buffer.indexOf('\n\n')) >= 0) {
            const block = buffer.slice(0, end);
            buffer = buffer.slice(end + 2);
            dispatch(block);
          }
        }
      } catch (error) {
        if (stopped || mine !== generation) return;
        if (error?.name === 'AbortError' && controller.signal.reason?.message !== 'silent') return;
      } finally {
        reading = false;
        clearTimeout(watchdog);
      }
      if (stopped || mine !== generation) return;
      // The stream is gone; the first poll tells (within POLL_MS) whether the service answers at all.
      if (state === 'live') state = 'checking';
      startPolling(mine, reason);
      await new Promise((r) => {
        const timer = setTimeout(r, wait);
        wake = () => {
          clearTimeout(timer);
          r();
        };
      });
      wake = undefined;
      delay = Math.min(delay * 2, 30_000);
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
    stopPolling();
    state = undefined;
    run(generation);
  };
  start();
  return {
    restart: start,
    stop() {
      stopped = true;
      stopPolling();
      controller?.abort();
    },
  };
}
