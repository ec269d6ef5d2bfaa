// Words and number formats of the dashboard.

export const statusWords = {
  counting: 'Counting',
  connecting: 'Connecting',
  offline: 'Offline',
  learning: 'Learning the empty scene',
  'view-changed': 'View changed',
  stale: 'No recent pictures',
  stopped: 'Stopped',
};

/** A learned empty scene's verdict in plain words. */
export const verdictWords = {
  good: 'Good',
  fair: 'Usable, with limits',
  poor: 'Poor',
};

export const levelWords = {
  below: 'Room to spare',
  near: 'Filling up',
  over: 'Over capacity',
  counted: 'No capacity set',
  stocked: 'Stocked',
  low: 'Running low',
  unknown: 'No current count',
};

/** Why a camera shows no current counts, or undefined while it counts. */
export function statusReason(camera, now = Date.now()) {
  switch (camera.status) {
    case 'counting':
      return undefined;
    case 'connecting':
      return 'Waiting for the first picture from the camera.';
    case 'offline':
      return `The camera sends no pictures${camera.reason ? ` (${camera.reason})` : ''}. Counts resume when it is back; the gap stays empty in the history.`;
    case 'learning': {
      const p = camera.learn?.progress;
      return `Learning what the empty view looks like${p !== undefined ? ` (${Math.round(p * 100)} %)` : ''}. Keep the view clear of people until it is done.`;
    }
    case 'view-changed':
      return 'The view no longer matches the learned empty scene: the camera may have moved or been covered, or the light changed. Counts are paused; learn the empty scene again if the change stays.';
    case 'stale':
      return `No picture for ${camera.lastFrameAt ? ago(camera.lastFrameAt, now) : 'a while'}.`;
    case 'stopped':
      return 'The service is stopping.';
    default:
      return 'Unknown state.';
  }
}

/**
 * A stored event in plain words, e.g. "Camera stopped sending pictures (folder not found) …".
 * `zoneNames` maps zone ids to their names; `times` > 1 for a run of the same event shown as one.
 */
export function eventWords(event, zoneNames = new Map(), times = 1) {
  const d = event.detail ?? {};
  const zone = event.zone ? `“${zoneNames.get(event.zone) ?? event.zone}”` : '';
  switch (event.type) {
    case 'offline':
      return `Camera stopped sending pictures${d.reason ? ` (${d.reason})` : ''}; not counted until it came back.`;
    case 'online':
      return 'Camera sending pictures again; counting resumed.';
    case 'view-changed':
      return d.reason === 'source size changed'
        ? 'The camera started sending pictures of another size; counting paused until the empty scene is learned again.'
        : 'The view no longer looked like the learned empty scene (camera moved, covered, or the light changed); counting paused.';
    case 'view-restored':
      return 'The view matched the learned empty scene again; counting resumed.';
    case 'capacity-exceeded': {
      const people = typeof d.count === 'number' ? `about ${Math.round(d.count)} people` : '';
      const capacity = d.capacity !== undefined ? ` of ${d.capacity}` : '';
      if (times > 1) return `Zone ${zone} went over its capacity${d.capacity !== undefined ? ` (${d.capacity})` : ''} ${times} times${people ? `; the last time ${people}` : ''}.`;
      return `Zone ${zone} went over its capacity${capacity}${people ? ` (${people})` : ''}.`;
    }
    case 'model-learned':
      return `Learned the empty scene again; now in use${d.level ? ` (quality: ${(verdictWords[d.level] ?? d.level).toLowerCase()})` : ''}.`;
    case 'learning-rejected':
      return `Learned the empty scene again, but the result was poor and is not used${d.reason ? `: ${d.reason}` : ''}. The camera kept the one it had.`;
    case 'model-activated':
      return `An earlier empty scene was put back in use${d.learnedAt ? ` (learned ${new Date(d.learnedAt).toLocaleDateString('en-GB', { day: 'numeric', month: 'short' })})` : ''}.`;
    case 'model-stale':
      return 'The empty scene looks out of date: learn it again when the view is empty.';
    case 'settings-changed':
      return d.what === 'zones' ? `Zones changed${Array.isArray(d.zones) ? ` (now ${d.zones.length}: ${d.zones.join(', ')})` : ''}.` : 'Settings changed.';
    default:
      return event.type;
  }
}

/** "12 s", "4 min", "2 h" */
export function ago(time, now = Date.now()) {
  const s = Math.max(0, Math.round((now - time) / 1000));
  if (s < 90) return `${s} s`;
  if (s < 5400) return `${Math.round(s / 60)} min`;
  return `${Math.round(s / 3600)} h`;
}

/** Clock time in the site's zone, e.g. 14:03:21. */
export function clock(time, timeZone) {
  return new Intl.DateTimeFormat('en-GB', { timeZone, hour: '2-digit', minute: '2-digit', second: '2-digit', hourCycle: 'h23' }).format(time);
}

/** Date and time in the site's zone, e.g. 3 Feb 2026, 14:03. */
export function dateTime(time, timeZone) {
  return new Intl.DateTimeFormat('en-GB', { timeZone, day: 'numeric', month: 'short', year: 'numeric', hour: '2-digit', minute: '2-digit', hourCycle: 'h23' }).format(time);
}

/** The local date YYYY-MM-DD of `time` in the zone. */
export function localDate(time, timeZone) {
  return new Intl.DateTimeFormat('en-CA', { timeZone, year: 'numeric', month: '2-digit', day: '2-digit' }).format(time);
}

/** Adds days to a YYYY-MM-DD date (calendar arithmetic, no time zone involved). */
export function addDays(date, days) {
  const [y, m, d] = date.split('-').map(Number);
  const t = new Date(Date.UTC(y, m - 1, d + days));
  return t.toISOString().slice(0, 10);
}

export function percent(share, digits = 0) {
  return `${(share * 100).toFixed(digits)} %`;
}

/** Up to `digits` decimals, trailing zeros dropped; '' for null. */
export function num(v, digits = 2) {
  if (v === null || v === undefined) return '';
  return String(Number(v.toFixed(digits)));
}
