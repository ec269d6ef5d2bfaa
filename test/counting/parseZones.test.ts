import { describe, expect, it } from 'vitest';
import { parseZones } from '../../src/counting/parseZones.ts';

const square = '[[0.1, 0.1], [0.5, 0.1], [0.5, 0.5], [0.1, 0.5]]';

describe('parseZones', () => {
  it('reads YAML and JSON zones files', () => {
    const yaml = `zones:\n  - id: tables\n    kind: room\n    polygon: ${square}\n    personArea: 0.01\n    capacity: 12\n`;
    expect(parseZones(yaml, 'z.yaml')).toEqual([
      { id: 'tables', kind: 'room', polygon: [[0.1, 0.1], [0.5, 0.1], [0.5, 0.5], [0.1, 0.5]], personArea: 0.01, capacity: 12 },
    ]);
    const json = JSON.stringify([{ id: 'shelf-1', kind: 'shelf', polygon: JSON.parse(square), anchor: 'centroid' }]);
    expect(parseZones(json)[0].anchor).toBe('centroid');
  });

  it.each([
    ['fewer than 3 points', `- {id: a, kind: room, polygon: [[0,0],[1,1]]}`, /z\.yaml: zones\[0\]\.polygon needs at least 3 points, got 2/],
    ['a self-intersecting bow tie', `- {id: a, kind: room, polygon: [[0,0],[1,1],[1,0],[0,1]]}`, /zones\[0\]\.polygon is self-intersecting/],
    ['a point outside 0..1', `- {id: a, kind: room, polygon: [[0,0],[1.2,0],[1,1]]}`, /zones\[0\]\.polygon\[1\]\[0\] must be a number in 0\.\.1.*got 1\.2/],
    ['NaN', `- {id: a, kind: room, polygon: [[0,0],[.nan,0],[1,1]]}`, /polygon\[1\]\[0\] must be a number in 0\.\.1.*got NaN/],
    ['a collinear polygon', `- {id: a, kind: room, polygon: [[0,0],[0.5,0.5],[1,1]]}`, /zero area|self-intersecting/],
    ['an unknown kind', `- {id: a, kind: hall, polygon: ${square}}`, /zones\[0\]\.kind must be one of room, shelf, got "hall"/],
    ['a bad id', `- {id: "a b", kind: room, polygon: ${square}}`, /zones\[0\]\.id must be/],
    ['a duplicate id', `- {id: a, kind: room, polygon: ${square}}\n- {id: a, kind: room, polygon: ${square}}`, /zones\[1\]\.id "a" is used twice/],
    ['a misspelt field', `- {id: a, kind: room, polygon: ${square}, treshold: 3}`, /zones\[0\]\.treshold is not a zone field/],
    ['a person area above 1', `- {id: a, kind: room, polygon: ${square}, personArea: 2}`, /zones\[0\]\.personArea must be a fraction/],
    ['a negative threshold', `- {id: a, kind: room, polygon: ${square}, threshold: -1}`, /zones\[0\]\.threshold/],
    ['no list', `zones: 3`, /zones must be a list/],
    ['a single perspective reference', `- {id: a, kind: room, polygon: ${square}, perspective: [{y: 0.5, area: 0.01}]}`, /zones\[0\]\.perspective must be a list of at least 2/],
    ['a perspective reference off the frame', `- {id: a, kind: room, polygon: ${square}, perspective: [{y: 0.5, area: 0.01}, {y: 1.5, area: 0.02}]}`, /zones\[0\]\.perspective\[1\]\.y must be the foot row in 0\.\.1/],
    ['broken YAML', `zones: [`, /z\.yaml: not valid YAML/],
  ])('rejects %s with a message naming the field', (_what, text, message) => {
    expect(() => parseZones(text, 'z.yaml')).toThrow(message);
  });

  // Plausible ranges (issue: 5e-324 and 1e308 were accepted; one zone then stored 1000 people per
  // sample). The bounds are ours, stated in the README's zones table: a person of at least about
  // 4 pixels at 320×240 and at most half the frame; a threshold of 0.5 to 50 noise units.
  it.each([
    ['personArea', 'personArea: 5.0e-324', /zones\[0\]\.personArea must be a fraction of the frame area from 0\.00005 to 0\.5, got 5e-324/],
    ['personArea', 'personArea: 1.0e+308', /zones\[0\]\.personArea must be a fraction of the frame area from 0\.00005 to 0\.5, got 1e\+308/],
    ['minBlobArea', 'minBlobArea: 5.0e-324', /zones\[0\]\.minBlobArea must be a fraction of the frame area from 0\.00001 to 0\.5, got 5e-324/],
    ['threshold', 'threshold: 5.0e-324', /zones\[0\]\.threshold must be a number of noise units from 0\.5 to 50, got 5e-324/],
    ['threshold', 'threshold: 1.0e+308', /zones\[0\]\.threshold must be a number of noise units from 0\.5 to 50, got 1e\+308/],
    ['capacity', 'capacity: 1000000000000', /zones\[0\]\.capacity must be a whole number of people from 0 to 100000, got 1000000000000/],
    ['perspective area', 'perspective: [{y: 0.5, area: 5.0e-324}, {y: 0.9, area: 0.01}]', /zones\[0\]\.perspective\[0\]\.area must be a fraction of the frame area from 0\.00005 to 0\.5, got 5e-324/],
    ['perspective height', 'perspective: [{x: 0.5, y: 0.5, area: 0.0001, height: 1.0e-300}, {y: 0.9, area: 0.01}]', /zones\[0\]\.perspective\[0\]\.height must be the box height as a fraction of the frame height from 0\.005 to 1, got 1e-300/],
  ])('rejects an implausible %s, naming the range', (_what, field, message) => {
    expect(() => parseZones(`- {id: a, kind: room, polygon: ${square}, ${field}}`, 'z.yaml')).toThrow(message);
  });

  it('accepts a concave polygon and a polygon touching the frame edges', () => {
    const zones = parseZones(`- {id: u, kind: room, polygon: [[0,0],[1,0],[1,1],[0.6,1],[0.6,0.3],[0.4,0.3],[0.4,1],[0,1]]}`);
    expect(zones[0].polygon).toHaveLength(8);
  });
});
