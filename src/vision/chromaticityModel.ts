/**
 * The empty scene in colour, as the statistical background model of Horprasert, Harwood & Davis
 * ("A statistical approach for real-time robust background subtraction and shadow detection",
 * IEEE ICCV'99 Frame-Rate Workshop, 1999): per pixel the expected colour E_i, its per-channel
 * spread σ_i, and the spread b_i of the chromaticity distortion over the learning frames.
 *
 * E_i fixes the pixel's chromaticity (the direction of E_i in RGB space, i.e. the normalised
 * chromaticity r = R / (R + G + B), g = G / (R + G + B)) and its brightness (the length of E_i);
 * a shadow keeps the direction and shortens the length. Learned by fitChromaticity alongside the
 * grey subspace, from the same frames; used by colourDistortion and suppressShadows.
 *
 * Layout, for d = width × height pixels (row-major as GreyFrame, channels interleaved as
 * ColourFrame):
 * - `mean[3i + c]`: E_c of pixel i, channel c (0 red, 1 green, 2 blue), 0..255;
 * - `spread[3i + c]`: σ_c of pixel i, channel c, in the same units, > 0;
 * - `chromaSpread[i]`: b_i, the root mean square chromaticity distortion of pixel i over the
 *   learning frames, in σ units (dimensionless), > 0.
 *
 * It holds statistics of empty-scene frames only, never a frame with people in it.
 */
export interface ChromaticityModel {
  readonly width: number;
  readonly height: number;
  /** Expected colour E_i, 3 values per pixel, 0..255. */
  readonly mean: Float32Array;
  /** Per-channel standard deviation σ_i, 3 values per pixel, > 0. */
  readonly spread: Float32Array;
  /** b_i: RMS chromaticity distortion of the learning frames, one value per pixel, σ units, > 0. */
  readonly chromaSpread: Float32Array;
  /** Number of frames the statistics were learned from. */
  readonly frameCount: number;
}
