// Editing zones with a pointer (mouse, pen, touch) on the Zones view's picture, per tool:
// "Select and move" drags a zone or a corner, double-click adds or removes a corner; "Draw zone"
// places corners; "Mark one person" measures one person's share; "Reference people" draws, moves
// and resizes boxes and shows the expected size under the pointer. The keyboard's way to do the
// same is zoneKeys.js.
import { MIN_BOX, refFromRect, refRect, refsOf, refZone } from './referencePeople.js';
import { inside, nearestOnSegment, normRect, round } from './zoneGeometry.js';

/** How near, in CSS pixels, a pointer must come to a corner or an edge to take it. */
const HIT_PX = 9;

/**
 * `ed` is the zone editor (zones.js): its state, and the actions `norm`, `px`, `draw`,
 * `changed`, `finishDrawing`, `setHint`, `renderList`, `renderForm`, `renderRefs`, `renderGuide`,
 * `setRefs`, `moveRef`.
 */
export function attachZonePointer(ed) {
  const { canvas } = ed;

  /** The selected zone's corner under p, or -1. */
  function hitVertex(p) {
    if (ed.selected < 0) return -1;
    const poly = ed.draft[ed.selected].polygon;
    let best = -1;
    let bestD = HIT_PX;
    poly.forEach((q, k) => {
      const d = ed.px(p, q);
      if (d <= bestD) {
        best = k;
        bestD = d;
      }
    });
    return best;
  }

  /** The zone under p, the selected one first, else the topmost; -1 for none. */
  function hitZone(p) {
    if (ed.selected >= 0 && inside(p, ed.draft[ed.selected].polygon)) return ed.selected;
    for (let i = ed.draft.length - 1; i >= 0; i--) if (inside(p, ed.draft[i].polygon)) return i;
    return -1;
  }

  /** The reference box under p: a corner of the chosen box (with the opposite, fixed corner), else the topmost box. */
  function hitRef(p) {
    const z = refZone(ed);
    if (!z) return { index: -1 };
    const refs = refsOf(z);
    if (ed.refSelected >= 0 && ed.refSelected < refs.length) {
      const r = refRect(z, refs[ed.refSelected], ed.frame);
      const corners = [[r.x0, r.y0], [r.x1, r.y0], [r.x0, r.y1], [r.x1, r.y1]];
      const k = corners.findIndex((c) => ed.px(p, c) <= HIT_PX);
      if (k >= 0) return { index: ed.refSelected, corner: k, fixed: corners[3 - k] };
    }
    for (let i = refs.length - 1; i >= 0; i--) {
      const r = refRect(z, refs[i], ed.frame);
      if (p[0] >= r.x0 && p[0] <= r.x1 && p[1] >= r.y0 && p[1] <= r.y1) return { index: i };
    }
    return { index: -1 };
  }

  canvas.addEventListener('pointerdown', (event) => {
    if (!ed.camera) return;
    canvas.focus();
    const p = ed.norm(event);
    if (ed.tool === 'draw') {
      if (ed.drawing.length >= 3 && ed.px(p, ed.drawing[0]) <= HIT_PX + 3) ed.finishDrawing();
      else ed.drawing.push(round(p));
      ed.draw();
      return;
    }
    if (ed.tool === 'person') {
      if (ed.selected < 0) {
        ed.setHint('Select a zone first (switch to “Select and move” and click one).');
        return;
      }
      ed.personBox = [p, p];
      ed.drag = { kind: 'person' };
      canvas.setPointerCapture(event.pointerId);
      ed.draw();
      return;
    }
    if (ed.tool === 'refs') {
      if (!refZone(ed)) {
        ed.setHint(ed.selected < 0 ? 'Select a room zone first (switch to “Select and move” and click one).' : 'Reference people are for room zones; this one is a shelf.');
        return;
      }
      const hit = hitRef(p);
      if (hit.corner !== undefined) ed.drag = { kind: 'ref-corner', index: hit.index, fixed: hit.fixed };
      else if (hit.index >= 0) ed.drag = { kind: 'ref-move', index: hit.index, start: p, original: refsOf(refZone(ed))[hit.index] };
      else {
        ed.drag = { kind: 'ref-new' };
        ed.refDraft = [p, p];
      }
      ed.refSelected = hit.index;
      canvas.setPointerCapture(event.pointerId);
      ed.renderRefs();
      ed.draw();
      return;
    }
    const v = hitVertex(p);
    if (v >= 0) {
      ed.drag = { kind: 'vertex', index: v };
      ed.corner = v;
    } else {
      const z = hitZone(p);
      if (z !== ed.selected) ed.refSelected = -1;
      ed.selected = z;
      ed.corner = -1;
      if (z >= 0) ed.drag = { kind: 'move', start: p, original: ed.draft[z].polygon.map((q) => [...q]) };
      ed.renderList();
      ed.renderForm();
    }
    if (ed.drag) canvas.setPointerCapture(event.pointerId);
    ed.draw();
  });

  canvas.addEventListener('pointermove', (event) => {
    const p = ed.norm(event);
    if (ed.tool === 'draw') {
      ed.cursor = p;
      if (ed.drawing.length > 0) ed.draw();
      return;
    }
    if (ed.tool === 'refs' && !ed.drag) {
      ed.guide = p;
      ed.renderGuide();
      ed.draw();
      return;
    }
    const { drag } = ed;
    if (!drag) return;
    if (drag.kind === 'person') {
      ed.personBox = [ed.personBox[0], p];
    } else if (drag.kind === 'ref-new') {
      ed.refDraft = [ed.refDraft[0], p];
    } else if (drag.kind === 'ref-corner') {
      const z = refZone(ed);
      const [fx, fy] = drag.fixed;
      // Keep the box at least MIN_BOX wide and tall, on the side of the fixed corner it was dragged to.
      const x = Math.abs(p[0] - fx) >= MIN_BOX ? p[0] : fx + (p[0] >= fx ? MIN_BOX : -MIN_BOX);
      const y = Math.abs(p[1] - fy) >= MIN_BOX ? p[1] : fy + (p[1] >= fy ? MIN_BOX : -MIN_BOX);
      z.perspective[drag.index] = refFromRect({ x0: fx, y0: fy, x1: x, y1: y });
      ed.changed();
    } else if (drag.kind === 'ref-move') {
      const z = refZone(ed);
      z.perspective[drag.index] = drag.original;
      ed.moveRef(drag.index, p[0] - drag.start[0], p[1] - drag.start[1]);
      ed.changed();
    } else if (drag.kind === 'vertex') {
      ed.draft[ed.selected].polygon[drag.index] = round(p);
      ed.changed();
    } else if (drag.kind === 'move') {
      const xs = drag.original.map((q) => q[0]);
      const ys = drag.original.map((q) => q[1]);
      const dx = Math.min(1 - Math.max(...xs), Math.max(-Math.min(...xs), p[0] - drag.start[0]));
      const dy = Math.min(1 - Math.max(...ys), Math.max(-Math.min(...ys), p[1] - drag.start[1]));
      ed.draft[ed.selected].polygon = drag.original.map((q) => round([q[0] + dx, q[1] + dy]));
      ed.changed();
    }
    ed.draw();
  });

  const endDrag = () => {
    const { drag } = ed;
    if (drag?.kind === 'ref-new' && ed.refDraft) {
      const r = normRect(ed.refDraft);
      const z = refZone(ed);
      if (z && r.x1 - r.x0 >= MIN_BOX && r.y1 - r.y0 >= MIN_BOX) {
        ed.setRefs(z, [...refsOf(z), refFromRect(r)]);
        ed.refSelected = refsOf(z).length - 1;
      }
      ed.refDraft = undefined;
    }
    if (drag?.kind === 'ref-corner' || drag?.kind === 'ref-move' || drag?.kind === 'ref-new') {
      ed.drag = undefined;
      ed.renderRefs();
      ed.draw();
      return;
    }
    if (drag?.kind === 'person' && ed.personBox && ed.selected >= 0) {
      const [a, b] = ed.personBox;
      const share = Math.abs(a[0] - b[0]) * Math.abs(a[1] - b[1]);
      if (share > 0.00001) {
        const z = ed.draft[ed.selected];
        z.personArea = Number(share.toPrecision(3));
        ed.renderForm();
        ed.changed();
        ed.setHint(`“One person covers” of ${z.name || z.id} is now ${(share * 100).toFixed(2)} % of the picture. Save to apply.`);
      }
    }
    ed.drag = undefined;
  };
  canvas.addEventListener('pointerup', endDrag);
  canvas.addEventListener('pointercancel', endDrag);
  canvas.addEventListener('pointerleave', () => {
    if (!ed.guide) return;
    ed.guide = undefined;
    ed.renderGuide();
    ed.draw();
  });

  canvas.addEventListener('dblclick', (event) => {
    if (ed.tool !== 'select' || ed.selected < 0) return;
    const p = ed.norm(event);
    const poly = ed.draft[ed.selected].polygon;
    const v = hitVertex(p);
    if (v >= 0) {
      if (poly.length > 3) {
        poly.splice(v, 1);
        ed.changed();
      }
    } else {
      let best = -1;
      let bestD = HIT_PX;
      let at;
      for (let k = 0; k < poly.length; k++) {
        const [q] = nearestOnSegment(p, poly[k], poly[(k + 1) % poly.length]);
        const dist = ed.px(p, q);
        if (dist <= bestD) {
          best = k;
          bestD = dist;
          at = q;
        }
      }
      if (best >= 0) {
        poly.splice(best + 1, 0, round(at));
        ed.changed();
      }
    }
    ed.draw();
  });
}
