import { describe, expect, it } from 'vitest';
import { parseSampleMessage, sampleMessage } from '../../../src/outputs/mqtt/sampleMessage.ts';
import { mulberry } from '../../helpers/random.ts';

const T = Date.UTC(2026, 0, 1, 10, 0);
const sample = { time: T, camera: 'door', zone: 'entrance', kind: 'count' as const, value: 2.5, intervalMs: 10_000 };
const from = { site: 'riverside', camera: 'door', zone: 'entrance' };

describe('sampleMessage', () => {
  it('carries the sample with both time forms and its unique id', () => {
    expect(sampleMessage(sample, 'riverside', { zoneCreated: T - 86_400_000 })).toEqual({
      id: `door/entrance/${T}`,
      site: 'riverside',
      camera: 'door',
      zone: 'entrance',
      time: T,
      // check: ISO 8601 UTC (ECMA-262 Date Time String Format)
      timeIso: '2026-01-01T10:00:00.000Z',
      intervalMs: 10_000,
      kind: 'count',
      value: 2.5,
      quality: 0,
      zoneKind: 'room',
      zoneCreated: T - 86_400_000,
    });
    expect(sampleMessage({ ...sample, kind: 'fill', value: 0.25 }, 'riverside').zoneKind).toBe('shelf');
    expect(() => sampleMessage({ ...sample, value: -1 }, 'riverside')).toThrow(/sample\.value/);
  });

  it('reads back exactly what was sent, values bit for bit', () => {
    // check: ECMA-262 Number::toString prints the shortest digits that read back as the same double
    const random = mulberry(3);
    for (let i = 0; i < 500; i++) {
      const s = { ...sample, time: T + i * 10_000, value: random() * 40, quality: i % 2 };
      const text = JSON.stringify(sampleMessage(s, 'riverside'));
      const back = parseSampleMessage(from, Buffer.from(text));
      expect(Object.is(back.value, s.value)).toBe(true);
      expect(back).toEqual(sampleMessage(s, 'riverside'));
    }
  });

  it('refuses a message that disagrees with its topic or with itself', () => {
    const good = sampleMessage(sample, 'riverside');
    const parse = (patch: Record<string, unknown>, topic = from) => () => parseSampleMessage(topic, JSON.stringify({ ...good, ...patch }));
    expect(() => parseSampleMessage(from, '{not json')).toThrow(/^message: not JSON/);
    expect(() => parseSampleMessage(from, '[1]')).toThrow(/expected a JSON object/);
    expect(parse({}, { ...from, zone: 'tables' })).toThrow(/is not the topic's riverside\/door\/tables/);
    expect(parse({ id: 'door/entrance/1' })).toThrow(/^message\.id: expected/);
    expect(parse({ timeIso: '2026-01-01T11:00:00.000Z' })).toThrow(/^message\.timeIso/);
    expect(parse({ zoneKind: 'shelf' })).toThrow(/^message\.zoneKind/);
    expect(parse({ intervalMs: 0 })).toThrow(/^message\.intervalMs/);
    expect(parse({ quality: 1024 })).toThrow(/^message\.quality/);
    expect(parse({ kind: 'fill', zoneKind: 'shelf', value: 2 })).toThrow(/^message\.value/);
    expect(parse({ site: 'a--b' })).toThrow(/^message\.site/);
    expect(parse({ zoneCreated: 1.5 })).toThrow(/^message\.zoneCreated/);
  });
});
