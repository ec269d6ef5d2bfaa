import { describe, expect, it } from 'vitest';
import { emptyAlertState, evaluateAlerts, type Alert, type AlertState, type ObservedCamera } from '../../../src/outputs/alerts/evaluateAlerts.ts';
import { liveView } from '../../../src/server/liveView.ts';

// Hand-made sequences of the live view (our own invented hall and stock room), fed through the
// dashboard's own liveView so that levels are the ones the page shows.

const QUIET = 60_000;

/** The hall camera with one room zone of capacity 10 showing `count` people, at `time`. */
function hall(count: number | 'offline' | 'connecting', time: number): ObservedCamera {
  const state = count === 'offline' ? 'offline' : count === 'connecting' ? 'connecting' : 'online';
  return liveView(
    [{ camera: 'hall', name: 'Main hall', state, viewChanged: false, lastFrameAt: time, ...(state === 'offline' && { reason: 'HTTP 500' }), zones: [{ id: 'floor', name: 'Floor', kind: 'room', count: typeof count === 'number' ? count : 0, fill: 0.1, capacity: 10 }] }],
    { now: time },
  ).cameras[0];
}

/** The stock camera with one shelf zone at `fill` (low-stock mark 0.15). */
function shelf(fill: number, time: number): ObservedCamera {
  return liveView([{ camera: 'stock', name: 'Stock room', state: 'online', viewChanged: false, lastFrameAt: time, zones: [{ id: 'top', name: 'Top shelf', kind: 'shelf', count: 3, fill }] }], { now: time }).cameras[0];
}

/** Runs a sequence of (time, cameras) observations; returns every alert in order. */
function run(steps: [number, (t: number) => ObservedCamera][], quietMs = QUIET): Alert[] {
  let state: AlertState = emptyAlertState();
  const all: Alert[] = [];
  for (const [time, camera] of steps) {
    const r = evaluateAlerts(state, { time, cameras: [camera(time)] }, { quietMs });
    state = r.state;
    all.push(...r.alerts);
  }
  return all;
}

const at = (count: number | 'offline' | 'connecting') => (t: number) => hall(count, t);

