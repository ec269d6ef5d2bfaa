// "Changes to the zones" under the Zones view: the camera's stored zone changes, newest first.
import { $, h, replace } from './dom.js';
import { dateTime } from './format.js';
import { fetchZoneHistory } from './zoneApi.js';
import { brief } from './zoneGeometry.js';
import { FIELD_WORDS } from './zoneWords.js';

/** The table shows this many changes at most. */
const SHOWN = 100;

/** Fills the table with the camera's last changes, times in the site's time zone; a failed request leaves it as it was. */
export async function showZoneHistory(app, camera) {
  if (!camera) return;
  let history;
  try {
    history = await fetchZoneHistory(camera.id);
  } catch {
    return;
  }
  const tz = app.site.timeZone;
  const rows = history.slice(-SHOWN).reverse();
  replace(
    $('#zone-history tbody'),
    rows.length === 0
      ? h('tr', {}, h('td', { colspan: '5', class: 'hint' }, 'No changes yet.'))
      : rows.map((r) =>
          h(
            'tr',
            {},
            h('td', {}, dateTime(r.time, tz)),
            h('td', {}, r.zone),
            h('td', {}, r.field === '*' ? (r.old === null ? 'added' : 'removed') : `changed: ${FIELD_WORDS[r.field] ?? r.field}`),
            h('td', {}, r.field === '*' ? '' : brief(r.old)),
            h('td', {}, r.field === '*' ? '' : brief(r.new)),
          ),
        ),
  );
}
