// "Capacity helper": a capacity suggestion from floor area and use, by a published occupant-load
// table, always with the caution that the authority's posted figure governs.
import { api, ApiError, explain } from './api.js';
import { $, h, replace } from './dom.js';

export function createCapacityView(app) {
  let loaded = false;
  const form = $('#capacity-form');
  const apply = $('#cap-apply');
  /** The last suggestion, people. */
  let suggested;

  async function load() {
    try {
      const table = await api('/api/capacity');
      replace($('#cap-use'), table.uses.map((u) => h('option', { value: u.use }, `${u.label} — ${u.factorFt2} ft² ${u.basis}`)));
      $('#cap-caution').textContent = table.caution;
      $('#cap-source').textContent = table.source;
      loaded = true;
    } catch (e) {
      $('#cap-error').textContent = explain(e);
    }
  }

  form.addEventListener('submit', async (event) => {
    event.preventDefault();
    $('#cap-error').textContent = '';
    const q = new URLSearchParams({ use: $('#cap-use').value, area: $('#cap-area').value, unit: $('#cap-unit').value });
    const box = $('#cap-result');
    try {
      const s = await api(`/api/capacity?${q}`);
      const unit = $('#cap-unit').value;
      const area = unit === 'm2' ? `${s.areaM2} m² (${s.areaFt2} ft²)` : `${s.areaFt2} ft² (${s.areaM2} m²)`;
      replace(
        box,
        h('div', { class: 'big', dataset: { role: 'occupants' } }, `${s.occupants} ${s.occupants === 1 ? 'person' : 'people'}`),
        h('p', { class: 'working' }, `${s.label}: ${s.factorFt2} ft² (${s.factorM2} m²) of ${s.basis} floor area per occupant. ${area} ÷ ${s.factorFt2} ft² = ${s.exact}, rounded up to ${s.occupants}.`),
        h('p', { class: 'notice' }, s.caution),
      );
      box.hidden = false;
      suggested = s.occupants;
      $('#cap-apply-button').textContent = `Set ${s.occupants} as capacity`;
      $('#cap-apply-ok').textContent = '';
      $('#cap-apply-error').textContent = '';
      apply.hidden = false;
      loadZones();
    } catch (e) {
      box.hidden = true;
      apply.hidden = true;
      $('#cap-error').textContent = explain(e);
    }
  });

  /** The room zones of every camera, for applying the suggestion. */
  async function loadZones() {
    const select = $('#cap-zone');
    const keep = select.value;
    let cameras;
    try {
      cameras = (await api('/api/cameras')).cameras;
    } catch (e) {
      $('#cap-apply-error').textContent = explain(e);
      return;
    }
    replace(
      select,
      cameras.map((c) =>
        h(
          'optgroup',
          { label: c.name },
          c.zones.filter((z) => z.kind === 'room').map((z) => h('option', { value: `${c.id}/${z.id}` }, `${z.name ?? z.id} (now ${z.capacity === undefined ? 'no capacity' : `capacity ${z.capacity}`})`)),
        ),
      ),
    );
    if (keep) select.value = keep;
    $('#cap-apply-note').textContent = app.isAdmin()
      ? `Counts above the capacity show as “Over capacity”; from ${Math.round((app.live?.nearCapacity ?? 0.8) * 100)} % of it as “Filling up”.`
      : 'Setting a capacity needs the admin key (“Enter key” at the top right).';
  }

  apply.addEventListener('submit', async (event) => {
    event.preventDefault();
    $('#cap-apply-error').textContent = '';
    $('#cap-apply-ok').textContent = '';
    const [camera, id] = $('#cap-zone').value.split('/');
    if (!camera || !id || suggested === undefined) return;
    try {
      // The zones are read afresh and sent back whole, with only this capacity changed.
      const { zones } = await api(`/api/cameras/${encodeURIComponent(camera)}/zones`);
      const zone = zones.find((z) => z.id === id);
      if (!zone) throw new ApiError(404, 'that zone is no longer there; choose another');
      zone.capacity = suggested;
      await api(`/api/cameras/${encodeURIComponent(camera)}/zones`, { method: 'PUT', body: { zones } });
      $('#cap-apply-ok').textContent = `The capacity of “${zone.name ?? zone.id}” is now ${suggested}. Check it against the occupant load your authority posted or approved.`;
      loadZones();
    } catch (e) {
      $('#cap-apply-error').textContent = explain(e);
    }
  });
  app.onRole(() => !apply.hidden && loadZones());

  return {
    show() {
      if (!loaded) load();
    },
  };
}
