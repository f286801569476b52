/** Colour transforms (RGB ⇄ YCbCr, two documented variants) and sample rounding. Pure TypeScript. */
export * from './ycbcr';
