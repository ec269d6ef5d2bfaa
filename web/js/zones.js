// "Zones": draw, move and delete zone polygons over the learned empty scene, set each zone's
// figures, preview the coarse foreground mask, learn the empty scene again, and see the history
// of changes. Coordinates are normalised like the server's: x 0..1 from the left, y 0..1 from the top.
import { api, apiBlob, explain } from './api.js';
import { $, $$, h, replace } from './dom.js';
import { dateTime, percent } from './format.js';

const COLOURS = ['#2c5d6e', '#8a5a9e', '#b5651d', '#3d7a57', '#9e3d5a', '#4f6aa8', '#7a7a2e'];
const HIT_PX = 9;
const HINTS = {
  select: 'Click a zone to select it; drag the zone or its corners to move them. Double-click an edge to add a corner, a corner to remove it.',
  draw: 'Click to place corners; click the first corner again (or press Enter) to close the zone. Esc cancels.',
  person: 'Drag a box around where one person would stand or sit in the selected zone: its share of the frame becomes “one person covers”.',
};

export function createZonesView(app) {
  const canvas = $('#zone-canvas');
  const g = canvas.getContext('2d');
  const cameraSelect = $('#zones-camera');
  const errorEl = $('#zones-error');
  const okEl = $('#zones-ok');

  let cameras = [];
  let camera;
  let saved = [];
  let draft = [];
  let display = { lowStock: {}, defaultLowStock: 0.15 };
  let lowStockDraft = {};
  let selected = -1;
  let tool = 'select';
  let drawing = [];
  let cursor;
  let drag;
  let personBox;
  let background;
  let frame = { width: 4, height: 3 };
  let mask;
  let maskTimer;
  let learnTimer;
  let visible = false;

  // ---- loading ----------------------------------------------------------------------------

  async function loadCameras() {
    try {
      cameras = (await api('/api/cameras')).cameras;
      display = await api('/api/settings');
    } catch (e) {
      errorEl.textContent = explain(e);
      return;
    }
    const keep = camera?.id;
    replace(cameraSelect, cameras.map((c) => h('option', { value: c.id }, c.name)));
    if (keep && cameras.some((c) => c.id === keep)) cameraSelect.value = keep;
    await selectCamera(cameraSelect.value);
  }

  async function selectCamera(id) {
    camera = cameras.find((c) => c.id === id);
    if (!camera) return;
    saved = camera.zones.map(clone);
    draft = saved.map(clone);
    lowStockDraft = {};
    selected = draft.length > 0 ? 0 : -1;
    drawing = [];
    personBox = undefined;
    mask = undefined;
    errorEl.textContent = '';
    okEl.textContent = '';
    frame = camera.model ? { width: camera.model.width, height: camera.model.height } : { width: 4, height: 3 };
    await loadBackground();
    sizeCanvas();
    renderList();
    renderForm();
    renderDirty();
    draw();
    loadModel();
    loadHistory();
    restartMask();
  }

  async function loadBackground() {
    background?.close?.();
    background = undefined;
    canvas.dataset.background = 'none';
    $('#zones-admin-note').hidden = app.isAdmin();
    if (!app.isAdmin() || !camera?.model) return;
    try {
      const { blob } = await apiBlob(`/api/cameras/${encodeURIComponent(camera.id)}/background.png`);
      background = await createImageBitmap(blob);
      frame = { width: background.width, height: background.height };
      canvas.dataset.background = 'shown';
    } catch (e) {
      errorEl.textContent = explain(e);
    }
  }

  // ---- canvas -----------------------------------------------------------------------------

  function sizeCanvas() {
    const width = Math.max(200, canvas.parentElement.clientWidth);
    const height = Math.round((width * frame.height) / frame.width);
    const dpr = window.devicePixelRatio || 1;
    canvas.width = Math.round(width * dpr);
    canvas.height = Math.round(height * dpr);
  }

  const norm = (event) => {
    const r = canvas.getBoundingClientRect();
    return [clamp01((event.clientX - r.left) / r.width), clamp01((event.clientY - r.top) / r.height)];
  };
  /** Distance between two normalised points in CSS pixels. */
  const px = (a, b) => {
    const r = canvas.getBoundingClientRect();
    return Math.hypot((a[0] - b[0]) * r.width, (a[1] - b[1]) * r.height);
  };

  function draw() {
    const W = canvas.width;
    const H = canvas.height;
    const dpr = window.devicePixelRatio || 1;
    g.setTransform(1, 0, 0, 1, 0, 0);
    g.clearRect(0, 0, W, H);
    if (background) {
      g.imageSmoothingEnabled = true;
      g.drawImage(background, 0, 0, W, H);
    } else {
      g.fillStyle = '#ddd7cb';
      g.fillRect(0, 0, W, H);
      g.font = `${14 * dpr}px system-ui, sans-serif`;
      const text = !camera?.model ? 'No empty scene learned yet' : app.isAdmin() ? 'Loading the empty scene…' : 'The empty scene is shown once you enter the admin key';
      const tw = g.measureText(text).width;
      g.fillStyle = 'rgba(255, 253, 248, 0.85)';
      g.fillRect(W - tw - 22 * dpr, H - 34 * dpr, tw + 16 * dpr, 26 * dpr);
      g.fillStyle = '#5f6b76';
      g.fillText(text, W - tw - 14 * dpr, H - 16 * dpr);
    }
    if (mask) {
      g.fillStyle = 'rgba(224, 180, 76, 0.55)';
      const cw = W / mask.width;
      const ch = H / mask.height;
      for (let y = 0; y < mask.height; y++) {
        const row = mask.rows[y];
        for (let x = 0; x < mask.width; x++) if (row.charCodeAt(x) === 49) g.fillRect(x * cw, y * ch, Math.ceil(cw), Math.ceil(ch));
      }
    }
    const P = (p) => [p[0] * W, p[1] * H];
    draft.forEach((z, i) => {
      const colour = COLOURS[i % COLOURS.length];
      const active = i === selected;
      g.beginPath();
      z.polygon.forEach((p, k) => (k === 0 ? g.moveTo(...P(p)) : g.lineTo(...P(p))));
      g.closePath();
      g.fillStyle = hexAlpha(colour, active ? 0.3 : 0.16);
      g.fill();
      g.lineWidth = (active ? 3 : 2) * dpr;
      g.strokeStyle = colour;
      g.stroke();
      const [lx, ly] = P(topLeft(z.polygon));
      const label = z.name || z.id;
      g.font = `600 ${13 * dpr}px system-ui, sans-serif`;
      const tw = g.measureText(label).width;
      g.fillStyle = hexAlpha('#fffdf8', 0.9);
      g.fillRect(lx + 4 * dpr, ly + 4 * dpr, tw + 10 * dpr, 20 * dpr);
      g.fillStyle = colour;
      g.fillText(label, lx + 9 * dpr, ly + 19 * dpr);
      if (active && tool === 'select') {
        for (const p of z.polygon) {
          g.beginPath();
          g.arc(...P(p), 5.5 * dpr, 0, Math.PI * 2);
          g.fillStyle = '#fffdf8';
          g.fill();
          g.lineWidth = 2 * dpr;
          g.strokeStyle = colour;
          g.stroke();
        }
      }
    });
    if (drawing.length > 0) {
      g.beginPath();
      drawing.forEach((p, k) => (k === 0 ? g.moveTo(...P(p)) : g.lineTo(...P(p))));
      if (cursor) g.lineTo(...P(cursor));
      g.lineWidth = 2 * dpr;
      g.setLineDash([6 * dpr, 4 * dpr]);
      g.strokeStyle = '#1f2933';
      g.stroke();
      g.setLineDash([]);
      drawing.forEach((p, k) => {
        g.beginPath();
        g.arc(...P(p), (k === 0 ? 7 : 4.5) * dpr, 0, Math.PI * 2);
        g.fillStyle = k === 0 ? '#e0b44c' : '#fffdf8';
        g.fill();
        g.strokeStyle = '#1f2933';
        g.lineWidth = 1.5 * dpr;
        g.stroke();
      });
    }
    if (personBox) {
      const [a, b] = personBox;
      const [x0, y0] = P([Math.min(a[0], b[0]), Math.min(a[1], b[1])]);
      const [x1, y1] = P([Math.max(a[0], b[0]), Math.max(a[1], b[1])]);
      g.setLineDash([5 * dpr, 3 * dpr]);
      g.lineWidth = 2 * dpr;
      g.strokeStyle = '#a8382b';
      g.strokeRect(x0, y0, x1 - x0, y1 - y0);
      g.setLineDash([]);
      const share = Math.abs(a[0] - b[0]) * Math.abs(a[1] - b[1]);
      g.font = `600 ${12 * dpr}px system-ui, sans-serif`;
      g.fillStyle = '#a8382b';
      const label = `one person ≈ ${(share * 100).toFixed(2)} % of the frame`;
      const below = y1 + 18 * dpr < H;
      const lw = g.measureText(label).width;
      const ly = below ? y1 + 16 * dpr : Math.max(14 * dpr, y0 - 6 * dpr);
      g.fillStyle = 'rgba(255, 253, 248, 0.9)';
      g.fillRect(x0 - 3 * dpr, ly - 12 * dpr, lw + 6 * dpr, 16 * dpr);
      g.fillStyle = '#a8382b';
      g.fillText(label, x0, ly);
    }
  }

  function hitVertex(p) {
    if (selected < 0) return -1;
    const poly = draft[selected].polygon;
    let best = -1;
    let bestD = HIT_PX;
    poly.forEach((q, k) => {
      const d = px(p, q);
      if (d <= bestD) {
        best = k;
        bestD = d;
      }
    });
    return best;
  }

  function hitZone(p) {
    if (selected >= 0 && inside(p, draft[selected].polygon)) return selected;
    for (let i = draft.length - 1; i >= 0; i--) if (inside(p, draft[i].polygon)) return i;
    return -1;
  }

  canvas.addEventListener('pointerdown', (event) => {
    if (!camera) return;
    canvas.focus();
    const p = norm(event);
    if (tool === 'draw') {
      if (drawing.length >= 3 && px(p, drawing[0]) <= HIT_PX + 3) finishDrawing();
      else drawing.push(round(p));
      draw();
      return;
    }
    if (tool === 'person') {
      if (selected < 0) {
        setHint('Select a zone first (switch to “Select and move” and click one).');
        return;
      }
      personBox = [p, p];
      drag = { kind: 'person' };
      canvas.setPointerCapture(event.pointerId);
      draw();
      return;
    }
    const v = hitVertex(p);
    if (v >= 0) {
      drag = { kind: 'vertex', index: v };
    } else {
      const z = hitZone(p);
      selected = z;
      if (z >= 0) drag = { kind: 'move', start: p, original: draft[z].polygon.map((q) => [...q]) };
      renderList();
      renderForm();
    }
    if (drag) canvas.setPointerCapture(event.pointerId);
    draw();
  });

  canvas.addEventListener('pointermove', (event) => {
    const p = norm(event);
    if (tool === 'draw') {
      cursor = p;
      if (drawing.length > 0) draw();
      return;
    }
    if (!drag) return;
    if (drag.kind === 'person') {
      personBox = [personBox[0], p];
    } else if (drag.kind === 'vertex') {
      draft[selected].polygon[drag.index] = round(p);
      changed();
    } else if (drag.kind === 'move') {
      const xs = drag.original.map((q) => q[0]);
      const ys = drag.original.map((q) => q[1]);
      const dx = Math.min(1 - Math.max(...xs), Math.max(-Math.min(...xs), p[0] - drag.start[0]));
      const dy = Math.min(1 - Math.max(...ys), Math.max(-Math.min(...ys), p[1] - drag.start[1]));
      draft[selected].polygon = drag.original.map((q) => round([q[0] + dx, q[1] + dy]));
      changed();
    }
    draw();
  });

  const endDrag = () => {
    if (drag?.kind === 'person' && personBox && selected >= 0) {
      const [a, b] = personBox;
      const share = Math.abs(a[0] - b[0]) * Math.abs(a[1] - b[1]);
      if (share > 0.00001) {
        draft[selected].personArea = Number(share.toPrecision(3));
        renderForm();
        changed();
        setHint(`“One person covers” of ${draft[selected].name || draft[selected].id} is now ${(share * 100).toFixed(2)} % of the frame. Save to apply.`);
      }
    }
    drag = undefined;
  };
  canvas.addEventListener('pointerup', endDrag);
  canvas.addEventListener('pointercancel', endDrag);

  canvas.addEventListener('dblclick', (event) => {
    if (tool !== 'select' || selected < 0) return;
    const p = norm(event);
    const poly = draft[selected].polygon;
    const v = hitVertex(p);
    if (v >= 0) {
      if (poly.length > 3) {
        poly.splice(v, 1);
        changed();
      }
    } else {
      let best = -1;
      let bestD = HIT_PX;
      let at;
      for (let k = 0; k < poly.length; k++) {
        const [q, d] = nearestOnSegment(p, poly[k], poly[(k + 1) % poly.length]);
        const dist = px(p, q);
        if (dist <= bestD) {
          best = k;
          bestD = dist;
          at = q;
        }
      }
      if (best >= 0) {
        poly.splice(best + 1, 0, round(at));
        changed();
      }
    }
    draw();
  });

  canvas.addEventListener('keydown', (event) => {
    if (event.key === 'Enter' && tool === 'draw') finishDrawing();
    else if (event.key === 'Escape') {
      drawing = [];
      personBox = undefined;
    } else if ((event.key === 'Delete' || event.key === 'Backspace') && tool === 'select' && selected >= 0) deleteSelected();
    else return;
    event.preventDefault();
    draw();
  });

  function finishDrawing() {
    if (drawing.length < 3) {
      setHint('A zone needs at least three corners.');
      return;
    }
    let n = draft.length + 1;
    while (draft.some((z) => z.id === `zone-${n}`)) n++;
    draft.push({ id: `zone-${n}`, name: `New zone ${n}`, kind: 'room', polygon: drawing });
    drawing = [];
    selected = draft.length - 1;
    setTool('select');
    renderList();
    renderForm();
    changed();
    $('#zf-id').focus();
    $('#zf-id').select();
  }

  function deleteSelected() {
    if (selected < 0) return;
    draft.splice(selected, 1);
    selected = Math.min(selected, draft.length - 1);
    renderList();
    renderForm();
    changed();
    draw();
  }

  function setTool(next) {
    tool = next;
    canvas.dataset.tool = next;
    for (const b of $$('[data-tool]')) b.setAttribute('aria-pressed', String(b.dataset.tool === next));
    drawing = [];
    personBox = undefined;
    setHint(HINTS[next]);
    draw();
  }

  const setHint = (text) => {
    $('#tool-hint').textContent = text;
  };

  // ---- list, form, dirty state ------------------------------------------------------------

  function renderList() {
    const list = $('#zone-list');
    if (draft.length === 0) {
      replace(list, h('li', { class: 'hint' }, 'No zones yet: choose “Draw zone” and click the corners on the picture.'));
      return;
    }
    replace(
      list,
      draft.map((z, i) => {
        const swatch = h('span', { class: 'swatch' });
        swatch.style.background = COLOURS[i % COLOURS.length];
        return h(
          'li',
          {},
          h(
            'button',
            {
              type: 'button',
              'aria-pressed': String(i === selected),
              dataset: { zone: z.id },
              onclick: () => {
                selected = i;
                renderList();
                renderForm();
                draw();
              },
            },
            swatch,
            h('span', {}, z.name || z.id),
            h('span', { class: 'kind' }, z.kind === 'shelf' ? 'shelf' : z.capacity !== undefined ? `room · ${z.capacity}` : 'room'),
          ),
        );
      }),
    );
  }

  const isSaved = (z) => saved.some((s) => s.id === z.id);
  const lowKey = (z) => `${camera.id}/${z.id}`;

  function renderForm() {
    const form = $('#zone-form');
    const z = draft[selected];
    form.hidden = !z;
    if (!z) return;
    const known = isSaved(z);
    $('#zf-id').value = z.id;
    $('#zf-id').disabled = known;
    $('#zf-id').title = known ? 'A saved zone keeps its id (its history is stored under it).' : '';
    $('#zf-name').value = z.name ?? '';
    $('#zf-kind').value = z.kind;
    $('#zf-kind').disabled = known;
    $('#zf-capacity').value = z.capacity ?? '';
    $('#zf-threshold').value = z.threshold ?? '';
    $('#zf-personarea').value = z.personArea ?? '';
    $('#zf-minblob').value = z.minBlobArea ?? '';
    const low = lowKey(z) in lowStockDraft ? lowStockDraft[lowKey(z)] : display.lowStock[lowKey(z)];
    $('#zf-lowstock').value = low === undefined || low === null ? '' : String(Math.round(low * 100));
    $('#zf-lowstock').placeholder = String(Math.round(display.defaultLowStock * 100));
    for (const label of $$('[data-for]', form)) label.hidden = label.dataset.for !== z.kind;
    $('#zf-personarea-label').textContent = z.kind === 'shelf' ? 'One item covers' : 'One person covers';
  }

  function bindField(id, apply) {
    $(id).addEventListener('input', (event) => {
      const z = draft[selected];
      if (!z) return;
      apply(z, event.target.value.trim());
      changed();
      renderList();
      draw();
    });
  }
  const setOptional = (key, parse) => (z, v) => {
    if (v === '') delete z[key];
    else z[key] = parse(v);
  };
  bindField('#zf-id', (z, v) => {
    z.id = v;
  });
  bindField('#zf-name', setOptional('name', String));
  bindField('#zf-kind', (z, v) => {
    z.kind = v;
    if (v === 'shelf') delete z.capacity;
    renderForm();
  });
  bindField('#zf-capacity', setOptional('capacity', Number));
  bindField('#zf-threshold', setOptional('threshold', Number));
  bindField('#zf-personarea', setOptional('personArea', Number));
  bindField('#zf-minblob', setOptional('minBlobArea', Number));
  bindField('#zf-lowstock', (z, v) => {
    lowStockDraft[lowKey(z)] = v === '' ? null : Number(v) / 100;
  });

  function changed() {
    okEl.textContent = '';
    errorEl.textContent = '';
    renderDirty();
  }

  function dirty() {
    return JSON.stringify(draft) !== JSON.stringify(saved) || Object.keys(lowStockDraft).length > 0;
  }

  function renderDirty() {
    $('#zones-dirty').hidden = !dirty();
  }

  async function save() {
    errorEl.textContent = '';
    okEl.textContent = '';
    if (!camera) return;
    try {
      const result = await api(`/api/cameras/${encodeURIComponent(camera.id)}/zones`, { method: 'PUT', body: { zones: draft } });
      const lows = Object.fromEntries(Object.entries(lowStockDraft).filter(([key]) => result.zones.some((z) => `${camera.id}/${z.id}` === key)));
      if (Object.keys(lows).length > 0) display = await api('/api/settings', { method: 'PUT', body: { lowStock: lows } });
      camera.zones = result.zones;
      const keep = draft[selected]?.id;
      saved = result.zones.map(clone);
      draft = saved.map(clone);
      lowStockDraft = {};
      selected = Math.max(0, draft.findIndex((z) => z.id === keep));
      if (draft.length === 0) selected = -1;
      okEl.textContent = 'Saved. Counting uses these zones from now on.';
      renderList();
      renderForm();
      renderDirty();
      draw();
      loadHistory();
    } catch (e) {
      errorEl.textContent = explain(e);
    }
  }

  // ---- foreground preview -----------------------------------------------------------------

  function restartMask() {
    clearInterval(maskTimer);
    maskTimer = undefined;
    mask = undefined;
    const on = $('#mask-toggle').checked;
    $('#mask-note').hidden = !on;
    if (!on || !visible || !camera) {
      draw();
      return;
    }
    if (!app.isAdmin()) {
      errorEl.textContent = 'The foreground preview needs the admin key.';
      $('#mask-toggle').checked = false;
      $('#mask-note').hidden = true;
      return;
    }
    const tick = async () => {
      try {
        mask = await api(`/api/cameras/${encodeURIComponent(camera.id)}/mask?format=json&cell=4`);
      } catch {
        mask = undefined;
      }
      draw();
    };
    tick();
    maskTimer = setInterval(tick, 1000);
  }

  // ---- learning and model figures ---------------------------------------------------------

  async function loadModel() {
    if (!camera) return;
    let info;
    try {
      info = await api(`/api/cameras/${encodeURIComponent(camera.id)}/learn`);
    } catch (e) {
      $('#learn-error').textContent = explain(e);
      return;
    }
    const m = info.model;
    const figures = $('#model-figures');
    if (!m) {
      replace(figures, h('dt', {}, 'Model'), h('dd', {}, 'none yet'));
      replace($('#model-findings'));
    } else {
      replace(
        figures,
        h('dt', {}, 'Verdict'),
        h('dd', {}, h('span', { class: 'verdict', dataset: { level: m.verdict.level } }, m.verdict.level)),
        h('dt', {}, 'Learned from'),
        h('dd', {}, `${m.frames} frames at ${m.width}×${m.height}`),
        h('dt', {}, 'Eigen-images kept'),
        h('dd', {}, String(m.components)),
        h('dt', {}, 'Variation explained'),
        h('dd', {}, percent(m.retainedVariance, 1)),
        h('dt', {}, 'Residual noise'),
        h('dd', {}, `${m.verdict.medianNoise.toFixed(1)} grey levels (median; 95th percentile ${m.verdict.noiseP95.toFixed(1)})`),
      );
      replace($('#model-findings'), m.verdict.findings.map((f) => h('li', {}, f)));
    }
    showLearn(info.status);
  }

  function showLearn(status) {
    const bar = $('#learn-progress');
    const learning = status?.state === 'learning';
    bar.hidden = !learning;
    bar.firstElementChild.style.width = `${Math.round((status?.progress ?? 0) * 100)}%`;
    $('#learn-start').disabled = learning;
    $('#learn-start').textContent = !learning ? 'Learn again' : status.progress >= 0.98 ? 'Fitting the model…' : `Learning… ${Math.round(status.progress * 100)} %`;
    if (status?.state === 'failed') $('#learn-error').textContent = `Learning failed: ${status.error}`;
    if (learning && !learnTimer) learnTimer = setInterval(pollLearn, 1000);
    if (!learning && learnTimer) {
      clearInterval(learnTimer);
      learnTimer = undefined;
    }
  }

  async function pollLearn() {
    if (!camera) return;
    try {
      const info = await api(`/api/cameras/${encodeURIComponent(camera.id)}/learn`);
      const was = learnTimer !== undefined;
      showLearn(info.status);
      if (was && info.status?.state !== 'learning') {
        await loadModel();
        await loadBackground();
        draw();
      }
    } catch {
      // the next poll tries again
    }
  }

  $('#learn-form').addEventListener('submit', async (event) => {
    event.preventDefault();
    $('#learn-error').textContent = '';
    if (!camera) return;
    const seconds = Number($('#learn-seconds').value);
    try {
      const { status } = await api(`/api/cameras/${encodeURIComponent(camera.id)}/learn`, { method: 'POST', body: { seconds } });
      showLearn(status);
    } catch (e) {
      $('#learn-error').textContent = explain(e);
    }
  });

  // ---- change history ---------------------------------------------------------------------

  async function loadHistory() {
    if (!camera) return;
    let history;
    try {
      history = (await api(`/api/cameras/${encodeURIComponent(camera.id)}/zones/history`)).history;
    } catch {
      return;
    }
    const tz = app.site.timeZone;
    const rows = history.slice(-100).reverse();
    replace(
      $('#zone-history tbody'),
      rows.length === 0
        ? h('tr', {}, h('td', { colspan: '5', class: 'hint' }, 'No changes yet.'))
        : rows.map((r) =>
            h(
              'tr',
              {},
              h('td', {}, dateTime(r.time, tz)),
              h('td', {}, r.zone),
              h('td', {}, r.field === '*' ? (r.old === null ? 'added' : 'removed') : r.field),
              h('td', {}, r.field === '*' ? '' : brief(r.old)),
              h('td', {}, r.field === '*' ? '' : brief(r.new)),
            ),
          ),
    );
  }

  // ---- wiring -----------------------------------------------------------------------------

  cameraSelect.addEventListener('change', () => selectCamera(cameraSelect.value));
  for (const b of $$('[data-tool]')) b.addEventListener('click', () => setTool(b.dataset.tool));
  $('#zone-delete').addEventListener('click', deleteSelected);
  $('#zones-save').addEventListener('click', save);
  $('#zones-discard').addEventListener('click', () => {
    draft = saved.map(clone);
    lowStockDraft = {};
    selected = Math.min(selected, draft.length - 1);
    errorEl.textContent = '';
    renderList();
    renderForm();
    renderDirty();
    draw();
  });
  $('#mask-toggle').addEventListener('change', restartMask);
  new ResizeObserver(() => {
    if (!visible) return;
    sizeCanvas();
    draw();
  }).observe(canvas.parentElement);
  app.onRole(async () => {
    if (!visible || !camera) return;
    errorEl.textContent = '';
    await loadBackground();
    sizeCanvas();
    draw();
    restartMask();
  });
  setTool('select');

  return {
    async show() {
      visible = true;
      if (cameras.length === 0) await loadCameras();
      else {
        sizeCanvas();
        draw();
        restartMask();
        loadModel();
      }
    },
    hide() {
      visible = false;
      restartMask();
      clearInterval(learnTimer);
      learnTimer = undefined;
    },
  };
}

