// "Now": each camera's status and each zone's count or fill, from the live stream; today's peak
// per zone; and a camera's recent events. Figures that are not current look it: greyed, with the
// time they were last seen.
import { api, explain } from './api.js';
import { $, h, replace } from './dom.js';
import { ago, clock, dateTime, eventWords, levelWords, percent, statusReason, statusWords } from './format.js';

/**
 * A counting camera whose last picture is older than this shows its figures as not current —
 * or older than three of its usual gaps between pictures, for a camera that sends few (a drop
 * folder filled once a minute is not late after 20 s).
 */
export const FRESH_MS = 20_000;
/** How many recent gaps between a camera's pictures give its usual gap (their median). */
const GAPS_KEPT = 9;
/** How often today's peaks and the event log are fetched again while Now is shown. */
const REFRESH_MS = 15_000;

export function createNowView(app) {
  const root = $('#cameras');
  const eventsCamera = $('#events-camera');
  let last;
  /** Browser time when `last` arrived (its `time` is the server's clock). */
  let receivedAt = 0;
  let today = new Map();
  /** Per camera: the last picture time seen and the recent gaps between pictures, ms. */
  const pace = new Map();
  let visible = false;
  let refreshTimer;

  app.onLive((state) => {
    last = state;
    receivedAt = Date.now();
    for (const c of state.cameras) notePicture(c);
    syncEventCameras();
    if (visible) render();
  });
  app.onConnection(() => visible && last && render());
  // Keep "x s ago" and the freshness of each card current between events.
  setInterval(() => visible && last && render(), 5000);
  eventsCamera.addEventListener('change', loadEvents);

  function notePicture(c) {
    if (!c.lastFrameAt) return;
    const p = pace.get(c.camera) ?? { at: c.lastFrameAt, gaps: [] };
    if (c.lastFrameAt > p.at) {
      p.gaps.push(c.lastFrameAt - p.at);
      if (p.gaps.length > GAPS_KEPT) p.gaps.shift();
    }
    p.at = c.lastFrameAt;
    pace.set(c.camera, p);
  }

  /** How old a camera's last picture may be while its figures count as current, ms. */
  function freshFor(camera) {
    const gaps = [...(pace.get(camera)?.gaps ?? [])].sort((a, b) => a - b);
    return gaps.length === 0 ? FRESH_MS : Math.max(FRESH_MS, 3 * gaps[gaps.length >> 1]);
  }

  /** The server's clock now, as far as the page can tell (its state's time plus the time since). */
  const serverNow = () => last.time + (Date.now() - receivedAt);

  function render() {
    const tz = app.site.timeZone;
    const now = serverNow();
    const connected = app.connected();
    replace(root, last.cameras.map((c) => cameraCard(c, tz, now, connected, today, freshFor(c.camera))));
    $('#now-updated').textContent = connected ? `· updated ${clock(last.time, tz)}` : `· last seen ${clock(last.time, tz)}`;
    $('#now-summary').textContent = connected ? summary(last, now, true, freshFor) : `Not connected. Last seen at ${clock(last.time, tz)}: ${summary(last, now, false, freshFor)}`;
  }

  async function loadToday() {
    try {
      const answer = await api('/api/today');
      today = new Map(answer.zones.map((z) => [`${z.camera}/${z.zone}`, z]));
      if (visible && last) render();
    } catch {
      // the peaks stay as they were; the connection banner tells why
    }
  }

  function syncEventCameras() {
    const ids = last.cameras.map((c) => c.camera).join('\n');
    if (eventsCamera.dataset.ids === ids) return;
    const keep = eventsCamera.value;
    eventsCamera.dataset.ids = ids;
    replace(eventsCamera, last.cameras.map((c) => h('option', { value: c.camera }, c.name)));
    if (last.cameras.some((c) => c.camera === keep)) eventsCamera.value = keep;
    if (visible) loadEvents();
  }

  async function loadEvents() {
    const id = eventsCamera.value;
    if (!id) return;
    const tz = app.site.timeZone;
    const names = new Map((last?.cameras.find((c) => c.camera === id)?.zones ?? []).map((z) => [z.id, z.name]));
    let events;
    try {
      events = (await api(`/api/cameras/${encodeURIComponent(id)}/events?days=7`)).events;
      $('#events-error').textContent = '';
    } catch (e) {
      $('#events-error').textContent = explain(e);
      return;
    }
    replace(
      $('#events-list'),
      events.length === 0
        ? h('li', { class: 'hint' }, 'Nothing in the last 7 days.')
        : runs(events, tz).map(({ event: e, times, first }) =>
            h(
              'li',
              { class: 'event', dataset: { type: e.type, times } },
              h('span', { class: 'when' }, times > 1 && dateTime(first, tz) !== dateTime(e.time, tz) ? `${dateTime(first, tz)} – ${clock(e.time, tz).slice(0, 5)}` : dateTime(e.time, tz)),
              h('span', { class: 'what' }, eventWords(e, names, times)),
              h('span', { class: 'by' }, e.by === 'admin' ? 'by the admin' : 'by Residuum, automatically'),
            ),
          ),
    );
  }

  return {
    show() {
      visible = true;
      if (last) render();
      loadToday();
      loadEvents();
      clearInterval(refreshTimer);
      refreshTimer = setInterval(() => {
        loadToday();
        loadEvents();
      }, REFRESH_MS);
    },
    hide() {
      visible = false;
      clearInterval(refreshTimer);
    },
  };
}

