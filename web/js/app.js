// Dashboard entry: site facts, the key, the live stream, and switching between the views.
import { api, ApiError, explain, followLive, getKey, onKeyChange, setKey } from './api.js';
import { $, $$ } from './dom.js';
import { createCalibrationPanel } from './calibration.js';
import { ago, clock } from './format.js';
import { createCapacityView } from './capacity.js';
import { createHistoryView } from './history.js';
import { createNowView } from './live.js';
import { createZonesView } from './zones.js';

const app = {
  site: { site: '', timeZone: 'UTC', viewTokenRequired: false, editing: false },
  role: 'none',
  live: null,
  liveListeners: new Set(),
  roleListeners: new Set(),
  connectionListeners: new Set(),
  streamState: 'connecting',
  /** When the service last answered, epoch ms (browser clock); undefined before it did. */
  lastContact: undefined,
  /** fn(liveState) on every live event. */
  onLive(fn) {
    this.liveListeners.add(fn);
  },
  /** fn(streamState) when the connection to the service changes. */
  onConnection(fn) {
    this.connectionListeners.add(fn);
  },
  /** Whether the figures on the page are current (the service answers). */
  connected() {
    return this.streamState === 'live' || this.streamState === 'polling';
  },
  /** fn(role) when the role changes. */
  onRole(fn) {
    this.roleListeners.add(fn);
  },
  isAdmin() {
    return this.role === 'admin';
  },
  openKeyDialog() {
    openKeyDialog();
  },
};

async function boot() {
  try {
    app.site = await api('/api/site');
  } catch (error) {
    $('#now-summary').textContent = explain(error);
  }
  $('#site-name').textContent = app.site.site ?? '';
  document.title = app.site.site ? `Residuum · ${app.site.site}` : 'Residuum';
  await refreshRole();

  const zones = createZonesView(app);
  const calibration = createCalibrationPanel(app);
  const views = {
    now: createNowView(app),
    history: createHistoryView(app),
    zones: {
      ...zones,
      async show() {
        await zones.show();
        calibration.show();
      },
    },
    capacity: createCapacityView(app),
  };
  let current;
  const route = () => {
    const name = (location.hash.match(/^#\/(\w+)/) ?? [])[1];
    const next = views[name] ? name : 'now';
    if (next === current) return;
    if (current) views[current].hide?.();
    current = next;
    for (const section of $$('main > .view')) section.hidden = section.dataset.view !== next;
    for (const a of $$('.tabs a[data-view]')) {
      if (a.dataset.view === next) a.setAttribute('aria-current', 'page');
      else a.removeAttribute('aria-current');
    }
    views[next].show?.();
  };
  window.addEventListener('hashchange', route);
  route();

  const stream = followLive(
    (state) => {
      app.live = state;
      for (const fn of app.liveListeners) fn(state);
    },
    (s, info) => {
      const changed = s !== app.streamState;
      app.streamState = s;
      app.lastContact = info.lastContact;
      app.streamReason = info.reason;
      showConnection();
      if (changed) for (const fn of app.connectionListeners) fn(s);
      if (s === 'refused') openKeyDialog();
    },
  );
  // Keep "since 14:02 (40 s ago)" current while the service does not answer.
  setInterval(() => app.streamState === 'lost' && showConnection(), 5000);
  onKeyChange(async () => {
    await refreshRole();
    stream.restart();
  });
}

/** The status line of Now and the banner shown on every view while the service does not answer. */
function showConnection() {
  const s = app.streamState;
  const tz = app.site.timeZone;
  const el = $('#stream-state');
  el.dataset.state = s;
  el.title = s === 'polling' && app.streamReason ? `Live updates unavailable: ${app.streamReason}` : '';
  el.textContent = s === 'live'
    ? 'Live'
    : s === 'polling'
      ? 'Updating every 5 s'
      : s === 'refused'
        ? 'A key is needed to view counts'
        : s === 'lost'
          ? 'Not connected: reconnecting…'
          : 'Connecting…';
  document.body.dataset.connection = s;
  const banner = $('#connection');
  banner.hidden = s !== 'lost';
  if (s === 'lost') {
    banner.textContent = app.lastContact
      ? `No answer from the Residuum service since ${clock(app.lastContact, tz)} (${ago(app.lastContact)} ago). The figures shown are from then, greyed out, not live. Reconnecting…`
      : 'The Residuum service is not answering. Check that it is running; the page keeps trying to reconnect.';
  }
}

async function refreshRole() {
  let role = 'none';
  if (getKey()) {
    try {
      role = (await api('/api/auth')).role;
    } catch (error) {
      if (error instanceof ApiError && error.status === 401) sessionStorage.removeItem('residuum.key');
    }
  }
  app.role = role;
  const el = $('#role');
  el.dataset.role = role;
  el.textContent = role === 'admin' ? 'Admin' : role === 'viewer' ? 'Viewing (key)' : 'Viewing';
  $('#key-button').textContent = role === 'none' ? 'Enter key' : 'Change key';
  for (const fn of app.roleListeners) fn(role);
}

function openKeyDialog() {
  const dialog = $('#key-dialog');
  if (dialog.open) return;
  $('#key-error').textContent = '';
  $('#key-input').value = '';
  dialog.showModal();
  $('#key-input').focus();
}

function setupKeyDialog() {
  const dialog = $('#key-dialog');
  $('#key-button').addEventListener('click', openKeyDialog);
  $('#key-cancel').addEventListener('click', () => dialog.close());
  $('#key-forget').addEventListener('click', () => {
    setKey('');
    dialog.close();
  });
  $('#key-form').addEventListener('submit', async (event) => {
    event.preventDefault();
    const key = $('#key-input').value.trim();
    if (!key) {
      $('#key-error').textContent = 'Paste the key printed when the service first started.';
      return;
    }
    try {
      const { role } = await api('/api/auth', { key });
      setKey(key);
      dialog.close();
      if (role !== 'admin') $('#now-summary').textContent = 'This key allows viewing only.';
    } catch (error) {
      $('#key-error').textContent = error instanceof ApiError && error.status === 401 ? 'This key was not accepted.' : explain(error);
    }
  });
}

setupKeyDialog();
boot();
