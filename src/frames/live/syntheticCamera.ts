/**
 * A synthetic scene played as a live camera, for the demo and for tests of the service: frames
 * are rendered as wall time passes, and an outage can be simulated.
 */
import type { SceneTruth, SyntheticScene } from '../synthetic/scene.ts';
import type { ShadowRoomScene } from '../synthetic/shadowRoom.ts';
import type { CameraHandlers, CameraSource, SourceState, StatusDetail } from './cameraSource.ts';
import { checkText } from './checkOptions.ts';
import { systemClock, type Clock } from './clock.ts';

/** A simulated outage: no frames from `fromMs` (inclusive) to `toMs` (exclusive), milliseconds of wall time after start(). */
export interface SimulatedOutage {
  readonly fromMs: number;
  readonly toMs: number;
}

export interface SyntheticCameraOptions {
  /** The camera id. Required. */
  id: string;
  /** Scene seconds per wall-clock second, a number > 0 and ≤ 1000 (10 plays ten times as fast). Default 1. */
  speed?: number;
  /** Times without frames, reported `offline` with reason `simulated outage`. Default none. */
  outages?: readonly SimulatedOutage[];
  /** Time source (now and timers). Default the system clock. */
  clock?: Clock;
  /**
   * Deliver each frame in colour too (the colour mode); the scene must render colour (the shadow
   * room, createShadowRoom). Default false.
   */
  colour?: boolean;
}

/** A {@link CameraSource} over a synthetic scene, which also tells what it showed. */
export interface SyntheticCamera extends CameraSource {
  /** The scene played. */
  readonly scene: SyntheticScene;
  /** The truth per zone of the latest frame delivered; undefined before the first. */
  truth(): SceneTruth | undefined;
  /** The scene frame index of the latest frame delivered; undefined before the first. */
  frameIndex(): number | undefined;
}

/**
 * Plays `scene` as a camera: frame t = floor(elapsed · frameRate · speed / 1000) of the scene is
 * rendered when wall time reaches it (elapsed = milliseconds since start()), so the scene keeps
 * to the clock: when rendering falls behind, frame indices are skipped rather than queued. Frames
 * come at the scene's size; `capturedAt` is the render time.
 *
 * Status: `connecting` then `online` at start; `offline` (reason `simulated outage`, `retryInMs`
 * until its end) during an outage, in which scene time goes on but no frame is delivered, then
 * `online` again.
 *
 * Example: syntheticCamera(createScene('reading-room', { width: 160, height: 120 }), { id: 'demo', speed: 4 })
 * delivers 40 frames per wall-clock second (the scene's 10 fps × 4).
 */
export function syntheticCamera(scene: SyntheticScene, options: SyntheticCameraOptions): SyntheticCamera {
  const { id, speed = 1, outages = [], clock = systemClock, colour = false } = options;
  checkText(id, 'id');
  const colourScene = colour ? (scene as Partial<ShadowRoomScene>) : undefined;
  if (colourScene !== undefined && typeof colourScene.colourFrameAt !== 'function') {
    throw new RangeError('colour: this synthetic scene renders grey only (the shadow room renders colour)');
  }
  if (!(typeof speed === 'number' && speed > 0 && speed <= 1000)) throw new RangeError(`speed must be a number > 0 and ≤ 1000, got ${String(speed)}`);
  outages.forEach((outage, index) => {
    if (!(outage.fromMs >= 0 && outage.toMs > outage.fromMs && Number.isFinite(outage.toMs))) {
      throw new RangeError(`outages[${index}] must have 0 ≤ fromMs < toMs (finite milliseconds), got ${JSON.stringify(outage)}`);
    }
  });
  const framesPerMs = (scene.frameRate * speed) / 1000;

  let handlers: CameraHandlers | undefined;
  let stopped = false;
  let state: SourceState | undefined;
  let startedAt = 0;
  let timer: unknown;
  let lastIndex: number | undefined;
  let lastTruth: SceneTruth | undefined;

  const setStatus = (next: SourceState, detail: Omit<StatusDetail, 'at'> = {}): void => {
    state = next;
    handlers?.status(next, { at: clock.now(), ...detail });
  };

  const tick = (): void => {
    timer = undefined;
    if (stopped || handlers === undefined) return;
    const now = clock.now();
    const elapsed = Math.max(0, now - startedAt);
    const t = Math.floor(elapsed * framesPerMs + 1e-9); // the epsilon absorbs rounding of the timer arithmetic
    const outage = outages.find((o) => elapsed >= o.fromMs && elapsed < o.toMs);
    if (outage !== undefined) {
      if (state !== 'offline') setStatus('offline', { reason: 'simulated outage', retryInMs: Math.ceil(outage.toMs - elapsed) });
    } else {
      if (state !== 'online') setStatus('online');
      if (t !== lastIndex) {
        const { frame, truth, colour: inColour } = colourScene ? colourScene.colourFrameAt!(t) : { ...scene.frameAt(t), colour: undefined };
        lastIndex = t;
        lastTruth = truth;
        handlers.frame(frame, now, inColour);
      }
    }
    if (stopped) return;
    // The next frame's time, or the end of the outage if that comes first.
    let nextAt = (t + 1) / framesPerMs;
    if (outage !== undefined) nextAt = Math.max(nextAt, outage.toMs);
    timer = clock.setTimeout(tick, Math.max(1, Math.ceil(nextAt - (clock.now() - startedAt))));
  };

  return {
    id,
    scene,
    truth: () => lastTruth,
    frameIndex: () => lastIndex,
    start(given) {
      if (handlers !== undefined) throw new Error(`camera ${id}: start() was already called`);
      if (stopped) throw new Error(`camera ${id}: stopped`);
      handlers = given;
      startedAt = clock.now();
      setStatus('connecting', { attempt: 1 });
      tick();
    },
    async stop() {
      stopped = true;
      if (timer !== undefined) clock.clearTimeout(timer);
      timer = undefined;
    },
  };
}
