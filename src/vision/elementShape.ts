/** Shape of the structuring element, centred on the pixel, of half-size `radius`. */
export const ElementShape = {
  /** (2r+1)×(2r+1) square: opencv MORPH_RECT. */
  Square: 'square',
  /** Row r and column r of that square, a plus sign: opencv MORPH_CROSS. */
  Cross: 'cross',
} as const;
export type ElementShape = (typeof ElementShape)[keyof typeof ElementShape];
