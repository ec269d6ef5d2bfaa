// Reference people of a room zone: boxes drawn where one person would stand, feet on the bottom
// edge, from which the expected person's size follows the distance (the zones API's
// `perspective`). Above, their geometry (pure, on normalised points); below, the "Reference
// people" part of the zone form and the actions the pointer and the keyboard share.
import { $, h, replace } from './dom.js';
import { explain } from './api.js';
import { percent } from './format.js';
import { fetchPersonSize } from './zoneApi.js';
import { clamp01, middleAtRow, round4 } from './zoneGeometry.js';

/** Smallest reference box, share of the frame's width and height: a click is not a box. */
export const MIN_BOX = 0.005;
/** Reference people's feet must span at least this share of the frame height (as the server checks). */
const MIN_REF_SPREAD = 0.02;
/** Height ÷ width in pixels of a standing person, for references given without a box (common practice). */
const PERSON_ASPECT_PX = 2.5;
/** Smallest expected area, share of the frame (as the server's fit). */
const MIN_AREA = 0.0002;
/** One person's share of the frame in a room zone without personArea (the server's default). */
export const DEFAULT_PERSON_AREA = 0.008;
/** The learned size fills boxes at these shares of the zone's rows. */
const LEARNED_ROWS = [0.1, 0.5, 0.9];

// ---- geometry ---------------------------------------------------------------------------

/** The editor's selected zone when it is a room (reference people are for rooms), else undefined. */
export const refZone = (ed) => (ed.draft[ed.selected]?.kind === 'room' ? ed.draft[ed.selected] : undefined);
export const refsOf = (z) => z?.perspective ?? [];
/** Height ÷ width of a standing person as shares of the frame's height and width. */
const defaultAspect = (frame) => (PERSON_ASPECT_PX * frame.width) / frame.height;

/** A reference's box { x0, y0, x1, y1 }; one given without a box gets a standing person's shape in the zone's middle. */
export function refRect(z, r, frame) {
  if (r.x !== undefined && r.height !== undefined) {
    const w = r.area / r.height;
    return { x0: r.x - w / 2, y0: r.y - r.height, x1: r.x + w / 2, y1: r.y };
  }
  const h = Math.min(r.y, Math.sqrt(r.area * defaultAspect(frame)));
  const w = Math.min(1, r.area / h);
  const x = Math.min(1 - w / 2, Math.max(w / 2, middleAtRow(z.polygon, r.y)));
  return { x0: x - w / 2, y0: r.y - h, x1: x + w / 2, y1: r.y };
}

/** The zones API's reference for a box: foot point (bottom centre), area and height, rounded. */
export function refFromRect(rect) {
  const x0 = round4(clamp01(Math.min(rect.x0, rect.x1)));
  const x1 = round4(clamp01(Math.max(rect.x0, rect.x1)));
  const y0 = round4(clamp01(Math.min(rect.y0, rect.y1)));
  const y1 = round4(clamp01(Math.max(rect.y0, rect.y1)));
  const w = round4(x1 - x0);
  const h = round4(y1 - y0);
  return { x: Math.round(((x0 + x1) / 2) * 100000) / 100000, y: y1, area: Number((w * h).toPrecision(8)), height: h };
}

/** √area fitted by least squares in the foot row (as the server's fitPersonArea); undefined without two rows far enough apart. */
export function fitRefs(refs) {
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
export function refAspect(z, frame) {
  const aspects = refsOf(z)
    .filter((r) => r.height !== undefined)
    .map((r) => (r.height * r.height) / r.area)
    .sort((a, b) => a - b);
  if (aspects.length === 0) return defaultAspect(frame);
  const m = aspects.length >> 1;
  return aspects.length % 2 ? aspects[m] : (aspects[m - 1] + aspects[m]) / 2;
}

/** The expected person's box with feet at p, or undefined without a fit. */
export function expectedRect(z, p, frame) {
  const fit = fitRefs(refsOf(z));
  if (!fit) return undefined;
  const area = fit.areaAt(p[1]);
  const h = Math.sqrt(area * refAspect(z, frame));
  const w = area / h;
  return { area, rect: { x0: p[0] - w / 2, y0: p[1] - h, x1: p[0] + w / 2, y1: p[1] } };
}

// ---- the form's "Reference people" and the shared actions -------------------------------

/**
 * `ed` is the zone editor (zones.js); reads `draft`, `selected`, `refSelected`, `tool`, `guide`,
 * `frame`, `camera`, calls `changed()`, `draw()`, `setTool()`. Returns the actions `setRefs`,
 * `removeRef`, `moveRef`, `renderRefs`, `renderGuide`.
 */
export function createReferencePanel(ed) {
  function setRefs(z, refs) {
    if (refs.length > 0) z.perspective = refs;
    else delete z.perspective;
    ed.changed();
    renderRefs();
  }

  function removeRef(index) {
    const z = refZone(ed);
    if (!z || index < 0 || index >= refsOf(z).length) return;
    setRefs(z, refsOf(z).filter((_, i) => i !== index));
    ed.refSelected = Math.min(index, refsOf(z).length - 1);
    renderRefs();
    ed.draw();
  }

  /** Moves reference `index` of the selected zone by (dx, dy), kept inside the picture. */
  function moveRef(index, dx, dy) {
    const z = refZone(ed);
    const r = z && refsOf(z)[index];
    if (!r) return;
    const rect = refRect(z, r, ed.frame);
    const mx = Math.min(1 - rect.x1, Math.max(-rect.x0, dx));
    const my = Math.min(1 - rect.y1, Math.max(-rect.y0, dy));
    z.perspective[index] = refFromRect({ x0: rect.x0 + mx, y0: rect.y0 + my, x1: rect.x1 + mx, y1: rect.y1 + my });
  }

  /** Shows in words the size expected where the pointer is (the outline's figure, for screen readers too). */
  function renderGuide() {
    const el = $('#refs-guide');
    const z = refZone(ed);
    el.hidden = ed.tool !== 'refs' || !z;
    if (el.hidden) return;
    const expected = ed.guide && expectedRect(z, ed.guide, ed.frame);
    if (expected) el.textContent = `Expected person with feet here (${percent(ed.guide[1], 0)} down): ${(expected.area * 100).toFixed(2)} % of the picture.`;
    else if (!fitRefs(refsOf(z))) el.textContent = 'The expected size shows once there are two boxes with their feet at different heights.';
    else el.textContent = 'Point at the picture to see the size expected there.';
  }

  function renderRefs() {
    const z = ed.draft[ed.selected];
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
              'aria-pressed': String(i === ed.refSelected),
              dataset: { ref: i },
              onclick: () => {
                ed.refSelected = i;
                if (ed.tool !== 'refs') ed.setTool('refs');
                renderRefs();
                ed.draw();
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
    const z = refZone(ed);
    const note = $('#refs-learned-note');
    if (!z || !ed.camera) return;
    note.textContent = '';
    let learned;
    try {
      learned = await fetchPersonSize(ed.camera.id);
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
    ed.refSelected = -1;
    setRefs(z, refs);
    ed.draw();
    note.textContent = `Filled from the size learned from ${learned.supporting} people seen alone${outside ? '; this zone lies outside the rows they were seen at, so the boxes follow the fitted line there' : ''}. Adjust the boxes if needed, then save.`;
  }

  $('#refs-learned').addEventListener('click', useLearned);
  $('#refs-clear').addEventListener('click', () => {
    const z = refZone(ed);
    if (!z) return;
    ed.refSelected = -1;
    setRefs(z, []);
    ed.draw();
  });

  return { setRefs, removeRef, moveRef, renderRefs, renderGuide };
}
