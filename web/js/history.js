// "History": a zone's hourly mean and peak over a day or a week (uPlot), the hourly table, and
// the hourly CSV of the range (the same bytes as `residuum export`).
import uPlot from '/vendor/uplot/uPlot.esm.js';
import { api, apiBlob, explain } from './api.js';
import { $, $$, h, replace } from './dom.js';
import { addDays, localDate, num, percent } from './format.js';

export function createHistoryView(app) {
  const form = $('#history-form');
  const select = $('#history-zone');
  const from = $('#history-from');
  const to = $('#history-to');
  const error = $('#history-error');
  let period = 'day';
  let zones = [];
  let chart;
  let loaded = false;

  for (const b of $$('[data-period]', form)) {
    b.addEventListener('click', () => {
      period = b.dataset.period;
      for (const o of $$('[data-period]', form)) o.setAttribute('aria-pressed', String(o === b));
      to.value = to.value || localDate(Date.now(), app.site.timeZone);
      from.value = period === 'week' ? addDays(to.value, -6) : to.value;
      refresh();
    });
  }
  form.addEventListener('submit', (event) => {
    event.preventDefault();
    refresh();
  });
  select.addEventListener('change', refresh);
  $('#history-download').addEventListener('click', download);
  window.addEventListener('resize', () => chart && chart.setSize(size()));

  async function loadZones() {
    let cameras;
    try {
      cameras = (await api('/api/live')).cameras;
    } catch (e) {
      error.textContent = explain(e);
      return false;
    }
    zones = cameras.flatMap((c) => c.zones.map((z) => ({ camera: c.camera, cameraName: c.name, id: z.id, name: z.name, kind: z.kind, capacity: z.capacity })));
    replace(
      select,
      cameras.map((c) =>
        h('optgroup', { label: c.name }, c.zones.map((z) => h('option', { value: `${c.camera}/${z.id}` }, z.name))),
      ),
    );
    return true;
  }

  function chosen() {
    const [camera, id] = select.value.split('/');
    return zones.find((z) => z.camera === camera && z.id === id);
  }

  function size() {
    const box = $('#history-chart');
    return { width: Math.max(320, box.clientWidth), height: 320 };
  }

  async function refresh() {
    error.textContent = '';
    const zone = chosen();
    if (!zone || !from.value || !to.value) return;
    const q = new URLSearchParams({ camera: zone.camera, zone: zone.id, from: from.value, to: to.value });
    let result;
    try {
      result = await api(`/api/history?${q}`);
    } catch (e) {
      error.textContent = explain(e);
      return;
    }
    const rows = result.rows;
    const shelf = zone.kind === 'shelf';
    $('#history-title').textContent = `${zone.cameraName} · ${zone.name}: hourly ${shelf ? 'fill' : 'mean and peak'}, ${from.value === to.value ? from.value : `${from.value} to ${to.value}`}`;
    $('#history-legend').hidden = shelf;
    $('#history-occupied-head').textContent = shelf ? 'Average fill' : 'Time occupied';
    const hasData = rows.some((r) => r.coverage > 0);
    const empty = $('#history-empty');
    empty.hidden = hasData;
    empty.textContent = result.end <= result.start
      ? 'This range has not begun yet: hours appear here once they start.'
      : 'No counts are stored for this range. Hours without counts stay empty, never zero.';
    if (result.end > result.start) drawChart(rows, zone, result.start, result.end);
    else {
      chart?.destroy();
      chart = undefined;
    }
    fillTable(rows, shelf, from.value === to.value);
  }

  function drawChart(rows, zone, start, end) {
    const shelf = zone.kind === 'shelf';
    const scale = shelf ? 100 : 1;
    // Every hour of the range gets a slot (empty without data, never zero), drawn at its middle so
    // that the bar covers the hour and the peak sits on it.
    const byStart = new Map(rows.map((r) => [r.hourStart, r]));
    const x = [];
    const mean = [];
    const peak = [];
    for (let h = start; h < end; h += 3_600_000) {
      const r = byStart.get(h);
      x.push((h + 1_800_000) / 1000);
      mean.push(r && r.mean !== null ? r.mean * scale : null);
      peak.push(r && r.max !== null ? r.max * scale : null);
    }
    const data = [x, mean, peak];
    const hourText = (ts) => new Intl.DateTimeFormat('en-GB', { timeZone: app.site.timeZone, weekday: 'short', day: 'numeric', month: 'short', hour: '2-digit', minute: '2-digit', hourCycle: 'h23' }).format(ts * 1000);
    const series = [
      { label: 'Hour', value: (u, ts) => (ts === null ? '–' : `${hourText(ts - 1800)} – ${hourText(ts + 1800).slice(-5)}`) },
      {
        label: shelf ? 'Hourly mean fill %' : 'Hourly mean, people',
        stroke: '#2c5d6e',
        width: 1,
        fill: 'rgba(44, 93, 110, 0.55)',
        paths: uPlot.paths.bars({ size: [0.8, 40], align: 0 }),
        points: { show: false },
        value: (u, v) => (v === null ? '–' : v.toFixed(1)),
      },
      { label: shelf ? 'Hourly highest fill %' : 'Hourly peak, people', stroke: '#8a5309', width: 0, paths: () => null, points: { show: true, size: 7, width: 2, fill: '#fffdf8' }, value: (u, v) => (v === null ? '–' : v.toFixed(1)) },
    ];
    const tz = app.site.timeZone;
    const opts = {
      ...size(),
      tzDate: (ts) => uPlot.tzDate(new Date(ts * 1000), tz),
      scales: {
        x: { time: true, range: () => [start / 1000, end / 1000] },
        y: { range: (u, min, max) => [0, Math.max(shelf ? 100 : 1, (max ?? 0) * 1.15, shelf ? 0 : (zone.capacity ?? 0) * 1.1)] },
      },
      series,
      axes: [
        { stroke: '#4f5a64', grid: { stroke: '#ebe6dc' }, ticks: { stroke: '#ddd6c8' }, values: (u, splits) => splits.map((ts) => tick(ts, end - start, tz)) },
        { stroke: '#4f5a64', grid: { stroke: '#ebe6dc' }, ticks: { stroke: '#ddd6c8' }, label: shelf ? 'fill %' : 'people' },
      ],
      cursor: { drag: { x: false, y: false } },
      hooks: { draw: [(u) => capacityLine(u, shelf ? undefined : zone.capacity)] },
    };
    chart?.destroy();
    chart = new uPlot(opts, data, $('#history-chart'));
  }

  /** A dashed line at the room's capacity, drawn over the plot. */
  function capacityLine(u, capacity) {
    if (capacity === undefined) return;
    const y = u.valToPos(capacity, 'y', true);
    const { left, width } = u.bbox;
    const g = u.ctx;
    g.save();
    g.strokeStyle = '#a8382b';
    g.lineWidth = 1.5 * devicePixelRatio;
    g.setLineDash([4 * devicePixelRatio, 4 * devicePixelRatio]);
    g.beginPath();
    g.moveTo(left, y);
    g.lineTo(left + width, y);
    g.stroke();
    g.setLineDash([]);
    g.fillStyle = '#a8382b';
    g.font = `${12 * devicePixelRatio}px system-ui, sans-serif`;
    g.textAlign = 'right';
    g.fillText(`capacity ${capacity}`, left + width - 4 * devicePixelRatio, y - 5 * devicePixelRatio);
    g.restore();
  }

  function fillTable(rows, shelf, oneDay) {
    const tbody = $('#history-table tbody');
    const value = (v) => (v === null ? '' : shelf ? percent(v, 1) : num(v, 1));
    replace(
      tbody,
      rows.map((r) =>
        h(
          'tr',
          { class: r.coverage > 0 ? '' : 'nodata' },
          h('td', { class: 'hour' }, oneDay ? r.hourStartIso.slice(11, 16) : r.hourStartIso.slice(0, 16).replace('T', ' ')),
          h('td', { class: 'num' }, value(r.mean)),
          h('td', { class: 'num' }, value(r.max)),
          h('td', { class: 'num' }, value(r.min)),
          h('td', { class: 'num' }, r.occupiedShare === null ? '' : percent(r.occupiedShare)),
          h('td', { class: 'num' }, r.coverage <= 0 ? 'no data' : r.coverage < 0.005 ? 'under 1 %' : percent(r.coverage)),
        ),
      ),
    );
  }

  async function download() {
    error.textContent = '';
    if (!from.value || !to.value) return;
    const q = new URLSearchParams({ from: from.value, to: to.value });
    const zone = chosen();
    if ($('#history-only-zone').checked && zone) {
      q.set('camera', zone.camera);
      q.set('zone', zone.id);
    }
    try {
      const { blob, name } = await apiBlob(`/api/export/hourly.csv?${q}`);
      const url = URL.createObjectURL(blob);
      const a = h('a', { href: url, download: name ?? `residuum-hourly-${from.value}-${to.value}.csv` });
      document.body.append(a);
      a.click();
      a.remove();
      setTimeout(() => URL.revokeObjectURL(url), 60_000);
    } catch (e) {
      error.textContent = explain(e);
    }
  }

  return {
    async show() {
      $('#history-tz').textContent = app.site.timeZone;
      if (!loaded) {
        loaded = await loadZones();
        if (!loaded) return;
        const today = localDate(Date.now(), app.site.timeZone);
        from.value ||= today;
        to.value ||= today;
      }
      await refresh();
    },
  };
}

/** An x-axis label in the site's zone: "14:00" for a day; "Mon 30" (and the hour off midnight) for longer ranges. */
function tick(ts, spanMs, timeZone) {
  const parts = Object.fromEntries(
    new Intl.DateTimeFormat('en-GB', { timeZone, weekday: 'short', day: 'numeric', hour: '2-digit', minute: '2-digit', hourCycle: 'h23' })
      .formatToParts(ts * 1000)
      .map((p) => [p.type, p.value]),
  );
  const time = `${parts.hour}:${parts.minute}`;
  if (spanMs <= 36 * 3_600_000) return time;
  return time === '00:00' ? `${parts.weekday} ${parts.day}` : time;
}
