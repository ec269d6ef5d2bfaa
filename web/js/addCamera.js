// "Add a camera" (admin): a small form at the foot of the Zones view that calls POST /api/cameras,
// and removal of a camera added this way (DELETE /api/cameras/:id). Self-contained: it builds its
// own panel, so the page needs only the script tag.
import { api, explain } from './api.js';
import { $, h, replace } from './dom.js';

/** The form's words for the fields the service names in its messages. */
const LABELS = [
  ['source.url', 'Camera address'],
  ['source.kind', 'Kind of camera address'],
  ['source.username', 'User name'],
  ['source.password', 'Password'],
  ['learnSeconds', 'Learn time'],
  ['name', 'Name shown'],
  ['id', 'Short id'],
];

/** The service's message in the form's words: `request body: source.url gives …` → `Camera address gives …`. */
function plain(message) {
  // explain() has already dropped "request body: " and capitalised the first letter.
  const text = message.replace(/^request body: /i, '');
  for (const [field, label] of LABELS) if (text.toLowerCase().startsWith(`${field.toLowerCase()} `)) return `${label} ${text.slice(field.length + 1)}`;
  return text;
}

function build() {
  const home = $('#view-zones') ?? $('main');
  if (!home || $('#add-camera')) return;
  const error = h('p', { class: 'error', id: 'add-camera-error', role: 'alert' });
  const ok = h('p', { class: 'ok', id: 'add-camera-ok', role: 'status' });
  const field = (label, input) => h('label', {}, label, input);
  const id = h('input', { id: 'ac-id', name: 'id', required: true, maxlength: '64', pattern: '[A-Za-z0-9][A-Za-z0-9_\\-]{0,63}', autocomplete: 'off', spellcheck: 'false' });
  const name = h('input', { id: 'ac-name', name: 'name', maxlength: '200', autocomplete: 'off' });
  const kind = h('select', { id: 'ac-kind', name: 'kind' }, h('option', { value: 'snapshot' }, 'Picture address (polled)'), h('option', { value: 'mjpeg' }, 'MJPEG stream'));
  const url = h('input', { id: 'ac-url', name: 'url', type: 'url', required: true, placeholder: 'http://192.0.2.10/snapshot.jpg', autocomplete: 'off', spellcheck: 'false' });
  const user = h('input', { id: 'ac-user', name: 'username', autocomplete: 'off', spellcheck: 'false' });
  const pass = h('input', { id: 'ac-pass', name: 'password', type: 'password', autocomplete: 'new-password' });
  const learn = h('input', { id: 'ac-learn', name: 'learnSeconds', type: 'number', min: '1', max: '3600', step: '1', value: '30' });
  const submit = h('button', { type: 'submit', id: 'ac-add' }, 'Check and add');
  const form = h(
    'form',
    { id: 'add-camera-form', class: 'stack', novalidate: true },
    field('Short id (letters, digits, - and _)', id),
    field('Name shown', name),
    field('Kind of camera address', kind),
    field('Camera address (http:// or https://)', url),
    field('User name, if the camera asks for one', user),
    field('Password, if the camera asks for one', pass),
    field('Learn the empty scene for, seconds', learn),
    submit,
  );
  const removeSelect = h('select', { id: 'ac-remove-camera', 'aria-label': 'Camera to remove' });
  const removeButton = h('button', { type: 'button', class: 'quiet', id: 'ac-remove' }, 'Remove camera');
  const removeError = h('p', { class: 'error', role: 'alert' });
  const removeOk = h('p', { class: 'ok', role: 'status' });
  const panel = h(
    'div',
    { class: 'panel', id: 'add-camera' },
    h('h2', {}, 'Add a camera'),
    h('p', { class: 'hint' }, 'Needs the admin key. The address is tried first: it must answer with a picture. The camera then starts at once and first learns its empty scene — keep the view empty for that time — and it is kept when the service restarts. Draw its zones above afterwards.'),
    form,
    error,
    ok,
    h('h3', {}, 'Remove a camera added here'),
    h('p', { class: 'hint small' }, 'Cameras listed in the configuration file are changed there. The counts stored for a removed camera are kept.'),
    h('div', { class: 'toolbar' }, removeSelect, removeButton),
    removeError,
    removeOk,
  );
  home.append(panel);

  async function listCameras() {
    try {
      const { cameras } = await api('/api/cameras');
      replace(removeSelect, ...cameras.map((c) => h('option', { value: c.id }, c.name && c.name !== c.id ? `${c.name} (${c.id})` : c.id)));
    } catch {
      // the list is a convenience; the Zones view reports a failing service
    }
  }

  form.addEventListener('submit', async (event) => {
    event.preventDefault();
    error.textContent = '';
    ok.textContent = '';
    if (!form.reportValidity()) return;
    const source = { kind: kind.value, url: url.value.trim() };
    if (user.value.trim()) source.username = user.value.trim();
    if (pass.value) source.password = pass.value;
    const body = { id: id.value.trim(), source };
    if (name.value.trim()) body.name = name.value.trim();
    if (learn.value) body.learnSeconds = Number(learn.value);
    submit.disabled = true;
    submit.textContent = 'Checking the camera…';
    try {
      const { camera } = await api('/api/cameras', { method: 'POST', body });
      const seen = camera.sourceSize ? ` The camera sends ${camera.sourceSize[0]}×${camera.sourceSize[1]} pictures; they are counted at ${camera.size[0]}×${camera.size[1]}.` : '';
      ok.textContent = `Added “${camera.name}”.${seen} It is learning its empty scene for ${camera.learnSeconds} s: keep the view empty. Reload the page to draw its zones.`;
      form.reset();
      learn.value = '30';
      await listCameras();
    } catch (e) {
      error.textContent = plain(explain(e));
    } finally {
      submit.disabled = false;
      submit.textContent = 'Check and add';
    }
  });

  removeButton.addEventListener('click', async () => {
    removeError.textContent = '';
    removeOk.textContent = '';
    const camera = removeSelect.value;
    if (!camera) return;
    if (!window.confirm(`Remove camera “${camera}”? It stops counting; its stored counts are kept.`)) return;
    try {
      await api(`/api/cameras/${encodeURIComponent(camera)}`, { method: 'DELETE' });
      removeOk.textContent = `Removed “${camera}”. Reload the page to update the other views.`;
      await listCameras();
    } catch (e) {
      removeError.textContent = explain(e);
    }
  });
  void listCameras();
}

if (document.readyState === 'loading') document.addEventListener('DOMContentLoaded', build);
else build();