function clone(z) {
  return JSON.parse(JSON.stringify(z));
}

function clamp01(v) {
  return Math.min(1, Math.max(0, v));
}

function round(p) {
  return [Math.round(p[0] * 10000) / 10000, Math.round(p[1] * 10000) / 10000];
}

function topLeft(poly) {
  return [Math.min(...poly.map((p) => p[0])), Math.min(...poly.map((p) => p[1]))];
}

/** Even–odd rule point-in-polygon test (ray casting). */
function inside(p, poly) {
  let c = false;
  for (let i = 0, j = poly.length - 1; i < poly.length; j = i++) {
    const [xi, yi] = poly[i];
    const [xj, yj] = poly[j];
    if (yi > p[1] !== yj > p[1] && p[0] < ((xj - xi) * (p[1] - yi)) / (yj - yi) + xi) c = !c;
  }
  return c;
}

function nearestOnSegment(p, a, b) {
  const dx = b[0] - a[0];
  const dy = b[1] - a[1];
  const len = dx * dx + dy * dy;
  const t = len === 0 ? 0 : Math.max(0, Math.min(1, ((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / len));
  const q = [a[0] + t * dx, a[1] + t * dy];
  return [q, 0];
}

function hexAlpha(hex, alpha) {
  const n = parseInt(hex.slice(1), 16);
  return `rgba(${(n >> 16) & 255}, ${(n >> 8) & 255}, ${n & 255}, ${alpha})`;
}

function brief(v) {
  if (v === null || v === undefined) return '—';
  if (Array.isArray(v) && Array.isArray(v[0])) return `${v.length} corners`;
  const s = JSON.stringify(v);
  return s.length > 60 ? `${s.slice(0, 57)}…` : s;
}
