import { describe, expect, it } from 'vitest';
import { ID_PATTERN } from '../../../src/store/index.ts';
import {
  collectorCameraId,
  collectorFilters,
  eventsTopic,
  parseTopic,
  samplesTopic,
  siteSlug,
  SITE_ID_PATTERN,
  siteStatusTopic,
  stateTopic,
  topicSegment,
} from '../../../src/outputs/mqtt/topics.ts';
import { mulberry } from '../../helpers/random.ts';

describe('topics', () => {
  it('builds the documented topics', () => {
    expect(stateTopic('residuum', 'riverside', 'door', 'entrance')).toBe('residuum/riverside/door/entrance/state');
    expect(samplesTopic('acme/counts', 'riverside', 'door', 'entrance')).toBe('acme/counts/riverside/door/entrance/samples');
    expect(eventsTopic('residuum', 'riverside', 'door')).toBe('residuum/riverside/door/events');
    expect(siteStatusTopic('residuum', 'riverside')).toBe('residuum/riverside/status');
    expect(collectorFilters('residuum')).toEqual({
      samples: 'residuum/+/+/+/samples',
      state: 'residuum/+/+/+/state',
      events: 'residuum/+/+/events',
      status: 'residuum/+/status',
    });
  });

  it('sanitises segments: no level separator or wildcard ever comes from an id', () => {
    // check: MQTT 3.1.1 §4.7.1 — "/" separates levels, "+" and "#" are wildcards of topic filters and
    // must not appear in topic names (recalled from memory)
    expect(topicSegment('a/b+c#d')).toBe('a_b_c_d');
    expect(topicSegment('')).toBe('_');
    expect(topicSegment('$SYS')).toBe('_SYS');
    expect(stateTopic('p', 's', 'cam/1', 'zone+#')).toBe('p/s/cam_1/zone__/state');
    const random = mulberry(7);
    for (let i = 0; i < 200; i++) {
      const id = Array.from({ length: 1 + Math.floor(random() * 12) }, () => String.fromCharCode(32 + Math.floor(random() * 95))).join('');
      const segment = topicSegment(id);
      expect(segment).not.toMatch(/[/+#]/);
      expect(segment.length).toBeGreaterThan(0);
    }
    // Valid ids pass through unchanged.
    for (const id of ['door', 'Door_2', 'a-b-c', '0']) expect(topicSegment(id)).toBe(id);
  });

  it('takes topics apart by their number of levels, so a zone called "events" is not the events topic', () => {
    expect(parseTopic('residuum', 'residuum/riverside/door/entrance/samples')).toEqual({ kind: 'samples', site: 'riverside', camera: 'door', zone: 'entrance' });
    expect(parseTopic('residuum', 'residuum/riverside/door/events/state')).toEqual({ kind: 'state', site: 'riverside', camera: 'door', zone: 'events' });
    expect(parseTopic('residuum', 'residuum/riverside/door/events')).toEqual({ kind: 'events', site: 'riverside', camera: 'door' });
    expect(parseTopic('a/b', 'a/b/riverside/status')).toEqual({ kind: 'status', site: 'riverside' });
    expect(parseTopic('residuum', 'residuum/riverside/door/entrance/other')).toBeUndefined();
    expect(parseTopic('residuum', 'elsewhere/riverside/door/events')).toBeUndefined();
  });
});

describe('siteSlug and collectorCameraId', () => {
  it('makes a site id from a display name', () => {
    expect(siteSlug('Riverside branch library')).toBe('riverside-branch-library');
    expect(siteSlug('Bücherei Süd — 2. OG')).toBe('bucherei-sud-2-og');
    expect(siteSlug('***')).toBe('site');
    expect(siteSlug('a'.repeat(40) + ' b')).toBe('a'.repeat(32));
    for (const name of ['Riverside branch library', 'Bücherei Süd — 2. OG', '-x-', 'x'.repeat(31) + ' y']) expect(siteSlug(name)).toMatch(SITE_ID_PATTERN);
  });

  it('joins site and camera with "--" into ids the store accepts, distinct even when shortened', () => {
    expect(collectorCameraId('riverside', 'door')).toBe('riverside--door');
    const long = 'c'.repeat(64);
    const a = collectorCameraId('s'.repeat(32), long);
    const b = collectorCameraId('s'.repeat(32), long.slice(0, 63) + 'd');
    expect(a).toMatch(ID_PATTERN);
    expect(b).toMatch(ID_PATTERN);
    expect(a).not.toBe(b);
    expect(a.startsWith(`${'s'.repeat(32)}--`)).toBe(true);
    // Site ids never contain "--", so the first "--" separates site and camera.
    expect(() => collectorCameraId('a--b', 'c')).toThrow(/site/);
    expect(() => collectorCameraId('a', 'c/d')).toThrow(/camera/);
  });
});
