/**
 * A one-off check of a camera source before it is saved: can it be reached, and does it give a
 * picture that decodes at the working size? The source is started as the service would start it,
 * the first good frame is dropped at once (never kept, stored or sent), and the source is stopped.
 */
import { FrameError } from '../FrameError.ts';
import type { Size } from '../workingSize.ts';
import type { CameraSource } from './cameraSource.ts';
import { createCameraSource, type CameraSourceDescription, type CreateCameraSourceOptions } from './createCameraSource.ts';

export interface ProbeSourceOptions extends CreateCameraSourceOptions {
  /** Longest wait for the first good frame, ms ≥ 1; default 15 000. */
  readonly timeoutMs?: number;
}

/** What the first good frame showed. */
export interface ProbeResult {
  /** The camera's own picture size (its resolution), when the source tells it. */
  readonly sourceSize?: Size;
}

/** The source gave no good frame: `reason` says why in the source's words (no credentials). */
export class SourceProbeError extends Error {
  override name = 'SourceProbeError';
  constructor(
    readonly reason: string,
    /** The camera's picture size, when the failure was a picture of another aspect ratio than the working size. */
    readonly sourceSize?: Size,
  ) {
    super(reason);
  }
}

/**
 * Resolves at the source's first good frame; rejects with SourceProbeError at its first failure
 * (the source goes offline: connection refused, HTTP error, not an image, wrong aspect ratio, …) or
 * when nothing came within `timeoutMs`. The source is stopped either way before the promise settles.
 *
 * Example: await probeSource({ kind: 'snapshot', id: 'door', size: { width: 320, height: 240 },
 * url: 'http://192.0.2.10/snapshot.jpg' }) → { sourceSize: { width: 1280, height: 960 } }.
 */
export async function probeSource(description: CameraSourceDescription, options: ProbeSourceOptions = {}): Promise<ProbeResult> {
  const { timeoutMs = 15_000, ...sourceOptions } = options;
  if (!(Number.isFinite(timeoutMs) && timeoutMs >= 1)) throw new RangeError(`timeoutMs: expected milliseconds ≥ 1, got ${String(timeoutMs)}`);
  // A single failure is the answer: no reconnection attempts while probing.
  const source: CameraSource = createCameraSource({ ...description, backoff: { initialMs: 3_600_000, maxMs: 3_600_000 } }, sourceOptions);
  let sourceSize: Size | undefined;
  let lastBad: FrameError | undefined;
  let timer: NodeJS.Timeout | undefined;
  const outcome = new Promise<ProbeResult>((resolve, reject) => {
    timer = setTimeout(() => reject(new SourceProbeError(lastBad ? lastBad.message : `no picture within ${timeoutMs < 1000 ? `${timeoutMs} ms` : `${Math.round(timeoutMs / 1000)} s`}`)), timeoutMs);
    source.start({
      frame() {
        resolve(sourceSize ? { sourceSize } : {});
      },
      status(state, detail) {
        if (state === 'online' && detail.sourceSize) sourceSize = detail.sourceSize;
        if (state === 'offline') {
          const reason = detail.reason ?? lastBad?.message ?? 'the source went offline';
          reject(new SourceProbeError(reason, aspectSourceSize(reason)));
        }
      },
      badFrame(error) {
        lastBad = error;
      },
    });
  });
  try {
    return await outcome;
  } finally {
    clearTimeout(timer);
    await source.stop();
  }
}

/**
 * The camera's picture size in an aspect-ratio refusal (assertAspect's message: `source is
 * 1280×720 (aspect 1.778) but the model is 320×240 …`); undefined for any other reason.
 */
function aspectSourceSize(reason: string): Size | undefined {
  if (!reason.includes('the aspect ratios differ by')) return undefined;
  const m = /source is (\d+)×(\d+)/.exec(reason);
  return m ? { width: Number(m[1]), height: Number(m[2]) } : undefined;
}
