/**
 * The comparison at the heart of ./residual-check: coefficients range-decoded from a residual plane's bytes
 * against the ones its encode recorded, given as an array or, as ../codec/resident-plane keeps them once their
 * memory is reused, as their non-zeros (positions and values). Also the whole check as one function of plain
 * data ({@link verifyResidual}), for the 'residual-verify' job of ./side-jobs: the second thread decodes
 * elsewhere than the recorded values' region (where the calling thread rebuilds the plane meanwhile).
 */
import { decodeCoefficientsV2 } from '../codec/coeff-coder';
import { decodeInPlaceV2 } from '../codec/coeff-coder-resident';
import type { LentRegion, QView } from '../codec/wasm/coder-runtime';
import { bandsFor, levelsFor } from '../codec/wavelet-transform';

/** Recorded coefficients: the whole array (`dense`) or its non-zeros (`at`, `v`). */
export interface KeptCoefficients {
  dense?: Int32Array;
  at?: Int32Array;
  v?: Int32Array;
}

/**
 * Whether the decoded q equals the recorded values: the recorded array value for value, or the recorded
 * non-zeros all found in q with q holding `nonZero` non-zeros in all (then q has no other non-zero, so every
 * other value is 0 as recorded).
 */
export function sameAsKept(q: QView, nonZero: number, kept: KeptCoefficients): boolean {
  if (kept.dense) return kept.dense.length === q.length && sameInt32(kept.dense, q);
  const at = kept.at as Int32Array;
  const v = kept.v as Int32Array;
  if (nonZero !== at.length) return false;
  for (let j = 0; j < at.length; j++) if (q[at[j]] !== v[j]) return false;
  return true;
}

/** Whether the decoded reconstruction offsets are the recorded ones, bit for bit. */
export function sameOffsets(got: Float64Array, o: Float64Array | undefined): boolean {
  if (!o || o.length !== got.length) return false;
  for (let i = 0; i < o.length; i++) if (!Object.is(o[i], got[i])) return false;
  return true;
}

export function sameInt32(a: QView, b: QView): boolean {
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}

/**
 * Coder 2's `bytes` of a width×height residual plane range-decoded and compared with the recorded
 * coefficients `kept` and offsets `offsets`: '' when they agree, else what differs, as the check's message
 * words it ('decodes to other coefficients than it was coded from', 'cannot be range-decoded (…)'). The
 * decoded values are compared where the decoder leaves them (../codec/coeff-coder decodeInPlaceV2): in
 * `region` (lent by the plane's arena, whose coefficients are not needed any more) when given and large
 * enough, else in the coder's own memory; the non-zero count is the decoder's own. Without the coder's
 * WebAssembly port, into a new array.
 */
export function verifyResidual(args: {
  bytes: Uint8Array;
  width: number;
  height: number;
  kept: KeptCoefficients;
  offsets?: Float64Array;
  region?: LentRegion;
}): string {
  const { bytes, width, height, kept } = args;
  const n = width * height;
  const bands = bandsFor(width, height, levelsFor(width, height));
  const differs = (q: QView, nonZero: number, offsets: Float64Array) =>
    !sameAsKept(q, nonZero, kept)
      ? 'decodes to other coefficients than it was coded from'
      : !sameOffsets(offsets, args.offsets)
        ? 'decodes to other reconstruction offsets than it was coded from'
        : '';
  try {
    const inPlace = decodeInPlaceV2(bytes, n, width, bands, differs, args.region);
    if (inPlace !== null) return inPlace;
    const q = new Int32Array(n);
    const offsets = decodeCoefficientsV2(bytes, q, width, bands);
    let nonZero = 0;
    if (!kept.dense) for (let i = 0; i < n; i++) if (q[i] !== 0) nonZero++;
    return differs(q, nonZero, offsets);
  } catch (err) {
    return `cannot be range-decoded (${(err as Error).message})`;
  }
}
