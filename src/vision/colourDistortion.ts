import type { ColourFrame } from '../domain/colourFrame.ts';
import type { ChromaticityModel } from './chromaticityModel.ts';

/** Per-pixel brightness and chromaticity distortion of a colour frame. */
export interface ColourDistortion {
  /** α_i, brightness distortion: 1 as bright as expected, < 1 darker, > 1 brighter; NaN where E_i is black. */
  readonly alpha: Float32Array;
  /** CD_i, chromaticity distortion in σ units (≥ 0), not yet divided by b_i. */
  readonly cd: Float32Array;
}

export interface ColourDistortionOptions {
  /** Buffers for `alpha` and `cd` (each of length width × height), reused instead of allocating. */
  out?: { alpha: Float32Array; cd: Float32Array };
}

/**
 * Brightness distortion α and chromaticity distortion CD of each pixel of a colour frame against
 * the expected colours, as defined by Horprasert, Harwood & Davis (1999, §3; see
 * chromaticityModel.ts): with I the observed colour, E the expected colour and σ its per-channel
 * spread, α is the scale of E that comes closest to I in σ-weighted distance,
 *
 *   α = argmin_a Σ_c ((I_c − a E_c) / σ_c)² = Σ_c (I_c E_c / σ_c²) / Σ_c (E_c / σ_c)²,
 *
 * and CD is what remains, the σ-weighted distance of I from the line through E:
 *
 *   CD = √ Σ_c ((I_c − α E_c) / σ_c)².
 *
 * A shadow darkens a pixel without changing its chromaticity: α < 1 and CD about as small as in
 * the empty scene (Horprasert et al. compare CD with its learned spread b_i; see suppressShadows).
 * Where E is black (Σ (E_c / σ_c)² = 0) α is NaN and CD is the σ-weighted length of I.
 *
 * Example: I = (60, 40, 20), E = (100, 80, 40), σ = (10, 8, 4) give
 * α = (60 + 50 + 50) / (100 + 100 + 100) = 0.5333 and CD = √(0.444 + 0.111 + 0.111) = 0.8165.
 */
export function colourDistortion(
  colour: ColourFrame,
  reference: Pick<ChromaticityModel, 'width' | 'height' | 'mean' | 'spread'>,
  options: ColourDistortionOptions = {},
): ColourDistortion {
  const { out } = options;
  const { width, height, mean, spread } = reference;
  if (colour.width !== width || colour.height !== height) {
    throw new RangeError(`colour frame is ${colour.width}×${colour.height}, the colour model is ${width}×${height}`);
  }
  const d = width * height;
  if (colour.data.length !== 3 * d) throw new RangeError(`colour frame data has length ${colour.data.length}, expected ${3 * d}`);
  if (mean.length !== 3 * d || spread.length !== 3 * d) throw new RangeError(`colour model mean and spread must have ${3 * d} values`);
  const alpha = out?.alpha ?? new Float32Array(d);
  const cd = out?.cd ?? new Float32Array(d);
  if (alpha.length !== d || cd.length !== d) throw new RangeError(`out.alpha and out.cd must have length ${d}`);
  const I = colour.data;
  for (let i = 0, j = 0; i < d; i++, j += 3) {
    // Everything in σ units: x_c = I_c / σ_c, e_c = E_c / σ_c; α = x·e / e·e, CD = |x − α e|.
    const xr = I[j] / spread[j];
    const xg = I[j + 1] / spread[j + 1];
    const xb = I[j + 2] / spread[j + 2];
    const er = mean[j] / spread[j];
    const eg = mean[j + 1] / spread[j + 1];
    const eb = mean[j + 2] / spread[j + 2];
    const ee = er * er + eg * eg + eb * eb;
    if (ee > 0) {
      const a = (xr * er + xg * eg + xb * eb) / ee;
      const dr = xr - a * er;
      const dg = xg - a * eg;
      const db = xb - a * eb;
      alpha[i] = a;
      cd[i] = Math.sqrt(dr * dr + dg * dg + db * db);
    } else {
      alpha[i] = Number.NaN;
      cd[i] = Math.sqrt(xr * xr + xg * xg + xb * xb);
    }
  }
  return { alpha, cd };
}
