import type { Subspace } from '../vision/subspace.ts';

/** A plain judgement of a learned model, for people deciding whether to trust its counts. */
export interface ModelVerdict {
  readonly level: 'good' | 'fair' | 'poor';
  /** One sentence per finding, most important first. */
  readonly findings: readonly string[];
  /** Median per-pixel residual noise, grey levels. */
  readonly medianNoise: number;
  /** 95th percentile of the per-pixel residual noise, grey levels. */
  readonly noiseP95: number;
}

/**
 * Judges a model from its learning statistics. The limits are rules of thumb (common practice for
 * 8-bit cameras, not from a published source): sensor noise of a working camera after downscaling
 * is a few grey levels; a median above 6 means motion or flicker in the learning frames, above 12
 * that they were not of one scene. Fewer than 30 frames give a noise map too rough to threshold on.
 */
export function modelVerdict(model: Subspace): ModelVerdict {
  const sorted = Float32Array.from(model.noise).sort();
  const at = (q: number) => sorted[Math.min(sorted.length - 1, Math.floor(q * sorted.length))];
  const medianNoise = at(0.5);
  const noiseP95 = at(0.95);
  const findings: string[] = [];
  let level: ModelVerdict['level'] = 'good';
  const lower = (to: ModelVerdict['level']) => {
    if (to === 'poor' || (to === 'fair' && level === 'good')) level = to;
  };
  if (model.frameCount < 30) {
    lower(model.frameCount < 10 ? 'poor' : 'fair');
    findings.push(`only ${model.frameCount} learning frames: learn from 50 or more, spread over the lighting the room sees`);
  }
  if (medianNoise > 12) {
    lower('poor');
    findings.push(`residual noise is high (median ${medianNoise.toFixed(1)} grey levels): parts of the view keep moving (foliage, screens, flicker), the camera moved, or the learning frames show people`);
  } else if (medianNoise > 6) {
    lower('fair');
    findings.push(`residual noise is raised (median ${medianNoise.toFixed(1)} grey levels): something moved while learning, or the camera is noisy; counting will be less sensitive`);
  }
  if (noiseP95 > 4 * Math.max(medianNoise, 1) && noiseP95 > 10) {
    lower('fair');
    findings.push(`some areas vary strongly (95th percentile ${noiseP95.toFixed(1)} grey levels), e.g. screens, foliage or flicker: people there are harder to see`);
  }
  if (model.retainedVariance < 0.5 && model.frameCount >= 30) {
    findings.push(`the ${model.components} eigen-images explain ${(model.retainedVariance * 100).toFixed(0)} % of the variation; most of the rest is noise-like`);
  }
  if (findings.length === 0) findings.push('the model explains the empty scene well');
  return { level, findings, medianNoise, noiseP95 };
}
