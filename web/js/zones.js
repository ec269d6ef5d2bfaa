// "Zones": draw, move and delete zone polygons over the learned empty scene, set each zone's
// figures, place reference people (boxes whose size the expected person follows with the distance),
// preview the coarse foreground mask, learn the empty scene again, and see the history of changes.
// Coordinates are normalised like the server's: x 0..1 from the left, y 0..1 from the top.
//
// This file holds the editor's state and wires its parts together:
//   zoneCanvas.js       drawing the picture          zonePointer.js   editing with a pointer
//   zoneKeys.js         editing with the keyboard    zoneForm.js      zone list, form, corners, refusals
//   referencePeople.js  reference boxes: geometry and their part of the form
//   zoneHistory.js      "Changes to the zones"       zoneApi.js       the API calls
//   emptyScene.js       the "Empty scene" panel      zoneGeometry.js, zoneWords.js: pure helpers
import { explain } from './api.js';
import { $, $$, h, replace } from './dom.js';
import { createEmptyScenePanel } from './emptyScene.js';
import { createReferencePanel } from './referencePeople.js';
import { fetchBackground, fetchCameras, fetchMask, fetchSettings, saveLowStock, saveZones } from './zoneApi.js';
import { createZoneCanvas } from './zoneCanvas.js';
import { createZoneForm } from './zoneForm.js';
import { clone } from './zoneGeometry.js';
import { showZoneHistory } from './zoneHistory.js';
import { createZoneKeys } from './zoneKeys.js';
import { attachZonePointer } from './zonePointer.js';

const HINTS = {
  select: 'Click a zone to select it; drag the zone or its corners to move them. Double-click an edge to add a corner, a corner to remove it.',
  draw: 'Click to place corners; click the first corner again (or press Enter) to close the zone. Esc cancels.',
  person: 'Drag a box around where one person would stand or sit in the selected zone: its share of the picture becomes “one person covers”.',
  refs: 'Drag a box around where one person would stand, feet on its bottom edge. Drag a box to move it, a corner to resize it; Delete removes the selected box, arrow keys move it. Place two or more, near and far: the dashed outline then shows the size expected where the pointer is.',
};