describe('evaluateAlerts', () => {
  it('sends one start for a zone that hovers at its capacity, and one end once it stayed within it for the quiet period', () => {
    // Over (11), back to 10, over again, … every second for a minute: one event.
    const steps: [number, (t: number) => ObservedCamera][] = [];
    for (let s = 0; s < 60; s++) steps.push([s * 1000, at(s % 2 === 0 ? 11 : 10)]);
    // Then within capacity for good from 60 s: the end comes at 60 s + quiet, dated 60 s.
    for (let s = 60; s <= 130; s++) steps.push([s * 1000, at(9)]);
    const alerts = run(steps);
    expect(alerts.map((a) => a.phase)).toEqual(['started', 'ended']);
    expect(alerts[0]).toMatchObject({ rule: 'over-capacity', camera: 'hall', zone: 'floor', zoneName: 'Floor', since: 0, at: 0, figures: { count: 11, capacity: 10 } });
    expect(alerts[1]).toMatchObject({ rule: 'over-capacity', since: 0, at: 59_000, figures: { peak: 11 } });
    // A message per sample would have been 30 starts: the quiet period is what keeps it to one.
    expect(run(steps, 0).filter((a) => a.phase === 'started')).toHaveLength(30);
  });

  it('counts the quiet period from when the condition went away; at exactly the quiet period it ends (inclusive)', () => {
    const alerts = run([
      [0, at(12)],
      [10_000, at(8)],
      [10_000 + QUIET - 1, at(8)],
    ]);
    expect(alerts.map((a) => a.phase)).toEqual(['started']);
    const ended = run([
      [0, at(12)],
      [10_000, at(8)],
      [10_000 + QUIET, at(8)],
    ]);
    expect(ended.map((a) => [a.phase, a.at])).toEqual([
      ['started', 0],
      ['ended', 10_000],
    ]);
  });

  it('starts a new event when the condition comes back after the end', () => {
    const alerts = run([
      [0, at(11)],
      [1000, at(5)],
      [1000 + QUIET, at(5)],
      [1000 + QUIET + 1, at(14)],
    ]);
    expect(alerts.map((a) => a.phase)).toEqual(['started', 'ended', 'started']);
    expect(alerts[2].figures).toMatchObject({ count: 14 });
  });

  it('uses the shown count: 10.4 people in a room of 10 is not over (rounded to 10), 10.5 is', () => {
    // check: liveView rounds the smoothed count to whole people (Math.round), as the dashboard shows it.
    expect(run([[0, at(10.4)]])).toEqual([]);
    expect(run([[0, at(10.5)]]).map((a) => a.rule)).toEqual(['over-capacity']);
  });

  it('alerts a camera that goes offline and again when it counts again, and ignores the connecting state between retries', () => {
    const alerts = run([
      [0, at(3)],
      [1000, at('offline')],
      [2000, at('connecting')],
      [3000, at('offline')],
      [4000, at('connecting')],
      [5000, at(3)],
      [5000 + QUIET, at(3)],
    ]);
    expect(alerts.map((a) => [a.rule, a.phase, a.at])).toEqual([
      ['camera-offline', 'started', 1000],
      ['camera-offline', 'ended', 5000],
    ]);
    expect(alerts[0].figures).toEqual({ reason: 'HTTP 500', lastFrameAt: 1000 });
    expect(alerts[0].zone).toBeUndefined();
  });

  it('treats a camera without frames for the stale time as offline', () => {
    // check: liveView's stale rule — online but no frame for more than 120 s.
    const stale = (t: number) => liveView([{ camera: 'hall', name: 'Main hall', state: 'online', viewChanged: false, lastFrameAt: 0, zones: [] }], { now: t }).cameras[0];
    expect(run([[120_000, stale]])).toEqual([]);
    expect(run([[120_001, stale]]).map((a) => [a.rule, a.figures])).toEqual([['camera-offline', { reason: 'no frame for a while', lastFrameAt: 0 }]]);
  });

  it('neither starts nor ends a zone alert while its camera is not counting', () => {
    const alerts = run([
      [0, at(11)],
      [1000, at(5)],
      [2000, at('offline')],
      [2000 + 10 * QUIET, at('offline')],
      [3000 + 10 * QUIET, at(12)],
    ]);
    // The zone was clearing when the camera dropped; it holds again when counting resumes: same event.
    expect(alerts.filter((a) => a.rule === 'over-capacity').map((a) => a.phase)).toEqual(['started']);
  });

  it('watches the low-stock mark of shelves (fill below it) and keeps the lowest fill', () => {
    const alerts = run(
      [
        [0, (t) => shelf(0.3, t)],
        [1000, (t) => shelf(0.1, t)],
        [2000, (t) => shelf(0.05, t)],
        [3000, (t) => shelf(0.2, t)],
        [3000 + QUIET, (t) => shelf(0.2, t)],
      ],
      QUIET,
    );
    expect(alerts.map((a) => [a.rule, a.phase])).toEqual([
      ['low-stock', 'started'],
      ['low-stock', 'ended'],
    ]);
    expect(alerts[0].figures).toEqual({ fill: 0.1, lowStock: 0.15, lowest: 0.1 });
    expect(alerts[1].figures).toMatchObject({ lowest: 0.05 });
  });

  it('keeps no state and sends nothing for a rule left out, and drops the state of a camera that is gone', () => {
    let state = emptyAlertState();
    let r = evaluateAlerts(state, { time: 0, cameras: [hall(11, 0)] }, { rules: ['camera-offline'] });
    expect(r.alerts).toEqual([]);
    r = evaluateAlerts(state, { time: 0, cameras: [hall(11, 0)] });
    state = r.state;
    expect(r.alerts).toHaveLength(1);
    r = evaluateAlerts(state, { time: 1000, cameras: [] });
    expect(r.alerts).toEqual([]);
    expect(r.state.size).toBe(0);
  });

  it('does not change the state it is given', () => {
    const state = emptyAlertState();
    evaluateAlerts(state, { time: 0, cameras: [hall(11, 0)] });
    expect(state.size).toBe(0);
  });

  it('refuses a negative quiet period', () => {
    expect(() => evaluateAlerts(emptyAlertState(), { time: 0, cameras: [] }, { quietMs: -1 })).toThrow(/quietMs/);
  });
});
