import type { LearningActivity } from '../vision/fitSubspace/imputeOutliers.ts';
import type { Subspace } from '../vision/subspace.ts';

/** A plain judgement of a learned model, for people deciding whether to trust its counts. */
export interface ModelVerdict {
  /** 'poor' means not usable: the service keeps the model it had (see the findings for why). */
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
 *
 * With robust learning (a SubspaceFit's {@link LearningActivity}), what was set aside is judged
 * too: people passing through are normal and only reported; when more than a quarter of all
 * learning pixels had to be set aside, or more than 5 % of the view changed in more than 30 % of
 * the frames, the median the robust fit starts from no longer shows the empty scene there
 * (a temporal median needs the background in most frames), so the model is 'poor'. Both limits
 * are rules of thumb of ours (chosen on our synthetic scenes), not from a published source.
 */
export function modelVerdict(model: Subspace & Partial<LearningActivity>): ModelVerdict {
  const sorted = Float32Array.from(model.noise).sort();
  const at = (q: number) => sorted[Math.min(sorted.length - 1, Math.floor(q * sorted.length))];
  const medianNoise = at(0.5);
  const noiseP95 = at(0.95);
  // Each finding with the level it sets ('good' for one that only informs).
  const noted: { level: ModelVerdict['level']; text: string }[] = [];
  const note = (to: ModelVerdict['level'], text: string) => noted.push({ level: to, text });
  const { rejectedShare = 0, busyFrameShare = 0, persistentShare = 0 } = model;
  if (rejectedShare > 0.25 || persistentShare > 0.05) {
    note('poor', `too much moved while learning: ${percent(rejectedShare)} of what the camera saw had to be set aside, and ${percent(persistentShare)} of the view kept changing in most frames; learn again when the view is quieter (fewer people, no moving light)`);
  } else if (busyFrameShare > 0.05) {
    note('good', `people or motion were seen in ${percent(busyFrameShare)} of the learning frames; they were set aside and the empty scene was pieced together from the rest (${percent(rejectedShare)} of what was seen)`);
  }
  if (model.frameCount < 30) {
    note(model.frameCount < 10 ? 'poor' : 'fair', `only ${model.frameCount} learning frames: learn from 50 or more, spread over the lighting the room sees`);
  }
  if (medianNoise > 12) {
    note('poor', `residual noise is high (median ${medianNoise.toFixed(1)} grey levels): parts of the view keep moving (foliage, screens, flicker), the camera moved, or the learning frames show people`);
  } else if (medianNoise > 6) {
    note('fair', `residual noise is raised (median ${medianNoise.toFixed(1)} grey levels): something moved while learning, or the camera is noisy; counting will be less sensitive`);
  }
  if (noiseP95 > 4 * Math.max(medianNoise, 1) && noiseP95 > 10) {
    note('fair', `some areas vary strongly (95th percentile ${noiseP95.toFixed(1)} grey levels), e.g. screens, foliage or flicker: people there are harder to see`);
  }
  if (model.retainedVariance < 0.5 && model.frameCount >= 30) {
    note('good', `the ${model.components} eigen-images explain ${(model.retainedVariance * 100).toFixed(0)} % of the variation; most of the rest is noise-like`);
  }
  // The finding that decided the level comes first: it is the reason given when a model is not used.
  const rank = { poor: 0, fair: 1, good: 2 } as const;
  noted.sort((a, b) => rank[a.level] - rank[b.level]);
  const level: ModelVerdict['level'] = noted.length > 0 && noted[0].level !== 'good' ? noted[0].level : 'good';
  const findings = noted.map((n) => n.text);
  if (level === 'good') findings.unshift('the model explains the empty scene well');
  return { level, findings, medianNoise, noiseP95 };
}

/** 0.1234 → "12 %", small shares with one decimal ("0.4 %"). */
function percent(share: number): string {
  const p = share * 100;
  return `${p < 1 ? p.toFixed(1) : p.toFixed(0)} %`;
}
