// Editing zones with the keyboard on the Zones view's picture (WCAG 2.1.1 Keyboard and 2.5.7
// Dragging Movements): in "Draw zone" the arrow keys move a cross and Space places a corner; in
// "Select and move" Z and C choose a zone and a corner, the arrow keys move them; in "Reference
// people" N adds a box, B chooses one, the arrow keys move it. What the keys did is said in a
// polite live region. The pointer's way is zonePointer.js; the corners typed as numbers are in
// the zone form (zoneForm.js).
import { $ } from './dom.js';
import { percent } from './format.js';
import { DEFAULT_PERSON_AREA, MIN_BOX, expectedRect, refAspect, refFromRect, refRect, refsOf, refZone } from './referencePeople.js';
import { clamp01, middleAtRow, round, topLeft } from './zoneGeometry.js';

/**
 * `ed` is the zone editor (zones.js): its state (`camera`, `tool`, `draft`, `selected`, `corner`
 * (chosen corner or -1), `keyCursor`, `cursor`, `drawing`, `personBox`, `refSelected`, `frame`)
 * and the actions `changed()`, `draw()`, `deleteSelected()`, `finishDrawing()`, `choose(i)`,
 * `renderCorners()`, `renderRefs()`, `setRefs()`, `removeRef()`, `moveRef()`. Listens to the
 * canvas' keys and focus; returns `announce` and `where`.
 */
