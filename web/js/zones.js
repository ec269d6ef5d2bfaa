// "Zones": draw, move and delete zone polygons over the learned empty scene, set each zone's
// figures, place reference people (boxes whose size the expected person follows with the distance),
// preview the coarse foreground mask, learn the empty scene again, and see the history of changes.
// Coordinates are normalised like the server's: x 0..1 from the left, y 0..1 from the top.
import { api, apiBlob, ApiError, explain } from './api.js';
import { $, $$, h, replace } from './dom.js';
import { createEmptyScenePanel } from './emptyScene.js';
import { dateTime, percent } from './format.js';
import { createZoneKeys } from './zoneKeys.js';
import { FIELD_WORDS, problemWords, slug } from './zoneWords.js';
import { brief, clamp01, clone, hexAlpha, inside, middleAtRow, nearestOnSegment, normRect, round, round4, topLeft } from './zoneGeometry.js';

const COLOURS = ['#2c5d6e', '#8a5a9e', '#b5651d', '#3d7a57', '#9e3d5a', '#4f6aa8', '#7a7a2e'];
const HIT_PX = 9;
const HINTS = {
  select: 'Click a zone to select it; drag the zone or its corners to move them. Double-click an edge to add a corner, a corner to remove it.',
  draw: 'Click to place corners; click the first corner again (or press Enter) to close the zone. Esc cancels.',
  person: 'Drag a box around where one person would stand or sit in the selected zone: its share of the picture becomes “one person covers”.',
  refs: 'Drag a box around where one person would stand, feet on its bottom edge. Drag a box to move it, a corner to resize it; Delete removes the selected box, arrow keys move it. Place two or more, near and far: the dashed outline then shows the size expected where the pointer is.',
};
/** Smallest reference box, share of the frame's width and height: a click is not a box. */
const MIN_BOX = 0.005;
/** Reference people's feet must span at least this share of the frame height (as the server checks). */
const MIN_REF_SPREAD = 0.02;
/** Height ÷ width in pixels of a standing person, for references given without a box (common practice). */
const PERSON_ASPECT_PX = 2.5;
/** Smallest expected area, share of the frame (as the server's fit). */
const MIN_AREA = 0.0002;
/** One person's share of the frame in a room zone without personArea (the server's default). */
const DEFAULT_PERSON_AREA = 0.008;
/** The learned size fills boxes at these shares of the zone's rows. */
const LEARNED_ROWS = [0.1, 0.5, 0.9];

