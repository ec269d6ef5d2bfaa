// Keyboard editing of zones (WCAG 2.1.1 Keyboard and 2.5.7 Dragging Movements): in "Draw zone"
// the arrow keys move a cross and Space places a corner; in "Select and move" Z and C choose a zone
// and a corner, the arrow keys move them; and every corner can be typed as numbers.
import { $, $$, h, replace } from './dom.js';
import { percent } from './format.js';
import { clamp01, round, topLeft } from './zoneGeometry.js';

/**
 * `ed` is the zone editor's state and actions (zones.js): `draft`, `selected`, `corner` (chosen
 * corner or -1), `keyCursor`, `cursor`, `drawing`, `personBox`, and `changed()`, `draw()`,
 * `deleteSelected()`, `finishDrawing()`, `choose(i)`.
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
      renderCorners();
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
      renderCorners();
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

  // ---- corners typed as numbers -----------------------------------------------------------

  /** The selected zone's corners as number fields, % of the picture from the left and top. */
  function renderCorners() {
    const z = ed.draft[ed.selected];
    const list = $('#corner-list');
    if (!z) {
      replace(list);
      return;
    }
    const many = z.polygon.length > 3;
    replace(
      list,
      z.polygon.map((p, k) =>
        h(
          'li',
          { dataset: { corner: k, chosen: String(k === ed.corner) } },
          h('span', { class: 'corner-n', id: `corner-${k}-name` }, `Corner ${k + 1}`),
          h('label', {}, 'left', cornerInput(k, 0, p[0])),
          h('label', {}, 'top', cornerInput(k, 1, p[1])),
          h('button', { type: 'button', class: 'quiet', disabled: !many, 'aria-label': `Remove corner ${k + 1}`, onclick: () => removeCorner(k) }, 'Remove'),
        ),
      ),
    );
  }

  function cornerInput(k, axis, value) {
    return h('input', {
      type: 'number',
      min: '0',
      max: '100',
      step: '0.1',
      inputmode: 'decimal',
      value: String(Math.round(value * 1000) / 10),
      'aria-label': `Corner ${k + 1}, % from the ${axis === 0 ? 'left' : 'top'}`,
      dataset: { corner: k, axis },
      oninput: (event) => {
        const z = ed.draft[ed.selected];
        const v = Number(event.target.value);
        if (!z || !z.polygon[k] || event.target.value.trim() === '' || !(v >= 0 && v <= 100)) return;
        z.polygon[k][axis] = Math.round(v * 100) / 10000;
        ed.corner = k;
        ed.changed();
        ed.draw();
      },
    });
  }

  /** Updates the corner fields after the picture moved a corner, without disturbing the one being typed in. */
  function syncCorners() {
    const z = ed.draft[ed.selected];
    const inputs = $$('#corner-list input');
    if (!z || inputs.length !== z.polygon.length * 2) {
      renderCorners();
      return;
    }
    for (const input of inputs) {
      if (input === document.activeElement) continue;
      input.value = String(Math.round(z.polygon[Number(input.dataset.corner)][Number(input.dataset.axis)] * 1000) / 10);
    }
    for (const li of $$('#corner-list li')) li.dataset.chosen = String(Number(li.dataset.corner) === ed.corner);
  }

  function removeCorner(k) {
    const z = ed.draft[ed.selected];
    if (!z || z.polygon.length <= 3) return;
    z.polygon.splice(k, 1);
    ed.corner = -1;
    ed.changed();
    renderCorners();
    ed.draw();
    $(`#corner-list li[data-corner="${Math.min(k, z.polygon.length - 1)}"] input`)?.focus();
  }

  $('#corner-add').addEventListener('click', () => {
    const z = ed.draft[ed.selected];
    if (!z) return;
    const k = ed.corner < 0 ? z.polygon.length - 1 : ed.corner;
    const a = z.polygon[k];
    const b = z.polygon[(k + 1) % z.polygon.length];
    z.polygon.splice(k + 1, 0, round([(a[0] + b[0]) / 2, (a[1] + b[1]) / 2]));
    ed.corner = k + 1;
    ed.changed();
    renderCorners();
    ed.draw();
    $(`#corner-list li[data-corner="${k + 1}"] input`)?.focus();
  });

  return { drawKey, selectKey, renderCorners, syncCorners, announce, where };
}
