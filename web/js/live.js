// "Now": each camera's status and each zone's count or fill, from the live stream.
import { $, h, replace } from './dom.js';
import { ago, clock, levelWords, percent, statusReason, statusWords } from './format.js';

export function createNowView(app) {
  const root = $('#cameras');
  let last;
  let visible = false;

  app.onLive((state) => {
    last = state;
    if (visible) render();
  });
  // Keep "x s ago" current between events.
  setInterval(() => visible && last && renderMeta(), 5000);

  function render() {
    const tz = app.site.timeZone;
    const now = Date.now();
    replace(root, last.cameras.map((c) => cameraCard(c, tz, now)));
    $('#now-updated').textContent = `· updated ${clock(last.time, tz)}`;
    $('#now-summary').textContent = summary(last);
  }

  function renderMeta() {
    const now = Date.now();
    for (const c of last.cameras) {
      const el = root.querySelector(`.camera[data-camera="${CSS.escape(c.camera)}"] .meta`);
      if (el) el.textContent = meta(c, app.site.timeZone, now);
    }
  }

  return {
    show() {
      visible = true;
      if (last) render();
    },
    hide() {
      visible = false;
    },
  };
}

function summary(state) {
  const counting = state.cameras.filter((c) => c.status === 'counting');
  const rooms = counting.flatMap((c) => c.zones.filter((z) => z.kind === 'room'));
  const people = rooms.reduce((s, z) => s + z.shown, 0);
  const busy = rooms.filter((z) => z.level === 'near' || z.level === 'over').length;
  const low = counting.flatMap((c) => c.zones).filter((z) => z.level === 'low').length;
  const parts = [];
  if (rooms.length > 0) parts.push(`${people} ${people === 1 ? 'person' : 'people'} in ${rooms.length} room zone${rooms.length === 1 ? '' : 's'}`);
  if (busy > 0) parts.push(`${busy} filling up or over`);
  if (low > 0) parts.push(`${low} shelf section${low === 1 ? '' : 's'} running low`);
  const off = state.cameras.length - counting.length;
  if (off > 0) parts.push(`${off} camera${off === 1 ? '' : 's'} not counting`);
  return parts.length > 0 ? `${parts.join(' · ')}.` : 'No zones are being counted.';
}

function meta(c, tz, now) {
  return c.lastFrameAt ? `Last frame ${clock(c.lastFrameAt, tz)} (${ago(c.lastFrameAt, now)} ago)` : 'No frame yet';
}

function cameraCard(c, tz, now) {
  const reason = statusReason(c, now);
  const learning = c.learn && c.learn.state === 'learning' && c.status === 'counting'
    ? h('p', { class: 'learn-line' }, `Learning the empty scene again: ${Math.round(c.learn.progress * 100)} % — counts use the old model meanwhile.`)
    : c.learn && c.learn.state === 'rejected' && c.learn.modelId !== c.modelId
      ? h('p', { class: 'learn-line' }, `The empty scene learned last was not used: ${c.learn.reason ?? 'it turned out poor'}. Counts go on with the one from before.`)
      : null;
  return h(
    'article',
    { class: 'camera', dataset: { camera: c.camera, status: c.status, frameAt: c.lastFrameAt ?? '' } },
    h('header', {}, h('h2', {}, c.name), h('span', { class: 'pill', dataset: { status: c.status } }, statusWords[c.status] ?? c.status)),
    h('p', { class: 'meta' }, meta(c, tz, now)),
    reason ? h('p', { class: 'why' }, reason) : null,
    learning,
    h('ul', { class: 'zones' }, c.zones.map((z) => zoneRow(c, z))),
  );
}

function zoneRow(c, z) {
  const known = z.level !== 'unknown';
  let figure;
  let share = 0;
  let mark;
  if (z.kind === 'shelf') {
    figure = [h('span', { class: 'big', dataset: { role: 'shown' } }, known ? percent(z.fill) : '—'), known ? h('span', { class: 'of' }, `full · ${z.shown} item${z.shown === 1 ? '' : 's'}`) : null];
    share = z.fill;
    mark = z.lowStock;
  } else {
    figure = [
      h('span', { class: 'big', dataset: { role: 'shown' } }, known ? String(z.shown) : '—'),
      z.capacity !== undefined ? h('span', { class: 'of' }, `of ${z.capacity}`) : h('span', { class: 'of' }, known ? (z.shown === 1 ? 'person' : 'people') : ''),
    ];
    share = z.capacity ? z.shown / z.capacity : 0;
  }
  const bar = h('span');
  bar.style.width = known ? `${Math.min(100, share * 100)}%` : '0%';
  const markEl = mark !== undefined ? h('i', { title: `low-stock mark ${percent(mark)}` }) : null;
  if (markEl) markEl.style.left = `${mark * 100}%`;
  const words = known ? levelWords[z.level] : `${levelWords.unknown}: camera ${c.status === 'learning' ? 'is learning' : (c.status ?? '').replace('-', ' ')}`;
  return h(
    'li',
    { class: 'zone', dataset: { camera: c.camera, zone: z.id, level: z.level, kind: z.kind }, title: `${z.name}: smoothed ${z.kind === 'shelf' ? percent(z.fill, 1) : z.count}` },
    h('div', { class: 'zone-name' }, z.name),
    h('div', { class: 'figure' }, figure),
    h('div', { class: 'bar', 'aria-hidden': 'true' }, bar, markEl),
    h('div', { class: 'level' }, words),
  );
}
