import type { ColourFrame } from '../domain/colourFrame.ts';
import { outputMask, type Mask } from '../domain/frame.ts';
import type { ChromaticityModel } from './chromaticityModel.ts';
import { colourDistortion, type ColourDistortion } from './colourDistortion.ts';

export interface SuppressShadowsOptions {
  /**
   * Darkest brightness a shadow leaves, as a share of the expected brightness: α ≥ alphaLow
   * (inclusive). Darker pixels stay foreground — black clothes are not a shadow. 0..1, default
   * 0.5, the shadow threshold τ of OpenCV's BackgroundSubtractorMOG2 (Prati et al. 2003: "more
   * than twice darker" is not a shadow).
   */
  alphaLow?: number;
  /**
   * Brightness below which a pixel can be a shadow: α < alphaHigh (exclusive). In (alphaLow, 1],
   * default 1: any darkening the foreground threshold has already found significant.
   */
  alphaHigh?: number;
  /**
   * Largest chromaticity distortion of a shadow, in units of the pixel's learned spread b_i:
   * CD / b_i ≤ maxChromaDistortion (inclusive). > 0, default 2. When CD is Rayleigh-distributed
   * (isotropic normal noise off the chromaticity line) and b_i its root mean square, a shadow on
   * the empty scene exceeds τ b_i with probability e^(−τ²): 1.8 % of shadow pixels for τ = 2,
   * scattered single pixels that the opening after this stage removes; a larger τ also clears
   * more of the people whose clothes are close to the floor's chromaticity.
   */
  maxChromaDistortion?: number;
  /**
   * Per-pixel brightness the frame is expected to have relative to the learned mean E (e.g. the
   * grey subspace's reconstruction of this frame over its mean image, so that daylight drift and
   * lamps switching are not taken for shadows or highlights); α is divided by it. Read at set
   * mask pixels only; values ≤ 0 or not finite count as 1. Default: 1 everywhere.
   */
  brightnessScale?: Float32Array;
  /** Mask to write into instead of allocating (may be `mask` itself). */
  out?: Mask;
  /** Buffers for the distortion maps (each width × height), reused instead of allocating. */
  scratch?: ColourDistortion;
}

/**
 * Clears the foreground pixels of `mask` that are a cast shadow on the empty scene, in the manner
 * of Horprasert, Harwood & Davis (1999, §4.2): a pixel whose brightness distortion α (relative to
 * the expected brightness, see `brightnessScale`) lies in [alphaLow, alphaHigh) — darker, but not
 * black — and whose chromaticity distortion CD is within `maxChromaDistortion` learned spreads
 * b_i of the expected chromaticity is a shadow: the same surface, less lit. Everything else set
 * in `mask` stays set; nothing is ever added.
 *
 * α and CD come from colourDistortion (α = Σ I_c E_c / σ_c² / Σ (E_c / σ_c)²,
 * CD = √Σ ((I_c − α E_c) / σ_c)²). Horprasert et al. threshold α, too, in units of its learned
 * spread; here the foreground decision is the subspace's, and only the bounds of a shadow's
 * darkening are asked of α.
 *
 * Example: with E = (100, 80, 40), σ = (10, 8, 4) and b = 0.5, an observed (60, 48, 24) has
 * α = 0.6 and CD = 0: a shadow, cleared; (60, 40, 20) has α = 0.53, CD = 0.82 = 1.6 b: also cleared;
 * (30, 24, 12) has α = 0.3 < alphaLow: kept; (40, 60, 30) has CD = 2.86 = 5.7 b: kept.
 */
export function suppressShadows(
  mask: Mask,
  colour: ColourFrame,
  model: ChromaticityModel,
  options: SuppressShadowsOptions = {},
): Mask {
  const { alphaLow = 0.5, alphaHigh = 1, maxChromaDistortion = 2, brightnessScale, out, scratch } = options;
  if (!(alphaLow >= 0 && alphaLow <= 1)) throw new RangeError(`alphaLow must be in 0..1, got ${alphaLow}`);
  if (!(alphaHigh > alphaLow && alphaHigh <= 1)) throw new RangeError(`alphaHigh must be in (alphaLow, 1] = (${alphaLow}, 1], got ${alphaHigh}`);
  if (!(maxChromaDistortion > 0)) throw new RangeError(`maxChromaDistortion must be > 0, got ${maxChromaDistortion}`);
  const { width, height } = model;
  if (mask.width !== width || mask.height !== height) throw new RangeError(`mask is ${mask.width}×${mask.height}, the colour model is ${width}×${height}`);
  const d = width * height;
  if (brightnessScale !== undefined && brightnessScale.length !== d) {
    throw new RangeError(`brightnessScale has length ${brightnessScale.length}, expected ${d}`);
  }
  const result = outputMask(width, height, out);
  const { alpha, cd } = colourDistortion(colour, model, { out: scratch });
  const b = model.chromaSpread;
  const m = mask.data;
  const r = result.data;
  for (let i = 0; i < d; i++) {
    if (m[i] === 0) {
      r[i] = 0;
      continue;
    }
    let a = alpha[i];
    if (brightnessScale !== undefined) {
      const s = brightnessScale[i];
      if (s > 0 && s < Infinity) a /= s;
    }
    const shadow = a >= alphaLow && a < alphaHigh && cd[i] <= maxChromaDistortion * b[i];
    r[i] = shadow ? 0 : 1;
  }
  return result;
}
