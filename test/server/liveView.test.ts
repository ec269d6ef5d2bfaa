import { describe, expect, it } from 'vitest';
import type { CameraLive, ZoneLive } from '../../src/counting/cameraPipeline.ts';
import { liveView } from '../../src/server/liveView.ts';

const now = 1_800_000_000_000;

function camera(zones: ZoneLive[], over: Partial<CameraLive> = {}): CameraLive {
  return { camera: 'hall', name: 'Hall', state: 'online', viewChanged: false, lastFrameAt: now - 1000, zones, ...over };
}
const room = (count: number, capacity?: number): ZoneLive => ({ id: 'r', name: 'R', kind: 'room', count, fill: 0.1, ...(capacity !== undefined && { capacity }) });
const shelf = (fill: number): ZoneLive => ({ id: 's', name: 'S', kind: 'shelf', count: 3, fill });

describe('liveView', () => {
  it('grades rooms against capacity on the whole people shown', () => {
    // hand-worked: capacity 10, near at 8 (0.8 × 10, inclusive), over above 10
    const levels = [0, 7.4, 7.6, 10, 10.4, 10.6].map((c) => liveView([camera([room(c, 10)])], { now }).cameras[0].zones[0]);
    expect(levels.map((z) => z.shown)).toEqual([0, 7, 8, 10, 10, 11]);
    expect(levels.map((z) => z.level)).toEqual(['below', 'below', 'near', 'near', 'near', 'over']);
    expect(levels[2].share).toBe(0.8);
  });

  it('uses the configured near mark and says "counted" without a capacity', () => {
    expect(liveView([camera([room(5, 10)])], { now, nearCapacity: 0.5 }).cameras[0].zones[0].level).toBe('near');
    expect(liveView([camera([room(5)])], { now }).cameras[0].zones[0]).toMatchObject({ level: 'counted', shown: 5 });
    expect(liveView([camera([room(1, 0)])], { now }).cameras[0].zones[0].level).toBe('over');
  });

  it('grades shelves against the low-stock mark (below it is low)', () => {
    expect(liveView([camera([shelf(0.1)])], { now }).cameras[0].zones[0]).toMatchObject({ level: 'low', lowStock: 0.15 });
    expect(liveView([camera([shelf(0.15)])], { now }).cameras[0].zones[0].level).toBe('stocked');
    expect(liveView([camera([shelf(0.25)])], { now, lowStock: { 'hall/s': 0.3 } }).cameras[0].zones[0]).toMatchObject({ level: 'low', lowStock: 0.3 });
  });

  it('never grades the zones of a camera that is not counting', () => {
    const cases: [Partial<CameraLive>, string][] = [
      [{ state: 'offline', reason: 'timeout' }, 'offline'],
      [{ state: 'learning', lastFrameAt: undefined }, 'learning'],
      [{ state: 'connecting', lastFrameAt: undefined }, 'connecting'],
      [{ state: 'connecting' }, 'connecting'],
      [{ viewChanged: true }, 'view-changed'],
      [{ lastFrameAt: now - 120_001 }, 'stale'],
      [{ lastFrameAt: undefined }, 'connecting'],
      [{ state: 'stopped' }, 'stopped'],
    ];
    for (const [over, status] of cases) {
      const c = liveView([camera([room(3, 10), shelf(0.01)], over)], { now }).cameras[0];
      expect(c.status, status).toBe(status);
      expect(c.zones.map((z) => z.level)).toEqual(['unknown', 'unknown']);
    }
    expect(liveView([camera([room(3, 10)], { lastFrameAt: now - 120_000 })], { now }).cameras[0].status).toBe('counting');
  });

  it('keeps every CameraLive field and adds learning while it runs', () => {
    const c = camera([room(2, 4)]);
    const view = liveView([c], { now, learn: () => ({ state: 'learning', progress: 0.5, seconds: 30 }) }).cameras[0];
    expect(view).toMatchObject({ ...c, zones: [expect.objectContaining(c.zones[0])], learn: { state: 'learning', progress: 0.5 } });
    const old = liveView([c], { now, learn: () => ({ state: 'done', progress: 1, finishedAt: now - 7_200_000 }) }).cameras[0];
    expect(old.learn).toBeUndefined();
  });
});
