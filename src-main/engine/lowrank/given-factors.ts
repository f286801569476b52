/**
 * Whole-plane factors a caller already has (e.g. the app session's σ, U, V of a scan), in the form the
 * encoder's search takes (./factorise `PlaneFactors`, tile 0, no mean removal), so an encode with
 * `EncodeOptions.factors` does not factor the planes again.
 */
import type { PlaneFactors } from './factorise';

/** One plane's truncated SVD: σ (non-increasing) and its singular vectors, vector i contiguous. */
export interface GivenPlaneSvd {
  s: ArrayLike<number>;
  /** k×height: left singular vector i at [i·height, (i+1)·height). */
  ut: ArrayLike<number>;
  /** k×width: right singular vector i at [i·width, (i+1)·width). */
  vt: ArrayLike<number>;
}

/**
 * Whole-plane factors of `plane` (width×height, row-major, the encoder's plane: grey, or Y/Cb/Cr) from its
 * SVD. The plane itself is kept (the quantiser refits against it).
 * @throws RangeError when the vectors do not match the plane's size or σ.
 */
export function givenPlaneFactors(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  svd: GivenPlaneSvd,
): PlaneFactors {
  const k = svd.s.length;
  if (svd.ut.length < k * height || svd.vt.length < k * width)
    throw new RangeError(
      `given factors hold ${k} components but their vectors do not fit a ${width}×${height} plane`,
    );
  const U = new Float64Array(height * k);
  const V = new Float64Array(width * k);
  for (let i = 0; i < k; i++) {
    for (let y = 0; y < height; y++) U[y * k + i] = svd.ut[i * height + y];
    for (let x = 0; x < width; x++) V[x * k + i] = svd.vt[i * width + x];
  }
  const data = Float32Array.from(plane);
  let energy = 0;
  for (let j = 0; j < data.length; j++) energy += data[j] * data[j];
  return {
    width,
    height,
    tile: 0,
    meanStep: 0,
    tiles: [
      {
        rect: { x: 0, y: 0, w: width, h: height },
        meanQ: 0,
        energy,
        data,
        s: Float64Array.from(svd.s),
        U: { rows: height, cols: k, data: U },
        V: { rows: width, cols: k, data: V },
      },
    ],
  };
}

/**
 * `given` when it fits the scan (one whole-plane factorisation per encoded plane, of its size), else
 * undefined when none was given.
 * @throws RangeError when factors were given for other planes or another size.
 */
export function fittingFactors(
  given: PlaneFactors[] | undefined,
  planes: number,
  width: number,
  height: number,
): PlaneFactors[] | undefined {
  if (!given) return undefined;
  const fits =
    given.length === planes && given.every((f) => f.tile === 0 && f.width === width && f.height === height);
  if (!fits)
    throw new RangeError(
      `given factors are not ${planes} whole-plane factorisation(s) of a ${width}×${height} scan`,
    );
  return given;
}
