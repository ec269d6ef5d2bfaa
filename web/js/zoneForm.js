// The Zones view's side panel: the list of the camera's zones, the form of the selected zone (its
// fields, its corners typed as numbers), the "Unsaved changes" mark, and a refused save in the
// words of the form. The form's "Reference people" part is referencePeople.js.
import { ApiError, explain } from './api.js';
import { $, $$, h, replace } from './dom.js';
import { zoneColour } from './zoneCanvas.js';
import { round } from './zoneGeometry.js';
import { FIELD_WORDS, problemWords, slug } from './zoneWords.js';

/**
 * `ed` is the zone editor (zones.js): its state (`camera`, `saved`, `draft`, `selected`,
 * `corner`, `display`, `lowStockDraft`, `errorEl`) and the actions `choose(i)`, `changed()`,
 * `draw()`, `renderRefs()`. Returns `renderList`, `renderForm`, `renderCorners`, `syncCorners`,
 * `renderDirty` and `showError`.
 */
export function createZoneForm(ed) {
  function renderList() {
    const list = $('#zone-list');
    if (ed.draft.length === 0) {
      replace(list, h('li', { class: 'hint' }, 'No zones yet: choose “Draw zone” and click the corners on the picture.'));
      return;
    }
    replace(
      list,
      ed.draft.map((z, i) => {
        const swatch = h('span', { class: 'swatch' });
        swatch.style.background = zoneColour(i);
        return h(
          'li',
          {},
          h(
            'button',
            {
              type: 'button',
              'aria-pressed': String(i === ed.selected),
              dataset: { zone: z.id },
              onclick: () => ed.choose(i),
            },
            swatch,
            h('span', {}, z.name || z.id),
            h('span', { class: 'kind' }, z.kind === 'shelf' ? 'shelf' : z.capacity !== undefined ? `room · ${z.capacity}` : 'room'),
          ),
        );
      }),
    );
  }

  const isSaved = (z) => ed.saved.some((s) => s.id === z.id);
  /** A shelf zone's key in the low-stock settings. */
  const lowKey = (z) => `${ed.camera.id}/${z.id}`;

  function renderForm() {
    const form = $('#zone-form');
    const z = ed.draft[ed.selected];
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
    const low = lowKey(z) in ed.lowStockDraft ? ed.lowStockDraft[lowKey(z)] : ed.display.lowStock[lowKey(z)];
    $('#zf-lowstock').value = low === undefined || low === null ? '' : String(Math.round(low * 100));
    $('#zf-lowstock').placeholder = String(Math.round(ed.display.defaultLowStock * 100));
    for (const label of $$('[data-for]', form)) label.hidden = label.dataset.for !== z.kind;
    $('#zf-personarea-label').textContent = z.kind === 'shelf' ? 'One item covers' : 'One person covers';
    renderCorners();
    ed.renderRefs();
  }

  // ---- fields -----------------------------------------------------------------------------

  function bindField(id, apply) {
    $(id).addEventListener('input', (event) => {
      const z = ed.draft[ed.selected];
      if (!z) return;
      apply(z, event.target.value.trim());
      ed.changed();
      renderList();
      ed.draw();
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
    if (id && !ed.draft.some((o) => o !== z && o.id === id)) {
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
    ed.lowStockDraft[lowKey(z)] = v === '' ? null : Number(v) / 100;
  });

  // ---- corners typed as numbers (the keyboard's other way to place them, WCAG 2.5.7) --------

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

  // ---- unsaved changes and refusals ---------------------------------------------------------

  function dirty() {
    return JSON.stringify(ed.draft) !== JSON.stringify(ed.saved) || Object.keys(ed.lowStockDraft).length > 0;
  }

  function renderDirty() {
    $('#zones-dirty').hidden = !dirty();
  }

  /** A refused save in the words of the form (zone name and field label), the server's text one click away. */
  function showError(e) {
    const m = e instanceof ApiError && e.status === 400 ? /zones\[(\d+)\]\.(\w+)(\S*)\s+(.*)$/.exec(e.message) : null;
    if (!m) {
      ed.errorEl.textContent = explain(e);
      return;
    }
    const z = ed.draft[Number(m[1])];
    const label = FIELD_WORDS[m[2]] ?? m[2];
    const what = problemWords(m[2], m[4]);
    replace(
      ed.errorEl,
      h('span', {}, `Not saved. Zone “${z?.name || z?.id || Number(m[1]) + 1}”, ${label}: ${what}`),
      h('details', { class: 'more' }, h('summary', {}, 'Technical details'), h('code', {}, e.message)),
    );
  }

  return { renderList, renderForm, renderCorners, syncCorners, renderDirty, showError };
}
