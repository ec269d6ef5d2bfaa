// Words of the zone editor: ids from names, and the server's refusals in the form's terms.

/** An id from a name: "Quiet corner" → "quiet-corner" (letters, digits and "-", up to 64). */
export function slug(name) {
  return name.normalize('NFKD').replace(/[\u0300-\u036f]/g, '').toLowerCase().replace(/[^a-z0-9]+/g, '-').replace(/^-+|-+$/g, '').slice(0, 64).replace(/-+$/, '');
}

/** The form's words for the zone fields named in the server's messages. */
export const FIELD_WORDS = {
  id: 'short id',
  name: 'name',
  kind: 'counts',
  polygon: 'corners',
  capacity: 'capacity',
  personArea: 'one person covers',
  minBlobArea: 'ignore spots smaller than',
  threshold: 'sensitivity threshold',
  absorbSeconds: 'time until something left standing counts as part of the shelf',
  perspective: 'reference people',
};

/** A field's problem in plain words; the server's own words where they are plain already. */
export function problemWords(field, message) {
  if (field === 'id' && /^must be/.test(message)) return `use 1 to 64 letters, digits, “-” or “_”, starting with a letter or digit (${message.replace(/^.*got /, 'now ')}).`;
  if (field === 'id' && /used twice/.test(message)) return 'another zone of this camera has the same id; choose another.';
  if (field === 'polygon' && /self-intersecting/.test(message)) return 'the outline crosses itself. Move a corner so that no two edges cross.';
  if (field === 'polygon' && /zero area/.test(message)) return 'the corners lie on one line. Move one so the zone has an area.';
  if (field === 'polygon' && /at least 3/.test(message)) return 'a zone needs at least three corners.';
  const text = message.replace(/^\[\d+\](\[\d\])?\s*/, '');
  return `${text.charAt(0).toUpperCase()}${text.slice(1)}${/[.!?]$/.test(text) ? '' : '.'}`;
}