export function createZoneKeys(ed) {
  /** Says what the keyboard just did, for screen readers (a polite live region). */
  const announce = (text) => {
    $('#canvas-status').textContent = text;
  };
  const where = (p) => `${percent(p[0], 1)} from the left, ${percent(p[1], 1)} from the top`;
  const cornerText = (z, k) => `Corner ${k + 1} of ${z.polygon.length} of ${z.name || z.id}: ${where(z.polygon[k])}`;

  /** Draw tool: arrows move the cross, Space places a corner, Backspace takes it back, Enter closes, Esc cancels. */
  function drawKey(event) {
    const step = event.shiftKey ? 0.05 : 0.01;
    const arrows = { ArrowLeft: [-step, 0], ArrowRight: [step, 0], ArrowUp: [0, -step], ArrowDown: [0, step] };
    if (event.key in arrows) {
      const [dx, dy] = arrows[event.key];
      ed.keyCursor = round([clamp01(ed.keyCursor[0] + dx), clamp01(ed.keyCursor[1] + dy)]);
      ed.cursor = ed.keyCursor;
      announce(`Cross at ${where(ed.keyCursor)}`);
    } else if (event.key === ' ') {
      ed.drawing.push([...ed.keyCursor]);
      announce(`Corner ${ed.drawing.length} placed at ${where(ed.keyCursor)}${ed.drawing.length >= 3 ? '. Enter closes the zone.' : ''}`);
    } else if (event.key === 'Backspace') {
      ed.drawing.pop();
      announce(`${ed.drawing.length} corner${ed.drawing.length === 1 ? '' : 's'} placed`);
    } else if (event.key === 'Enter') {
      ed.finishDrawing();
    } else if (event.key === 'Escape') {
      ed.drawing = [];
      announce('Drawing cancelled');
    } else return false;
    return true;
  }

  /** Select tool: Z next zone, C next corner (Shift: previous), arrows move, Insert adds, Delete removes, Esc the whole zone. */
  function selectKey(event) {
    const z = ed.draft[ed.selected];
    const key = event.key.length === 1 ? event.key.toLowerCase() : event.key;
    const step = event.shiftKey ? 0.02 : 0.005;
    const arrows = { ArrowLeft: [-step, 0], ArrowRight: [step, 0], ArrowUp: [0, -step], ArrowDown: [0, step] };
    if (key === 'z') {
      if (ed.draft.length === 0) return true;
      const n = ed.draft.length;
      ed.choose((ed.selected + (event.shiftKey ? n - 1 : 1) + n) % n);
      announce(`Zone ${ed.draft[ed.selected].name || ed.draft[ed.selected].id} (${ed.selected + 1} of ${n})`);
    } else if (!z) {
      if (key === 'c' || event.key in arrows) announce('No zone chosen: press Z to choose one, or draw one with “Draw zone”.');
      else return false;
    } else if (key === 'c') {
      const n = z.polygon.length;
      ed.corner = ed.corner < 0 ? (event.shiftKey ? n - 1 : 0) : (ed.corner + (event.shiftKey ? n - 1 : 1)) % n;
      announce(cornerText(z, ed.corner));
      ed.renderCorners();
    } else if (event.key in arrows) {
      const [dx, dy] = arrows[event.key];
      if (ed.corner >= 0) {
        const p = z.polygon[ed.corner];
        z.polygon[ed.corner] = round([clamp01(p[0] + dx), clamp01(p[1] + dy)]);
        announce(cornerText(z, ed.corner));
      } else {
        z.polygon = shifted(z.polygon, dx, dy);
        announce(`Zone ${z.name || z.id} moved: its top left at ${where(topLeft(z.polygon))}`);
      }
      ed.changed();
    } else if (event.key === 'Insert' || event.key === '+') {
      const k = ed.corner < 0 ? z.polygon.length - 1 : ed.corner;
      const a = z.polygon[k];
      const b = z.polygon[(k + 1) % z.polygon.length];
      z.polygon.splice(k + 1, 0, round([(a[0] + b[0]) / 2, (a[1] + b[1]) / 2]));
      ed.corner = k + 1;
      ed.changed();
      announce(`Added. ${cornerText(z, ed.corner)}`);
    } else if (event.key === 'Delete' || event.key === 'Backspace') {
      if (ed.corner < 0) {
        ed.deleteSelected();
        announce('Zone deleted');
      } else if (z.polygon.length <= 3) announce('A zone needs at least three corners: this one cannot go.');
      else {
        z.polygon.splice(ed.corner, 1);
        ed.corner = Math.min(ed.corner, z.polygon.length - 1);
        ed.changed();
        announce(`Corner removed. ${cornerText(z, ed.corner)}`);
      }
    } else if (event.key === 'Escape') {
      ed.corner = -1;
      ed.drawing = [];
      ed.personBox = undefined;
      ed.renderCorners();
      announce(`Whole zone ${z.name || z.id} chosen: arrow keys move it`);
    } else return false;
    return true;
  }

  /** The polygon moved by (dx, dy), kept inside the picture. */
  function shifted(poly, dx, dy) {
    const xs = poly.map((q) => q[0]);
    const ys = poly.map((q) => q[1]);
    const mx = Math.min(1 - Math.max(...xs), Math.max(-Math.min(...xs), dx));
    const my = Math.min(1 - Math.max(...ys), Math.max(-Math.min(...ys), dy));
    return poly.map((q) => round([q[0] + mx, q[1] + my]));
  }

  /**
   * Reference people: N adds a box in the zone's middle row (one person's size there), B chooses
   * the next box (Shift+B the one before), arrows move it, + and − resize it about its foot point,
   * Delete removes it, Esc lets go of it.
   */
  function refKey(event) {
    const z = refZone(ed);
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
      const area = expectedRect(z, [0.5, y], ed.frame)?.area ?? z.personArea ?? DEFAULT_PERSON_AREA;
      const height = Math.min(y, Math.sqrt(area * refAspect(z, ed.frame)));
      const width = Math.min(1, area / height);
      const x = Math.min(1 - width / 2, Math.max(width / 2, middleAtRow(z.polygon, y)));
      ed.setRefs(z, [...refs, refFromRect({ x0: x - width / 2, y0: y - height, x1: x + width / 2, y1: y })]);
      ed.refSelected = refsOf(z).length - 1;
      ed.renderRefs();
      say(ed.refSelected);
    } else if (key === 'b') {
      if (refs.length === 0) return true;
      ed.refSelected = ed.refSelected < 0 ? 0 : (ed.refSelected + (event.shiftKey ? refs.length - 1 : 1)) % refs.length;
      ed.renderRefs();
      say(ed.refSelected);
    } else if (ed.refSelected < 0 || ed.refSelected >= refs.length) {
      if (!(event.key in arrows) && !['+', '=', '-', 'Delete', 'Backspace'].includes(event.key)) return false;
      announce('No reference person chosen: press N to add one, B to choose one.');
    } else if (event.key === 'Delete' || event.key === 'Backspace') {
      ed.removeRef(ed.refSelected);
      announce('Reference person removed');
    } else if (event.key in arrows) {
      ed.moveRef(ed.refSelected, ...arrows[event.key]);
      ed.changed();
      ed.renderRefs();
      say(ed.refSelected);
    } else if (event.key === '+' || event.key === '=' || event.key === '-') {
      const r = refRect(z, refs[ed.refSelected], ed.frame);
      const f = event.key === '-' ? 1 / 1.1 : 1.1;
      const cx = (r.x0 + r.x1) / 2;
      const w = Math.max(MIN_BOX, (r.x1 - r.x0) * f);
      const hh = Math.max(MIN_BOX, (r.y1 - r.y0) * f);
      if (r.y1 - hh >= 0 && cx - w / 2 >= 0 && cx + w / 2 <= 1) {
        z.perspective[ed.refSelected] = refFromRect({ x0: cx - w / 2, y0: r.y1 - hh, x1: cx + w / 2, y1: r.y1 });
        ed.changed();
        ed.renderRefs();
      }
      say(ed.refSelected);
    } else if (event.key === 'Escape') {
      ed.refSelected = -1;
      ed.renderRefs();
    } else return false;
    return true;
  }

  // Each tool's keys; a key the tool does not use keeps its ordinary meaning (Tab, the browser's shortcuts).
  ed.canvas.addEventListener('keydown', (event) => {
    if (!ed.camera || event.altKey || event.ctrlKey || event.metaKey) return;
    if (ed.tool === 'refs' && refZone(ed)) {
      if (!refKey(event)) return;
      event.preventDefault();
      ed.draw();
      return;
    }
    if (ed.tool === 'draw') {
      if (!drawKey(event)) return;
    } else if (ed.tool === 'select') {
      if (!selectKey(event)) return;
    } else if (event.key === 'Escape') {
      ed.personBox = undefined;
    } else return;
    event.preventDefault();
    ed.draw();
  });

  // The cross shows while the picture has the focus.
  ed.canvas.addEventListener('focus', () => {
    ed.draw();
    if (ed.tool === 'draw') announce(`Drawing: the cross is at ${where(ed.keyCursor)}. Arrow keys move it, Space places a corner, Enter closes the zone.`);
  });
  ed.canvas.addEventListener('blur', () => ed.draw());

  return { announce, where };
}