export function createZonesView(app) {
  const canvas = $('#zone-canvas');
  const g = canvas.getContext('2d');
  const cameraSelect = $('#zones-camera');
  const errorEl = $('#zones-error');
  const okEl = $('#zones-ok');

  const scene = createEmptyScenePanel(app, {
    camera: () => camera,
    onModelChanged: async () => {
      await loadBackground();
      draw();
    },
  });

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
  let refSelected = -1;
  let refDraft;
  let guide;
  let background;
  let frame = { width: 4, height: 3 };
  let mask;
  let maskTimer;
  /** The corner of the selected zone chosen for the keyboard (index), or -1 for the whole zone. */
  let corner = -1;
  /** The keyboard's cross while drawing, normalised. */
  let keyCursor = [0.5, 0.5];
  let visible = false;

  const keys = createZoneKeys({
    get draft() {
      return draft;
    },
    get selected() {
      return selected;
    },
    get corner() {
      return corner;
    },
    set corner(v) {
      corner = v;
    },
    get keyCursor() {
      return keyCursor;
    },
    set keyCursor(v) {
      keyCursor = v;
    },
    set cursor(v) {
      cursor = v;
    },
    get drawing() {
      return drawing;
    },
    set drawing(v) {
      drawing = v;
    },
    set personBox(v) {
      personBox = v;
    },
    changed: () => changed(),
    draw: () => draw(),
    deleteSelected: () => deleteSelected(),
    finishDrawing: () => finishDrawing(),
    choose: (i) => choose(i),
  });
  const { drawKey, selectKey, renderCorners, syncCorners, announce, where } = keys;

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
    scene.reset();
    corner = -1;
    if (!camera) return;
    saved = camera.zones.map(clone);
    draft = saved.map(clone);
    lowStockDraft = {};
    selected = draft.length > 0 ? 0 : -1;
    drawing = [];
    personBox = undefined;
    refSelected = -1;
    refDraft = undefined;
    guide = undefined;
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
    scene.loadModel();
    scene.loadKept();
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
      const text = !camera?.model ? 'No empty scene learned yet' : app.isAdmin() ? 'Loading the empty scene…' : 'The empty scene is shown once you enter the admin key';
      // 14 px, smaller on a narrow picture so that the whole sentence fits.
      g.font = `${14 * dpr}px system-ui, sans-serif`;
      const fit = Math.min(1, (W - 30 * dpr) / g.measureText(text).width);
      g.font = `${Math.max(9, 14 * fit) * dpr}px system-ui, sans-serif`;
      const tw = g.measureText(text).width;
      g.fillStyle = 'rgba(255, 253, 248, 0.85)';
      g.fillRect(W - tw - 22 * dpr, H - 34 * dpr, tw + 16 * dpr, 26 * dpr);
      g.fillStyle = '#4f5a64';
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
        z.polygon.forEach((p, k) => {
          const chosen = k === corner;
          g.beginPath();
          g.arc(...P(p), (chosen ? 8 : 5.5) * dpr, 0, Math.PI * 2);
          g.fillStyle = chosen ? '#e0b44c' : '#fffdf8';
          g.fill();
          g.lineWidth = (chosen ? 3 : 2) * dpr;
          g.strokeStyle = chosen ? '#1f2933' : colour;
          g.stroke();
        });
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
    if (tool === 'draw' && document.activeElement === canvas) {
      // The keyboard's cross (arrow keys move it, Space places a corner there).
      const [cx, cy] = P(keyCursor);
      g.lineWidth = 2 * dpr;
      g.strokeStyle = '#1f2933';
      g.beginPath();
      g.moveTo(cx - 12 * dpr, cy);
      g.lineTo(cx + 12 * dpr, cy);
      g.moveTo(cx, cy - 12 * dpr);
      g.lineTo(cx, cy + 12 * dpr);
      g.stroke();
      g.strokeStyle = '#e0b44c';
      g.strokeRect(cx - 4 * dpr, cy - 4 * dpr, 8 * dpr, 8 * dpr);
    }
    drawReferences(P, dpr);
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
      const label = `one person ≈ ${(share * 100).toFixed(2)} % of the picture`;
      const below = y1 + 18 * dpr < H;
      const lw = g.measureText(label).width;
      const ly = below ? y1 + 16 * dpr : Math.max(14 * dpr, y0 - 6 * dpr);
      g.fillStyle = 'rgba(255, 253, 248, 0.9)';
      g.fillRect(x0 - 3 * dpr, ly - 12 * dpr, lw + 6 * dpr, 16 * dpr);
      g.fillStyle = '#a8382b';
      g.fillText(label, x0, ly);
    }
  }

  // ---- reference people ------------------------------------------------------------------

  /** The selected zone when it is a room (reference people are for rooms), else undefined. */
  const refZone = () => (draft[selected]?.kind === 'room' ? draft[selected] : undefined);
  const refsOf = (z) => z?.perspective ?? [];
  /** Height ÷ width of a standing person as shares of the frame's height and width. */
  const defaultAspect = () => (PERSON_ASPECT_PX * frame.width) / frame.height;

  /** A reference's box { x0, y0, x1, y1 }; one given without a box gets a standing person's shape in the zone's middle. */
  function refRect(z, r) {
    if (r.x !== undefined && r.height !== undefined) {
      const w = r.area / r.height;
      return { x0: r.x - w / 2, y0: r.y - r.height, x1: r.x + w / 2, y1: r.y };
    }
    const h = Math.min(r.y, Math.sqrt(r.area * defaultAspect()));
    const w = Math.min(1, r.area / h);
    const x = Math.min(1 - w / 2, Math.max(w / 2, middleAtRow(z.polygon, r.y)));
    return { x0: x - w / 2, y0: r.y - h, x1: x + w / 2, y1: r.y };
  }

  /** The zones API's reference for a box: foot point (bottom centre), area and height, rounded. */
  function refFromRect(rect) {
    const x0 = round4(clamp01(Math.min(rect.x0, rect.x1)));
    const x1 = round4(clamp01(Math.max(rect.x0, rect.x1)));
    const y0 = round4(clamp01(Math.min(rect.y0, rect.y1)));
    const y1 = round4(clamp01(Math.max(rect.y0, rect.y1)));
    const w = round4(x1 - x0);
    const h = round4(y1 - y0);
    return { x: Math.round(((x0 + x1) / 2) * 100000) / 100000, y: y1, area: Number((w * h).toPrecision(8)), height: h };
  }

  /** √area fitted by least squares in the foot row (as the server's fitPersonArea); undefined without two rows far enough apart. */
  function fitRefs(refs) {
    if (refs.length < 2) return undefined;
    const ys = refs.map((r) => r.y);
    if (Math.max(...ys) - Math.min(...ys) < MIN_REF_SPREAD) return undefined;
    const my = ys.reduce((a, b) => a + b, 0) / refs.length;
    const ms = refs.reduce((a, r) => a + Math.sqrt(r.area), 0) / refs.length;
    let sxy = 0;
    let sxx = 0;
    for (const r of refs) {
      sxy += (r.y - my) * (Math.sqrt(r.area) - ms);
      sxx += (r.y - my) ** 2;
    }
    const slope = sxy / sxx;
    const intercept = ms - slope * my;
    return { intercept, slope, areaAt: (y) => Math.max(MIN_AREA, Math.max(0, intercept + slope * y) ** 2) };
  }

  /** Median height ÷ width (shares of the frame) of the zone's boxes, or a standing person's. */
  function refAspect(z) {
    const aspects = refsOf(z)
      .filter((r) => r.height !== undefined)
      .map((r) => (r.height * r.height) / r.area)
      .sort((a, b) => a - b);
    if (aspects.length === 0) return defaultAspect();
    const m = aspects.length >> 1;
    return aspects.length % 2 ? aspects[m] : (aspects[m - 1] + aspects[m]) / 2;
  }

  /** The expected person's box with feet at p, or undefined without a fit. */
  function expectedRect(z, p) {
    const fit = fitRefs(refsOf(z));
    if (!fit) return undefined;
    const area = fit.areaAt(p[1]);
    const h = Math.sqrt(area * refAspect(z));
    const w = area / h;
    return { area, rect: { x0: p[0] - w / 2, y0: p[1] - h, x1: p[0] + w / 2, y1: p[1] } };
  }

  function drawReferences(P, dpr) {
    const z = refZone();
    if (!z) return;
    const colour = COLOURS[selected % COLOURS.length];
    const editing = tool === 'refs';
    const outline = (rect, style) => {
      const [x0, y0] = P([rect.x0, rect.y0]);
      const [x1, y1] = P([rect.x1, rect.y1]);
      g.strokeRect(x0, y0, x1 - x0, y1 - y0);
      return [x0, y0, x1, y1, style];
    };
    refsOf(z).forEach((r, i) => {
      const active = editing && i === refSelected;
      g.lineWidth = (active ? 3 : editing ? 2 : 1.5) * dpr;
      g.strokeStyle = editing ? colour : hexAlpha(colour, 0.7);
      g.setLineDash(editing ? [] : [4 * dpr, 3 * dpr]);
      const [x0, y0, x1, y1] = outline(refRect(z, r));
      g.setLineDash([]);
      // The foot point: bottom centre.
      g.beginPath();
      g.arc((x0 + x1) / 2, y1, 3.5 * dpr, 0, Math.PI * 2);
      g.fillStyle = colour;
      g.fill();
      if (editing) {
        g.font = `600 ${11 * dpr}px system-ui, sans-serif`;
        g.fillStyle = hexAlpha('#fffdf8', 0.9);
        g.fillRect(x0, y0 - 15 * dpr, 14 * dpr, 14 * dpr);
        g.fillStyle = colour;
        g.fillText(String(i + 1), x0 + 3.5 * dpr, y0 - 4 * dpr);
      }
      if (active) {
        for (const [cx, cy] of [[x0, y0], [x1, y0], [x0, y1], [x1, y1]]) {
          g.fillStyle = '#fffdf8';
          g.fillRect(cx - 4.5 * dpr, cy - 4.5 * dpr, 9 * dpr, 9 * dpr);
          g.lineWidth = 1.5 * dpr;
          g.strokeStyle = colour;
          g.strokeRect(cx - 4.5 * dpr, cy - 4.5 * dpr, 9 * dpr, 9 * dpr);
        }
      }
    });
    if (editing && refDraft) {
      g.setLineDash([5 * dpr, 3 * dpr]);
      g.lineWidth = 2 * dpr;
      g.strokeStyle = colour;
      outline(normRect(refDraft));
      g.setLineDash([]);
    }
    if (editing && guide && !drag) {
      const expected = expectedRect(z, guide);
      if (expected) {
        g.setLineDash([4 * dpr, 4 * dpr]);
        g.lineWidth = 1.5 * dpr;
        g.strokeStyle = 'rgba(31, 41, 51, 0.45)';
        const [x0, y0] = outline(expected.rect);
        g.setLineDash([]);
        g.font = `${11 * dpr}px system-ui, sans-serif`;
        g.fillStyle = 'rgba(31, 41, 51, 0.6)';
        g.fillText(`≈ ${(expected.area * 100).toFixed(2)} %`, x0, y0 - 4 * dpr);
      }
    }
  }

  /** Shows in words the size expected where the pointer is (the outline's figure, for screen readers too). */
  function renderGuide() {
    const el = $('#refs-guide');
    const z = refZone();
    el.hidden = tool !== 'refs' || !z;
    if (el.hidden) return;
    const expected = guide && expectedRect(z, guide);
    if (expected) el.textContent = `Expected person with feet here (${percent(guide[1], 0)} down): ${(expected.area * 100).toFixed(2)} % of the picture.`;
    else if (!fitRefs(refsOf(z))) el.textContent = 'The expected size shows once there are two boxes with their feet at different heights.';
    else el.textContent = 'Point at the picture to see the size expected there.';
  }

  function hitRef(p) {
    const z = refZone();
    if (!z) return { index: -1 };
    const refs = refsOf(z);
    if (refSelected >= 0 && refSelected < refs.length) {
      const r = refRect(z, refs[refSelected]);
      const corners = [[r.x0, r.y0], [r.x1, r.y0], [r.x0, r.y1], [r.x1, r.y1]];
      const k = corners.findIndex((c) => px(p, c) <= HIT_PX);
      if (k >= 0) return { index: refSelected, corner: k, fixed: corners[3 - k] };
    }
    for (let i = refs.length - 1; i >= 0; i--) {
      const r = refRect(z, refs[i]);
      if (p[0] >= r.x0 && p[0] <= r.x1 && p[1] >= r.y0 && p[1] <= r.y1) return { index: i };
    }
    return { index: -1 };
  }

  function setRefs(z, refs) {
    if (refs.length > 0) z.perspective = refs;
    else delete z.perspective;
    changed();
    renderRefs();
  }

  function removeRef(index) {
    const z = refZone();
    if (!z || index < 0 || index >= refsOf(z).length) return;
    setRefs(z, refsOf(z).filter((_, i) => i !== index));
    refSelected = Math.min(index, refsOf(z).length - 1);
    renderRefs();
    draw();
  }

  function moveRef(index, dx, dy) {
    const z = refZone();
    const r = z && refsOf(z)[index];
    if (!r) return;
    const rect = refRect(z, r);
    const mx = Math.min(1 - rect.x1, Math.max(-rect.x0, dx));
    const my = Math.min(1 - rect.y1, Math.max(-rect.y0, dy));
    z.perspective[index] = refFromRect({ x0: rect.x0 + mx, y0: rect.y0 + my, x1: rect.x1 + mx, y1: rect.y1 + my });
  }

  function renderRefs() {
    const z = draft[selected];
    const room = z?.kind === 'room';
    $('#zf-refs').hidden = !room;
    if (!room) return;
    const refs = refsOf(z);
    const fit = fitRefs(refs);
    const ys = z.polygon.map((p) => p[1]);
    let summary;
    if (refs.length === 0) summary = 'None: one person covers the same share everywhere in this zone. Place two or more with “Reference people” (near and far) to let the expected size follow the distance.';
    else if (refs.length === 1) summary = 'One box so far: place another where a person would stand nearer or farther away (lower or higher in the picture).';
    else if (!fit) summary = `The boxes need their feet at different heights, at least ${percent(MIN_REF_SPREAD)} of the picture apart.`;
    else summary = `Expected person: ${(fit.areaAt(Math.min(...ys)) * 100).toFixed(2)} % of the picture at the zone's top edge, ${(fit.areaAt(Math.max(...ys)) * 100).toFixed(2)} % at its bottom edge. This replaces “one person covers”.`;
    $('#refs-summary').textContent = summary;
    replace(
      $('#refs-list'),
      refs.map((r, i) =>
        h(
          'li',
          {},
          h(
            'button',
            {
              type: 'button',
              class: 'quiet ref',
              'aria-pressed': String(i === refSelected),
              dataset: { ref: i },
              onclick: () => {
                refSelected = i;
                if (tool !== 'refs') setTool('refs');
                renderRefs();
                draw();
              },
            },
            `${i + 1}. feet ${percent(r.y, 0)} down · ${(r.area * 100).toFixed(2)} % of the picture`,
          ),
          h('button', { type: 'button', class: 'quiet', 'aria-label': `Remove reference person ${i + 1}`, onclick: () => removeRef(i) }, 'Remove'),
        ),
      ),
    );
    $('#refs-clear').disabled = refs.length === 0;
    renderGuide();
  }

  /** Fills the selected zone's references from the size the camera learned from people seen alone. */
  async function useLearned() {
    const z = refZone();
    const note = $('#refs-learned-note');
    if (!z || !camera) return;
    note.textContent = '';
    let learned;
    try {
      learned = await api(`/api/cameras/${encodeURIComponent(camera.id)}/person-size`);
    } catch (e) {
      note.textContent = explain(e);
      return;
    }
    if (learned.state !== 'ready') {
      note.textContent = `Not learned yet: ${learned.message}.`;
      return;
    }
    const ys = z.polygon.map((p) => p[1]);
    const top = Math.min(...ys);
    const bottom = Math.max(...ys);
    let lo = Math.max(top, learned.rows[0]);
    let hi = Math.min(bottom, learned.rows[1]);
    const outside = hi - lo < 0.05;
    if (outside) [lo, hi] = [top, bottom];
    const refs = [];
    for (const share of LEARNED_ROWS) {
      const y = lo + share * (hi - lo);
      const root = learned.intercept + learned.slope * y;
      if (!(root > 0)) continue;
      const area = root * root;
      const height = Math.sqrt(area * learned.aspect);
      const width = area / height;
      if (height > y || width > 1) continue;
      const x = Math.min(1 - width / 2, Math.max(width / 2, middleAtRow(z.polygon, y)));
      refs.push(refFromRect({ x0: x - width / 2, y0: y - height, x1: x + width / 2, y1: y }));
    }
    if (fitRefs(refs) === undefined) {
      note.textContent = 'The learned size gives no boxes that fit in this zone.';
      return;
    }
    refSelected = -1;
    setRefs(z, refs);
    draw();
    note.textContent = `Filled from the size learned from ${learned.supporting} people seen alone${outside ? '; this zone lies outside the rows they were seen at, so the boxes follow the fitted line there' : ''}. Adjust the boxes if needed, then save.`;
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
    if (tool === 'refs') {
      if (!refZone()) {
        setHint(selected < 0 ? 'Select a room zone first (switch to “Select and move” and click one).' : 'Reference people are for room zones; this one is a shelf.');
        return;
      }
      const hit = hitRef(p);
      if (hit.corner !== undefined) drag = { kind: 'ref-corner', index: hit.index, fixed: hit.fixed };
      else if (hit.index >= 0) drag = { kind: 'ref-move', index: hit.index, start: p, original: refsOf(refZone())[hit.index] };
      else {
        drag = { kind: 'ref-new' };
        refDraft = [p, p];
      }
      refSelected = hit.index;
      canvas.setPointerCapture(event.pointerId);
      renderRefs();
      draw();
      return;
    }
    const v = hitVertex(p);
    if (v >= 0) {
      drag = { kind: 'vertex', index: v };
      corner = v;
    } else {
      const z = hitZone(p);
      if (z !== selected) refSelected = -1;
      selected = z;
      corner = -1;
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
    if (tool === 'refs' && !drag) {
      guide = p;
      renderGuide();
      draw();
      return;
    }
    if (!drag) return;
    if (drag.kind === 'person') {
      personBox = [personBox[0], p];
    } else if (drag.kind === 'ref-new') {
      refDraft = [refDraft[0], p];
    } else if (drag.kind === 'ref-corner') {
      const z = refZone();
      const [fx, fy] = drag.fixed;
      // Keep the box at least MIN_BOX wide and tall, on the side of the fixed corner it was dragged to.
      const x = Math.abs(p[0] - fx) >= MIN_BOX ? p[0] : fx + (p[0] >= fx ? MIN_BOX : -MIN_BOX);
      const y = Math.abs(p[1] - fy) >= MIN_BOX ? p[1] : fy + (p[1] >= fy ? MIN_BOX : -MIN_BOX);
      z.perspective[drag.index] = refFromRect({ x0: fx, y0: fy, x1: x, y1: y });
      changed();
    } else if (drag.kind === 'ref-move') {
      const z = refZone();
      z.perspective[drag.index] = drag.original;
      moveRef(drag.index, p[0] - drag.start[0], p[1] - drag.start[1]);
      changed();
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
    if (drag?.kind === 'ref-new' && refDraft) {
      const r = normRect(refDraft);
      const z = refZone();
      if (z && r.x1 - r.x0 >= MIN_BOX && r.y1 - r.y0 >= MIN_BOX) {
        setRefs(z, [...refsOf(z), refFromRect(r)]);
        refSelected = refsOf(z).length - 1;
      }
      refDraft = undefined;
    }
    if (drag?.kind === 'ref-corner' || drag?.kind === 'ref-move' || drag?.kind === 'ref-new') {
      drag = undefined;
      renderRefs();
      draw();
      return;
    }
    if (drag?.kind === 'person' && personBox && selected >= 0) {
      const [a, b] = personBox;
      const share = Math.abs(a[0] - b[0]) * Math.abs(a[1] - b[1]);
      if (share > 0.00001) {
        draft[selected].personArea = Number(share.toPrecision(3));
        renderForm();
        changed();
        setHint(`“One person covers” of ${draft[selected].name || draft[selected].id} is now ${(share * 100).toFixed(2)} % of the picture. Save to apply.`);
      }
    }
    drag = undefined;
  };
  canvas.addEventListener('pointerup', endDrag);
  canvas.addEventListener('pointercancel', endDrag);
  canvas.addEventListener('pointerleave', () => {
    if (!guide) return;
    guide = undefined;
    renderGuide();
    draw();
  });

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

  // ---- keyboard (zoneKeys.js; here the reference boxes' keys and the tools' dispatch) -------

  canvas.addEventListener('keydown', (event) => {
    if (!camera || event.altKey || event.ctrlKey || event.metaKey) return;
    if (tool === 'refs' && refZone()) {
      if (!refKey(event)) return;
      event.preventDefault();
      draw();
      return;
    }
    if (tool === 'draw') {
      if (!drawKey(event)) return;
    } else if (tool === 'select') {
      if (!selectKey(event)) return;
    } else if (event.key === 'Escape') {
      personBox = undefined;
    } else return;
    event.preventDefault();
    draw();
  });

  /**
   * Reference people by keyboard: N adds a box in the zone's middle row (one person's size there),
   * B chooses the next box (Shift+B the one before), arrows move it, + and − resize it about its
   * foot point, Delete removes it, Esc lets go of it.
   */
  function refKey(event) {
    const z = refZone();
    const refs = refsOf(z);
    const key = event.key.length === 1 ? event.key.toLowerCase() : event.key;
    const step = event.shiftKey ? 0.02 : 0.005;
    const arrows = { ArrowLeft: [-step, 0], ArrowRight: [step, 0], ArrowUp: [0, -step], ArrowDown: [0, step] };
    const say = (i) => {
      const r = refsOf(z)[i];
      announce(`Reference person ${i + 1} of ${refsOf(z).length}: feet ${percent(r.y, 1)} down, ${(r.area * 100).toFixed(2)} % of the picture`);
    };
    if (key === 'n' || event.key === 'Insert') {
      const ys = z.polygon.map((p) => p[1]);
      const y = (Math.min(...ys) + Math.max(...ys)) / 2;
      const area = expectedRect(z, [0.5, y])?.area ?? z.personArea ?? DEFAULT_PERSON_AREA;
      const height = Math.min(y, Math.sqrt(area * refAspect(z)));
      const width = Math.min(1, area / height);
      const x = Math.min(1 - width / 2, Math.max(width / 2, middleAtRow(z.polygon, y)));
      setRefs(z, [...refs, refFromRect({ x0: x - width / 2, y0: y - height, x1: x + width / 2, y1: y })]);
      refSelected = refsOf(z).length - 1;
      renderRefs();
      say(refSelected);
    } else if (key === 'b') {
      if (refs.length === 0) return true;
      refSelected = refSelected < 0 ? 0 : (refSelected + (event.shiftKey ? refs.length - 1 : 1)) % refs.length;
      renderRefs();
      say(refSelected);
    } else if (refSelected < 0 || refSelected >= refs.length) {
      if (!(event.key in arrows) && !['+', '=', '-', 'Delete', 'Backspace'].includes(event.key)) return false;
      announce('No reference person chosen: press N to add one, B to choose one.');
    } else if (event.key === 'Delete' || event.key === 'Backspace') {
      removeRef(refSelected);
      announce('Reference person removed');
    } else if (event.key in arrows) {
      moveRef(refSelected, ...arrows[event.key]);
      changed();
      renderRefs();
      say(refSelected);
    } else if (event.key === '+' || event.key === '=' || event.key === '-') {
      const r = refRect(z, refs[refSelected]);
      const f = event.key === '-' ? 1 / 1.1 : 1.1;
      const cx = (r.x0 + r.x1) / 2;
      const w = Math.max(MIN_BOX, (r.x1 - r.x0) * f);
      const hh = Math.max(MIN_BOX, (r.y1 - r.y0) * f);
      if (r.y1 - hh >= 0 && cx - w / 2 >= 0 && cx + w / 2 <= 1) {
        z.perspective[refSelected] = refFromRect({ x0: cx - w / 2, y0: r.y1 - hh, x1: cx + w / 2, y1: r.y1 });
        changed();
        renderRefs();
      }
      say(refSelected);
    } else if (event.key === 'Escape') {
      refSelected = -1;
      renderRefs();
    } else return false;
    return true;
  }

  /** Makes zone i the selected one (list, form and picture follow). */
  function choose(i) {
    if (i !== selected) {
      refSelected = -1;
      corner = -1;
    }
    selected = i;
    renderList();
    renderForm();
    draw();
  }

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
    $('#zf-name').focus();
    $('#zf-name').select();
  }

  function deleteSelected() {
    if (selected < 0) return;
    refSelected = -1;
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
    for (const b of $$('button[data-tool]')) b.setAttribute('aria-pressed', String(b.dataset.tool === next));
    drawing = [];
    personBox = undefined;
    refDraft = undefined;
    guide = undefined;
    setHint(HINTS[next]);
    renderGuide();
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
              onclick: () => choose(i),
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
    $('#zf-absorb').value = z.absorbSeconds ?? '';
    const low = lowKey(z) in lowStockDraft ? lowStockDraft[lowKey(z)] : display.lowStock[lowKey(z)];
    $('#zf-lowstock').value = low === undefined || low === null ? '' : String(Math.round(low * 100));
    $('#zf-lowstock').placeholder = String(Math.round(display.defaultLowStock * 100));
    for (const label of $$('[data-for]', form)) label.hidden = label.dataset.for !== z.kind;
    $('#zf-personarea-label').textContent = z.kind === 'shelf' ? 'One item covers' : 'One person covers';
    renderCorners();
    renderRefs();
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
  /** New zones whose id was typed by hand; the others take their id from their name. */
  const idTyped = new WeakSet();
  bindField('#zf-id', (z, v) => {
    z.id = v;
    idTyped.add(z);
  });
  bindField('#zf-name', (z, v) => {
    setOptional('name', String)(z, v);
    if (isSaved(z) || idTyped.has(z)) return;
    const id = slug(v);
    if (id && !draft.some((o) => o !== z && o.id === id)) {
      z.id = id;
      $('#zf-id').value = id;
    }
  });
  bindField('#zf-kind', (z, v) => {
    z.kind = v;
    if (v === 'shelf') {
      delete z.capacity;
      delete z.perspective;
    }
    renderForm();
  });
  bindField('#zf-capacity', setOptional('capacity', Number));
  bindField('#zf-threshold', setOptional('threshold', Number));
  bindField('#zf-personarea', setOptional('personArea', Number));
  bindField('#zf-minblob', setOptional('minBlobArea', Number));
  bindField('#zf-absorb', setOptional('absorbSeconds', Number));
  bindField('#zf-lowstock', (z, v) => {
    lowStockDraft[lowKey(z)] = v === '' ? null : Number(v) / 100;
  });

  function changed() {
    okEl.textContent = '';
    errorEl.textContent = '';
    renderDirty();
    syncCorners();
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
      showError(e);
    }
  }

  /** A refused save in the words of the form (zone name and field label), the server's text one click away. */
  function showError(e) {
    const m = e instanceof ApiError && e.status === 400 ? /zones\[(\d+)\]\.(\w+)(\S*)\s+(.*)$/.exec(e.message) : null;
    if (!m) {
      errorEl.textContent = explain(e);
      return;
    }
    const z = draft[Number(m[1])];
    const label = FIELD_WORDS[m[2]] ?? m[2];
    const what = problemWords(m[2], m[4]);
    replace(
      errorEl,
      h('span', {}, `Not saved. Zone “${z?.name || z?.id || Number(m[1]) + 1}”, ${label}: ${what}`),
      h('details', { class: 'more' }, h('summary', {}, 'Technical details'), h('code', {}, e.message)),
    );
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
        mask = await api(`/api/cameras/${encodeURIComponent(camera.id)}/mask?format=json&cell=8`);
      } catch {
        mask = undefined;
      }
      draw();
    };
    tick();
    maskTimer = setInterval(tick, 1000);
  }

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
              h('td', {}, r.field === '*' ? (r.old === null ? 'added' : 'removed') : `changed: ${FIELD_WORDS[r.field] ?? r.field}`),
              h('td', {}, r.field === '*' ? '' : brief(r.old)),
              h('td', {}, r.field === '*' ? '' : brief(r.new)),
            ),
          ),
    );
  }

  // ---- wiring -----------------------------------------------------------------------------

  cameraSelect.addEventListener('change', () => selectCamera(cameraSelect.value));
  for (const b of $$('button[data-tool]')) b.addEventListener('click', () => setTool(b.dataset.tool));
  $('#zone-delete').addEventListener('click', deleteSelected);
  $('#refs-learned').addEventListener('click', useLearned);
  $('#refs-clear').addEventListener('click', () => {
    const z = refZone();
    if (!z) return;
    refSelected = -1;
    setRefs(z, []);
    draw();
  });
  $('#zones-save').addEventListener('click', save);
  $('#zones-discard').addEventListener('click', () => {
    draft = saved.map(clone);
    lowStockDraft = {};
    refSelected = -1;
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
    scene.loadKept();
    await loadBackground();
    sizeCanvas();
    draw();
    restartMask();
  });
  canvas.addEventListener('focus', () => {
    draw();
    if (tool === 'draw') announce(`Drawing: the cross is at ${where(keyCursor)}. Arrow keys move it, Space places a corner, Enter closes the zone.`);
  });
  canvas.addEventListener('blur', draw);
  setTool('select');

  return {
    async show() {
      visible = true;
      if (cameras.length === 0) await loadCameras();
      else {
        sizeCanvas();
        draw();
        restartMask();
        scene.loadModel();
        scene.loadKept();
      }
    },
    hide() {
      visible = false;
      restartMask();
      scene.stop();
    },
  };
}
