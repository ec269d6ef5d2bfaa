// The "Check the count" panel of the Zones view: someone in the room counts the people in a room
// zone and enters the number; after a few counts the zone may be counted from them (the server
// fits and judges; see /api/cameras/:id/calibration). Numbers only: no picture is taken or kept.
import { api, explain } from './api.js';
import { $, h, replace } from './dom.js';

const MIN_COUNTS = 5;

export function createCalibrationPanel(app) {
  const cameraSelect = $('#zones-camera');
  const zoneSelect = $('#calibration-zone');
  const countInput = $('#calibration-count');
  const form = $('#calibration-form');
  const errorEl = $('#calibration-error');
  const okEl = $('#calibration-ok');
  const list = $('#calibration-list');
  let statuses = [];
  let loading = 0;

  const camera = () => cameraSelect.value;
  const zoneName = (id) => app.live?.cameras?.find((c) => c.camera === camera())?.zones?.find((z) => z.id === id)?.name ?? id;
  const people = (n) => `${n.toFixed(1)} ${n === 1 ? 'person' : 'people'}`;

  /** What the counts of one zone came to, in plain words. */
  function describe(status) {
    const { fit } = status;
    const given = status.points.length;
    const counts = `${given} count${given === 1 ? '' : 's'} given`;
    let text;
    if (given < MIN_COUNTS) text = `${counts}; ${MIN_COUNTS - given} more needed before they can be used.`;
    else if (fit.reason && /differ/.test(fit.reason)) text = `${counts}, all the same number; give counts at busier and quieter times too.`;
    else if (status.inUse) text = `${counts}. Counted from your counts: off by about ${people(fit.leaveOneOutError)} when each is checked against the others, against ${people(fit.ruleError)} by blob size.`;
    else if (fit.reason) text = `${counts}; not usable (${fit.reason}). Counted by blob size.`;
    else text = `${counts}. Counted by blob size, which is closer (off by ${people(fit.ruleError)}, against ${people(fit.leaveOneOutError)} from your counts).`;
    if (status.earlierShape > 0) text += ` ${status.earlierShape} count${status.earlierShape === 1 ? '' : 's'} from before the zone was last changed ${status.earlierShape === 1 ? 'is' : 'are'} not used.`;
    return text;
  }

  function render() {
    const chosen = zoneSelect.value;
    replace(zoneSelect, ...statuses.map((s) => h('option', { value: s.zone }, zoneName(s.zone))));
    if (statuses.some((s) => s.zone === chosen)) zoneSelect.value = chosen;
    const admin = app.isAdmin();
    for (const el of [zoneSelect, countInput, $('#calibration-give')]) el.disabled = !admin || statuses.length === 0;
    if (statuses.length === 0) {
      replace(list, h('li', { class: 'hint small' }, 'This camera has no room zones to check.'));
      return;
    }
    replace(
      list,
      ...statuses.map((s) =>
        h(
          'li',
          { dataset: { zone: s.zone, inUse: s.inUse } },
          h('strong', {}, zoneName(s.zone)),
          s.inUse ? h('span', { class: 'kept-badge' }, 'Counted from your counts') : null,
          h('p', { class: 'small' }, describe(s)),
          admin && s.points.length > 0
            ? h('button', { type: 'button', class: 'quiet', 'aria-label': `Forget the counts given for ${zoneName(s.zone)}`, onclick: () => forget(s.zone) }, 'Forget these counts')
            : null,
        ),
      ),
    );
    if (!admin) list.prepend(h('li', { class: 'hint small' }, 'Enter the admin key to give counts.'));
  }

  async function load() {
    const id = camera();
    if (!id) return;
    const mine = ++loading;
    try {
      const { zones } = await api(`/api/cameras/${encodeURIComponent(id)}/calibration`);
      if (mine !== loading) return;
      statuses = zones;
      errorEl.textContent = '';
    } catch (error) {
      if (mine !== loading) return;
      statuses = [];
      errorEl.textContent = explain(error);
    }
    render();
  }

  async function forget(zone) {
    errorEl.textContent = '';
    okEl.textContent = '';
    try {
      const { removed } = await api(`/api/cameras/${encodeURIComponent(camera())}/zones/${encodeURIComponent(zone)}/calibration`, { method: 'DELETE' });
      okEl.textContent = `${removed} count${removed === 1 ? '' : 's'} for ${zoneName(zone)} forgotten; it is counted by blob size again.`;
    } catch (error) {
      errorEl.textContent = explain(error);
    }
    await load();
  }

  form.addEventListener('submit', async (event) => {
    event.preventDefault();
    errorEl.textContent = '';
    okEl.textContent = '';
    const zone = zoneSelect.value;
    const count = Number(countInput.value);
    if (countInput.value.trim() === '' || !Number.isInteger(count) || count < 0) {
      errorEl.textContent = 'Enter the number of people you count in the zone now: a whole number, 0 or more.';
      countInput.focus();
      return;
    }
    try {
      const status = await api(`/api/cameras/${encodeURIComponent(camera())}/zones/${encodeURIComponent(zone)}/calibration`, { method: 'POST', body: { count } });
      const counted = status.points.at(-1)?.counted;
      okEl.textContent = `Saved: ${count} in ${zoneName(zone)}${counted === undefined ? '' : ` (the camera counted ${counted} by blob size at that moment)`}.`;
      countInput.value = '';
    } catch (error) {
      errorEl.textContent = explain(error);
    }
    await load();
  });
  cameraSelect.addEventListener('change', () => {
    okEl.textContent = '';
    load();
  });
  // Zones are saved, added and removed in the editor above: follow it.
  $('#zones-save').addEventListener('click', () => setTimeout(load, 800));
  app.onRole(() => render());
  return {
    show: load,
  };
}
