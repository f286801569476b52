/**
 * Lossless coding of an alpha (or any integer) plane: each sample is predicted by the median edge
 * detector of LOCO-I / JPEG-LS (Weinberger, Seroussi, Sapiro, IEEE TIP 9(8), 2000, eq. (2); ISO/IEC
 * 14495-1 §A.4.1, both from memory) and the residual is range-coded with a context of the neighbouring
 * gradient activity.
 */
import { decodeInt, encodeInt, IntModel, RangeDecoder, RangeEncoder } from './range-coder';

const CLASSES = 8;

function predict(
  p: ArrayLike<number>,
  width: number,
  i: number,
  x: number,
  y: number,
): { pred: number; cls: number } {
  const a = x > 0 ? p[i - 1] : y > 0 ? p[i - width] : 0;
  const b = y > 0 ? p[i - width] : a;
  const c = x > 0 && y > 0 ? p[i - width - 1] : b;
  let pred: number;
  if (c >= Math.max(a, b)) pred = Math.min(a, b);
  else if (c <= Math.min(a, b)) pred = Math.max(a, b);
  else pred = a + b - c;
  const act = Math.abs(a - c) + Math.abs(b - c);
  const cls = act === 0 ? 0 : Math.min(CLASSES - 1, 1 + Math.floor(Math.log2(act)));
  return { pred, cls };
}

export function encodeLosslessPlane(p: ArrayLike<number>, width: number, height: number): Uint8Array {
  const enc = new RangeEncoder();
  const m = new IntModel(CLASSES);
  for (let y = 0, i = 0; y < height; y++)
    for (let x = 0; x < width; x++, i++) {
      const { pred, cls } = predict(p, width, i, x, y);
      encodeInt(enc, m, p[i] - pred, cls, 0);
    }
  return enc.finish();
}

export function decodeLosslessPlane(
  bytes: Uint8Array,
  width: number,
  height: number,
  max: number,
): Float32Array {
  const dec = new RangeDecoder(bytes);
  const m = new IntModel(CLASSES);
  const out = new Float32Array(width * height);
  for (let y = 0, i = 0; y < height; y++)
    for (let x = 0; x < width; x++, i++) {
      const { pred, cls } = predict(out, width, i, x, y);
      const v = pred + decodeInt(dec, m, cls, 0);
      if (v < 0 || v > max) throw new RangeError(`the lossless plane decodes to ${v}, outside 0–${max}`);
      out[i] = v;
    }
  if (dec.overrun > 5) throw new RangeError('the lossless plane ends early (truncated or corrupt)');
  return out;
}