export function createZonesView(app) {
  const cameraSelect = $('#zones-camera');
  const okEl = $('#zones-ok');

  /**
   * The editor: the state every part reads and changes, and (added below) the actions of each part.
   * Points are normalised [x, y]; zones are the zones API's objects.
   */
  const ed = {
    app,
    canvas: $('#zone-canvas'),
    errorEl: $('#zones-error'),
    cameras: [],
    /** The camera shown. */
    camera: undefined,
    /** Its zones as stored, and as edited (saved when "Save zones" is pressed). */
    saved: [],
    draft: [],
    /** The display settings (low-stock marks), and the marks changed and not saved ("camera/zone" → share or null). */
    display: { lowStock: {}, defaultLowStock: 0.15 },
    lowStockDraft: {},
    /** Index of the selected zone in draft, or -1. */
    selected: -1,
    /** The corner of the selected zone chosen for the keyboard (index), or -1 for the whole zone. */
    corner: -1,
    /** 'select', 'draw', 'person' or 'refs' (the tool buttons' data-tool). */
    tool: 'select',
    /** Corners placed of the zone being drawn, and the pointer's place while drawing. */
    drawing: [],
    cursor: undefined,
    /** The keyboard's cross while drawing. */
    keyCursor: [0.5, 0.5],
    /** The pointer drag under way: { kind, … } (zonePointer.js). */
    drag: undefined,
    /** "Mark one person": the box's two corners. */
    personBox: undefined,
    /** The chosen reference box (index), the box being drawn, and the pointer's place for the expected size. */
    refSelected: -1,
    refDraft: undefined,
    guide: undefined,
    /** The learned empty scene (ImageBitmap) and the frame's size in pixels (its aspect ratio sizes the canvas). */
    background: undefined,
    frame: { width: 4, height: 3 },
    /** The latest foreground preview, `{ width, height, rows }`, while shown. */
    mask: undefined,
    /** Whether the Zones view is on screen. */
    visible: false,
  };
  const { canvas, errorEl } = ed;
  let maskTimer;

  const scene = createEmptyScenePanel(app, {
    camera: () => ed.camera,
    onModelChanged: async () => {
      await loadBackground();
      ed.draw();
    },
  });

  Object.assign(ed, { changed, choose, finishDrawing, deleteSelected, setTool, setHint });
  Object.assign(ed, createZoneCanvas(ed)); // sizeCanvas, norm, px, draw
  Object.assign(ed, createZoneForm(ed)); // renderList, renderForm, renderCorners, syncCorners, renderDirty, showError
  Object.assign(ed, createReferencePanel(ed)); // setRefs, removeRef, moveRef, renderRefs, renderGuide
  Object.assign(ed, createZoneKeys(ed)); // announce, where
  attachZonePointer(ed);

  // ---- loading ----------------------------------------------------------------------------

  async function loadCameras() {
    try {
      ed.cameras = await fetchCameras();
      ed.display = await fetchSettings();
    } catch (e) {
      errorEl.textContent = explain(e);
      return;
    }
    const keep = ed.camera?.id;
    replace(cameraSelect, ed.cameras.map((c) => h('option', { value: c.id }, c.name)));
    if (keep && ed.cameras.some((c) => c.id === keep)) cameraSelect.value = keep;
    await selectCamera(cameraSelect.value);
  }

  async function selectCamera(id) {
    ed.camera = ed.cameras.find((c) => c.id === id);
    scene.reset();
    ed.corner = -1;
    if (!ed.camera) return;
    ed.saved = ed.camera.zones.map(clone);
    ed.draft = ed.saved.map(clone);
    ed.lowStockDraft = {};
    ed.selected = ed.draft.length > 0 ? 0 : -1;
    ed.drawing = [];
    ed.personBox = undefined;
    ed.refSelected = -1;
    ed.refDraft = undefined;
    ed.guide = undefined;
    ed.mask = undefined;
    errorEl.textContent = '';
    okEl.textContent = '';
    ed.frame = ed.camera.model ? { width: ed.camera.model.width, height: ed.camera.model.height } : { width: 4, height: 3 };
    await loadBackground();
    ed.sizeCanvas();
    ed.renderList();
    ed.renderForm();
    ed.renderDirty();
    ed.draw();
    scene.loadModel();
    scene.loadKept();
    showZoneHistory(app, ed.camera);
    restartMask();
  }

  async function loadBackground() {
    ed.background?.close?.();
    ed.background = undefined;
    canvas.dataset.background = 'none';
    $('#zones-admin-note').hidden = app.isAdmin();
    if (!app.isAdmin() || !ed.camera?.model) return;
    try {
      ed.background = await fetchBackground(ed.camera.id);
      ed.frame = { width: ed.background.width, height: ed.background.height };
      canvas.dataset.background = 'shown';
    } catch (e) {
      errorEl.textContent = explain(e);
    }
  }

  // ---- tools and the editor's actions -----------------------------------------------------

  function setTool(next) {
    ed.tool = next;
    canvas.dataset.tool = next;
    for (const b of $$('button[data-tool]')) b.setAttribute('aria-pressed', String(b.dataset.tool === next));
    ed.drawing = [];
    ed.personBox = undefined;
    ed.refDraft = undefined;
    ed.guide = undefined;
    setHint(HINTS[next]);
    ed.renderGuide();
    ed.draw();
  }

  function setHint(text) {
    $('#tool-hint').textContent = text;
  }

  /** Makes zone i the selected one (list, form and picture follow). */
  function choose(i) {
    if (i !== ed.selected) {
      ed.refSelected = -1;
      ed.corner = -1;
    }
    ed.selected = i;
    ed.renderList();
    ed.renderForm();
    ed.draw();
  }

  /** Closes the outline being drawn into a new room zone, selected, its name ready to type. */
  function finishDrawing() {
    if (ed.drawing.length < 3) {
      setHint('A zone needs at least three corners.');
      return;
    }
    let n = ed.draft.length + 1;
    while (ed.draft.some((z) => z.id === `zone-${n}`)) n++;
    ed.draft.push({ id: `zone-${n}`, name: `New zone ${n}`, kind: 'room', polygon: ed.drawing });
    ed.drawing = [];
    ed.selected = ed.draft.length - 1;
    setTool('select');
    ed.renderList();
    ed.renderForm();
    changed();
    $('#zf-name').focus();
    $('#zf-name').select();
  }

  function deleteSelected() {
    if (ed.selected < 0) return;
    ed.refSelected = -1;
    ed.draft.splice(ed.selected, 1);
    ed.selected = Math.min(ed.selected, ed.draft.length - 1);
    ed.renderList();
    ed.renderForm();
    changed();
    ed.draw();
  }

  /** After any edit: the last message goes, the "Unsaved changes" mark and the corner fields follow. */
  function changed() {
    okEl.textContent = '';
    errorEl.textContent = '';
    ed.renderDirty();
    ed.syncCorners();
  }

  // ---- save and discard -------------------------------------------------------------------

  async function save() {
    errorEl.textContent = '';
    okEl.textContent = '';
    if (!ed.camera) return;
    try {
      const result = await saveZones(ed.camera.id, ed.draft);
      const lows = Object.fromEntries(Object.entries(ed.lowStockDraft).filter(([key]) => result.zones.some((z) => `${ed.camera.id}/${z.id}` === key)));
      if (Object.keys(lows).length > 0) ed.display = await saveLowStock(lows);
      ed.camera.zones = result.zones;
      const keep = ed.draft[ed.selected]?.id;
      ed.saved = result.zones.map(clone);
      ed.draft = ed.saved.map(clone);
      ed.lowStockDraft = {};
      ed.selected = Math.max(0, ed.draft.findIndex((z) => z.id === keep));
      if (ed.draft.length === 0) ed.selected = -1;
      okEl.textContent = 'Saved. Counting uses these zones from now on.';
      ed.renderList();
      ed.renderForm();
      ed.renderDirty();
      ed.draw();
      showZoneHistory(app, ed.camera);
    } catch (e) {
      ed.showError(e);
    }
  }

  function discard() {
    ed.draft = ed.saved.map(clone);
    ed.lowStockDraft = {};
    ed.refSelected = -1;
    ed.selected = Math.min(ed.selected, ed.draft.length - 1);
    errorEl.textContent = '';
    ed.renderList();
    ed.renderForm();
    ed.renderDirty();
    ed.draw();
  }

  // ---- foreground preview -----------------------------------------------------------------

  /** Starts or stops asking for the foreground mask once a second, as the checkbox and the view's visibility say. */
  function restartMask() {
    clearInterval(maskTimer);
    maskTimer = undefined;
    ed.mask = undefined;
    const on = $('#mask-toggle').checked;
    $('#mask-note').hidden = !on;
    if (!on || !ed.visible || !ed.camera) {
      ed.draw();
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
        ed.mask = await fetchMask(ed.camera.id);
      } catch {
        ed.mask = undefined;
      }
      ed.draw();
    };
    tick();
    maskTimer = setInterval(tick, 1000);
  }

  // ---- wiring -----------------------------------------------------------------------------

  cameraSelect.addEventListener('change', () => selectCamera(cameraSelect.value));
  for (const b of $$('button[data-tool]')) b.addEventListener('click', () => setTool(b.dataset.tool));
  $('#zone-delete').addEventListener('click', deleteSelected);
  $('#zones-save').addEventListener('click', save);
  $('#zones-discard').addEventListener('click', discard);
  $('#mask-toggle').addEventListener('change', restartMask);
  new ResizeObserver(() => {
    if (!ed.visible) return;
    ed.sizeCanvas();
    ed.draw();
  }).observe(canvas.parentElement);
  app.onRole(async () => {
    if (!ed.visible || !ed.camera) return;
    errorEl.textContent = '';
    scene.loadKept();
    await loadBackground();
    ed.sizeCanvas();
    ed.draw();
    restartMask();
  });
  setTool('select');

  return {
    async show() {
      ed.visible = true;
      if (ed.cameras.length === 0) await loadCameras();
      else {
        ed.sizeCanvas();
        ed.draw();
        restartMask();
        scene.loadModel();
        scene.loadKept();
      }
    },
    hide() {
      ed.visible = false;
      restartMask();
      scene.stop();
    },
  };
}