/**
 * A zone hovering at its capacity goes over it many times an hour: those events come as one line
 * per zone and local hour (at the place of the newest); every other event has a line of its own.
 */
function runs(events, tz) {
  const out = [];
  const open = new Map();
  for (const e of events) {
    if (e.type !== 'capacity-exceeded') {
      out.push({ event: e, times: 1, first: e.time });
      continue;
    }
    const hour = dateTime(e.time, tz).replace(/:\d\d$/, '');
    const key = `${e.zone}\u0000${hour}`;
    const run = open.get(key);
    if (run) {
      run.times++;
      run.first = e.time;
    } else {
      const fresh = { event: e, times: 1, first: e.time };
      open.set(key, fresh);
      out.push(fresh);
    }
  }
  return out;
}

function summary(state, now, connected, freshFor) {
  const counting = state.cameras.filter((c) => c.status === 'counting' && fresh(c, now, freshFor(c.camera)));
  const rooms = counting.flatMap((c) => c.zones.filter((z) => z.kind === 'room'));
  const people = rooms.reduce((s, z) => s + z.shown, 0);
  const busy = rooms.filter((z) => z.level === 'near' || z.level === 'over').length;
  const low = counting.flatMap((c) => c.zones).filter((z) => z.level === 'low').length;
  const parts = [];
  if (rooms.length > 0) parts.push(`${people} ${people === 1 ? 'person' : 'people'}${connected ? ' now' : ''} in ${rooms.length} room zone${rooms.length === 1 ? '' : 's'}`);
  if (busy > 0) parts.push(`${busy} filling up or over capacity`);
  if (low > 0) parts.push(`${low} shelf section${low === 1 ? '' : 's'} running low`);
  const off = state.cameras.length - counting.length;
  if (off > 0) parts.push(`${off} camera${off === 1 ? '' : 's'} not counting`);
  return parts.length > 0 ? `${parts.join(' · ')}.` : 'No zones are being counted.';
}

/** Whether a camera's last picture is at most `limit` ms old, so that its figures count as current. */
function fresh(c, now, limit) {
  return c.lastFrameAt !== undefined && c.lastFrameAt !== null && now - c.lastFrameAt <= limit;
}

function meta(c, tz, now) {
  return c.lastFrameAt ? `Last picture ${clock(c.lastFrameAt, tz)} (${ago(c.lastFrameAt, now)} ago)` : 'No picture yet';
}

