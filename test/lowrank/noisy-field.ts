// A seeded test plane for the report's checks (test/lowrank): noise around a diagonal ramp crossed by a bright
// square, rounded and clamped to 0–max (so clamping is exercised).
import type { DecodedImage } from '../../src-main/contract';
import { Rng } from '../../src-main/engine/linalg/random';

export function field(w: number, h: number, seed: number, max: number): Float32Array {
  const rng = new Rng(seed);
  return Float32Array.from({ length: w * h }, (_, i) => {
    const [x, y] = [i % w, Math.floor(i / w)];
    const square = Math.abs(x - w / 2) < w / 5 && Math.abs(y - h / 2) < h / 5 ? 0.5 : 0;
    const v = max * ((x + y) / (w + h) + square) + (max / 40) * rng.normal();
    return Math.max(0, Math.min(max, Math.round(v)));
  });
}

/** A grey scan (8 or 16 bits) of {@link field}, with an alpha plane (its left quarter clear) when asked. */
export function greyScan(w: number, h: number, bitDepth: 8 | 16, alpha: boolean): DecodedImage {
  const max = bitDepth === 16 ? 65535 : 255;
  const planes = [field(w, h, 5, max)];
  if (alpha) planes.push(Float32Array.from({ length: w * h }, (_, i) => (i % w < w / 4 ? 0 : max)));
  return {
    file: 'grey.tif',
    width: w,
    height: h,
    channels: alpha ? 2 : 1,
    bitDepth,
    colour: 'gray',
    hasAlpha: alpha,
    planes,
    meta: { format: 'tiff' },
    inputBytes: w * h,
    rawBytes: w * h * planes.length * (bitDepth / 8),
    sourceSha256: '0'.repeat(64),
  } as DecodedImage;
}
