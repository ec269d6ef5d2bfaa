// The Zones view's picture: the learned empty scene (or a note in its place), the foreground
// preview, the zones with their names, the corners of the selected zone, the outline being
// drawn, the keyboard's cross, the reference people and the "one person" box. Drawing only reads
// the editor's state (zones.js); the canvas holds device pixels, the state normalised points.
import { expectedRect, refRect, refsOf, refZone } from './referencePeople.js';
import { clamp01, hexAlpha, normRect, topLeft } from './zoneGeometry.js';

const COLOURS = ['#2c5d6e', '#8a5a9e', '#b5651d', '#3d7a57', '#9e3d5a', '#4f6aa8', '#7a7a2e'];

/** The colour of the i-th zone of the list, on the picture and beside its name. */
export const zoneColour = (i) => COLOURS[i % COLOURS.length];

/**
 * `ed` is the zone editor (zones.js); drawing reads `canvas`, `app`, `camera`, `frame`,
 * `background`, `mask`, `draft`, `selected`, `corner`, `tool`, `drawing`, `cursor`, `keyCursor`,
 * `personBox`, `refSelected`, `refDraft`, `guide` and `drag`.
 */
export function createZoneCanvas(ed) {
  const { canvas } = ed;
  const g = canvas.getContext('2d');

  /** Fits the canvas to its column at the frame's aspect ratio, in device pixels. */
  function sizeCanvas() {
    const width = Math.max(200, canvas.parentElement.clientWidth);
    const height = Math.round((width * ed.frame.height) / ed.frame.width);
    const dpr = window.devicePixelRatio || 1;
    canvas.width = Math.round(width * dpr);
    canvas.height = Math.round(height * dpr);
  }

  /** A pointer event's place on the picture, normalised. */
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
    if (ed.background) {
      g.imageSmoothingEnabled = true;
      g.drawImage(ed.background, 0, 0, W, H);
    } else {
      g.fillStyle = '#ddd7cb';
      g.fillRect(0, 0, W, H);
      const text = !ed.camera?.model ? 'No empty scene learned yet' : ed.app.isAdmin() ? 'Loading the empty scene…' : 'The empty scene is shown once you enter the admin key';
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
    const { mask } = ed;
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
    ed.draft.forEach((z, i) => {
      const colour = zoneColour(i);
      const active = i === ed.selected;
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
      if (active && ed.tool === 'select') {
        z.polygon.forEach((p, k) => {
          const chosen = k === ed.corner;
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
    const { drawing } = ed;
    if (drawing.length > 0) {
      g.beginPath();
      drawing.forEach((p, k) => (k === 0 ? g.moveTo(...P(p)) : g.lineTo(...P(p))));
      if (ed.cursor) g.lineTo(...P(ed.cursor));
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
    if (ed.tool === 'draw' && document.activeElement === canvas) {
      // The keyboard's cross (arrow keys move it, Space places a corner there).
      const [cx, cy] = P(ed.keyCursor);
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
    if (ed.personBox) {
      const [a, b] = ed.personBox;
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

  /** The selected room zone's reference boxes: solid and numbered while editing them, dashed otherwise. */
  function drawReferences(P, dpr) {
    const z = refZone(ed);
    if (!z) return;
    const colour = zoneColour(ed.selected);
    const editing = ed.tool === 'refs';
    const outline = (rect, style) => {
      const [x0, y0] = P([rect.x0, rect.y0]);
      const [x1, y1] = P([rect.x1, rect.y1]);
      g.strokeRect(x0, y0, x1 - x0, y1 - y0);
      return [x0, y0, x1, y1, style];
    };
    refsOf(z).forEach((r, i) => {
      const active = editing && i === ed.refSelected;
      g.lineWidth = (active ? 3 : editing ? 2 : 1.5) * dpr;
      g.strokeStyle = editing ? colour : hexAlpha(colour, 0.7);
      g.setLineDash(editing ? [] : [4 * dpr, 3 * dpr]);
      const [x0, y0, x1, y1] = outline(refRect(z, r, ed.frame));
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
    if (editing && ed.refDraft) {
      g.setLineDash([5 * dpr, 3 * dpr]);
      g.lineWidth = 2 * dpr;
      g.strokeStyle = colour;
      outline(normRect(ed.refDraft));
      g.setLineDash([]);
    }
    if (editing && ed.guide && !ed.drag) {
      const expected = expectedRect(z, ed.guide, ed.frame);
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

  return { sizeCanvas, norm, px, draw };
}