function cameraCard(c, tz, now, connected, today, limit) {
  const counting = c.status === 'counting';
  // Current: the service answers and the camera counted a picture lately. Otherwise the last
  // figures stay visible, greyed and marked with when they were seen.
  const current = connected && (!counting || fresh(c, now, limit));
  const reason = !connected
    ? `Not connected to the service: these figures are from ${clock(Math.min(now, c.lastFrameAt ?? now), tz)} or earlier and may have changed.`
    : counting && !current
      ? `No new picture for ${ago(c.lastFrameAt, now)}: the figures are from ${clock(c.lastFrameAt, tz)} and may have changed. Waiting for the camera…`
      : statusReason(c, now);
  const learning = c.learn && c.learn.state === 'learning' && counting
    ? h('p', { class: 'learn-line' }, `Learning the empty scene again: ${Math.round(c.learn.progress * 100)} % — counts use the old one meanwhile.`)
    : c.learn && c.learn.state === 'rejected' && c.learn.modelId !== c.modelId
      ? h('p', { class: 'learn-line' }, `The empty scene learned last was not used: ${c.learn.reason ?? 'it turned out poor'}. Counts go on with the one from before.`)
      : null;
  const pill = !connected ? 'Last seen' : counting && !current ? 'Waiting' : (statusWords[c.status] ?? c.status);
  return h(
    'article',
    { class: 'camera', dataset: { camera: c.camera, status: c.status, frameAt: c.lastFrameAt ?? '', current: String(current) } },
    h('header', {}, h('h2', {}, c.name), h('span', { class: 'pill', dataset: { status: current ? c.status : 'old' } }, pill)),
    h('p', { class: 'meta' }, meta(c, tz, now)),
    reason ? h('p', { class: 'why' }, reason) : null,
    learning,
    h('ul', { class: 'zones' }, c.zones.map((z) => zoneRow(c, z, current, today.get(`${c.camera}/${z.id}`), tz))),
  );
}

function zoneRow(c, z, current, day, tz) {
  const known = z.level !== 'unknown';
  let figure;
  let share = 0;
  let mark;
  if (z.kind === 'shelf') {
    figure = [h('span', { class: 'big', dataset: { role: 'shown' } }, known ? percent(z.fill) : '—'), known ? h('span', { class: 'of' }, `full${current ? ' now' : ''} · ${z.shown} item${z.shown === 1 ? '' : 's'}`) : null];
    share = z.fill;
    mark = z.lowStock;
  } else {
    const unit = `${z.shown === 1 ? 'person' : 'people'}${current ? ' now' : ''}`;
    figure = [
      h('span', { class: 'big', dataset: { role: 'shown' } }, known ? String(z.shown) : '—'),
      z.capacity !== undefined ? h('span', { class: 'of' }, known ? `of ${z.capacity} · ${unit}` : `of ${z.capacity}`) : h('span', { class: 'of' }, known ? unit : ''),
    ];
    share = z.capacity ? z.shown / z.capacity : 0;
  }
  const bar = h('span');
  bar.style.width = known ? `${Math.min(100, share * 100)}%` : '0%';
  const markEl = mark !== undefined ? h('i', { title: `running low below ${percent(mark)}` }) : null;
  if (markEl) markEl.style.left = `${mark * 100}%`;
  const words = !known
    ? `${levelWords.unknown}: camera ${c.status === 'learning' ? 'is learning' : (statusWords[c.status] ?? c.status ?? '').toLowerCase()}`
    : current
      ? levelWords[z.level]
      : `Last seen: ${levelWords[z.level].toLowerCase()}`;
  return h(
    'li',
    { class: 'zone', dataset: { camera: c.camera, zone: z.id, level: current ? z.level : known ? 'old' : 'unknown', kind: z.kind } },
    h('div', { class: 'zone-name' }, z.name),
    h('div', { class: 'figure' }, figure),
    h('div', { class: 'bar', 'aria-hidden': 'true' }, bar, markEl),
    h('div', { class: 'level' }, words),
    h('div', { class: 'today', dataset: { role: 'today' } }, todayWords(z, day, tz, current)),
  );
}

/**
 * "Today's peak 7 people at 10:42" for rooms, "Lowest today 12 % at 09:10" for shelves. The
 * stored samples lag the live count by up to one sample interval, so a live count beyond them is
 * today's extreme itself ("Today's peak: now, 8 people") and the two figures never contradict.
 */
function todayWords(z, day, tz, current) {
  const live = current && z.level !== 'unknown';
  const none = !day || day.peak === null;
  if (z.kind === 'shelf') {
    if (live && (none || z.fill < day.low)) return `Lowest today: now, ${percent(z.fill)}`;
    return none ? 'Today: nothing counted yet' : `Lowest today ${percent(day.low)}${day.lowAt ? ` at ${clock(day.lowAt, tz).slice(0, 5)}` : ''}`;
  }
  const people = (n) => `${n} ${n === 1 ? 'person' : 'people'}`;
  if (live && (none || z.shown > day.peak)) return `Today's peak: now, ${people(z.shown)}`;
  if (none) return 'Today: nothing counted yet';
  const peak = Math.round(day.peak * 10) / 10;
  return `Today's peak ${people(peak)}${day.peakAt ? ` at ${clock(day.peakAt, tz).slice(0, 5)}` : ''}`;
}
