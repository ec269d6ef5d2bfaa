import { createMask } from '../../domain/frame.ts';
import { clearLightChanges } from '../clearLightChanges.ts';
import { dilate } from '../dilate.ts';
import { openMask } from '../openMask.ts';
import type { Subspace } from '../subspace.ts';
import { componentMajor } from './componentMajor.ts';
import { medianOf } from './temporalMedian.ts';

/** What robust learning set aside of its frames: people passing through, or anything else that moved. */
export interface LearningActivity {
  /**
   * Share of learning pixels seen as foreground in the last robust refit and set aside (outliers
   * at least 3×3 pixels large and a margin around them; 0 without robust learning).
   */
  readonly rejectedShare: number;
  /**
   * Share of learning frames in which more than 0.2 % of the pixels were set aside (someone or
   * something moved through the view); 0 without robust learning.
   */
  readonly busyFrameShare: number;
  /**
   * Share of pixels set aside in more than 30 % of the learning frames:
   * parts of the view that kept changing, where the empty scene is uncertain; 0 without robust learning.
   */
  readonly persistentShare: number;
}

/** A frame counts as busy when more than this share of its pixels was set aside. */
const busyFramePixels = 0.002;
/** A pixel counts as persistently changing when it was set aside in more than this share of the frames. */
const persistentAfter = 0.3;

/**
 * The frames with every outlying pixel replaced by the model's reconstruction of it (its mean
 * plus the frame's projection onto its eigen-images), and what was replaced. A pixel is outlying
 * when its residual exceeds `cutoff` robust noise levels, the per-pixel median absolute residual
 * over the frames times 1.4826 (the MAD scale of a normal distribution; Hampel 1974), which
 * people present in a minority of the frames do not inflate.
 */
export function imputeOutliers(
  frames: readonly Float32Array[],
  model: Pick<Subspace, 'mean' | 'basis' | 'components'>,
  size: { width: number; height: number },
  cutoff: number,
  floor: number,
  margin = 2,
): { frames: Float32Array[]; replaced: number; activity: LearningActivity } {
  const d = size.width * size.height;
  const n = frames.length;
  const reconstructions = frames.map(() => new Float32Array(d));
  const column = new Float32Array(n);
  const { mean, components: k } = model;
  const columns = componentMajor(model.basis, d, k);
  const c = new Float64Array(d);
  frames.forEach((f, t) => {
    const rec = reconstructions[t];
    for (let i = 0; i < d; i++) {
      c[i] = f[i] - mean[i];
      rec[i] = mean[i];
    }
    for (let j = 0; j < k; j++) {
      const u = columns[j];
      let y = 0;
      for (let i = 0; i < d; i++) y += u[i] * c[i];
      for (let i = 0; i < d; i++) rec[i] += y * u[i];
    }
  });
  const scale = new Float32Array(d);
  for (let i = 0; i < d; i++) {
    for (let t = 0; t < n; t++) column[t] = Math.abs(frames[t][i] - reconstructions[t][i]);
    scale[i] = Math.max(floor, 1.4826 * medianOf(column));
  }
  let replaced = 0;
  let busyFrames = 0;
  const outlying = new Uint8Array(d);
  const light = createMask(size.width, size.height);
  const timesReplaced = new Uint32Array(d);
  let seenPixels = 0;
  const out = frames.map((f, t) => {
    const rec = reconstructions[t];
    for (let i = 0; i < d; i++) outlying[i] = Math.abs(f[i] - rec[i]) > cutoff * scale[i] ? 1 : 0;
    // Light that changed while learning (a lamp switched, a patch of sun, a shadow) keeps the
    // texture of the scene and is kept, so that the eigen-images learn it; the temporal median
    // alone would take its rarer state for foreground and erase it. People replace the texture.
    const { width, height } = size;
    const changed = clearLightChanges({ width, height, data: f }, { width, height, data: rec }, { width, height, data: outlying }, scale, { out: light });
    // The soft edges and faint parts of a person stay below the cutoff: replace a margin around
    // every outlier (a lone one included: it may be a faint part of someone).
    const grown = dilate(changed, { radius: margin });
    const g = Float32Array.from(f);
    for (let i = 0; i < d; i++) {
      if (grown.data[i]) {
        g[i] = rec[i];
        replaced++;
      }
    }
    // What is reported as seen, though, leaves out lone pixels, which are mostly sensor noise (a
    // 3-noise-level cutoff passes about 0.3 % of them): only outliers at least 3×3 large, grown.
    const seen = dilate(openMask(changed, { radius: 1 }), { radius: margin });
    let inFrame = 0;
    for (let i = 0; i < d; i++) {
      if (seen.data[i]) {
        inFrame++;
        timesReplaced[i]++;
      }
    }
    seenPixels += inFrame;
    if (inFrame > busyFramePixels * d) busyFrames++;
    return g;
  });
  let persistent = 0;
  for (let i = 0; i < d; i++) if (timesReplaced[i] > persistentAfter * n) persistent++;
  return { frames: out, replaced, activity: { rejectedShare: seenPixels / (d * n), busyFrameShare: busyFrames / n, persistentShare: persistent / d } };
}
