// "Capacity helper": a capacity suggestion from floor area and use, by a published occupant-load
// table, always with the caution that the authority's posted figure governs.
import { api, explain } from './api.js';
import { $, h, replace } from './dom.js';

export function createCapacityView() {
  let loaded = false;
  const form = $('#capacity-form');

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
    } catch (e) {
      box.hidden = true;
      $('#cap-error').textContent = explain(e);
    }
  });

  return {
    show() {
      if (!loaded) load();
    },
  };
}
