/**
 * A prepared series in the wavelet domain, computed once per series and shared by every encode and by the
 * rate model (./stack-rate). The CDF 9/7 transform is linear, so every plane the stack layout codes is a
 * linear combination of transformed frames:
 *     W(μ) = (1/N)·Σ_j W(F_j),   W(P_i) = Σ_j V_ji·(W(F_j) − W(μ) − d_j·W(1)),
 *     W(R_j) = W(F_j) − Ŵ(μ) − d_j·W(1) − Σ_i c_ji·Ŵ(P_i)   (Ŵ: the dequantised coefficients).
 * Each frame is transformed once (N forward transforms per channel, plus one of the constant plane); no
 * encode transforms anything again, and a decoder's inverse transforms are run only for the chosen file.
 * The choice of what to code may differ from a pixel-domain computation by rounding; the file does not
 * depend on how the encoder chose, and the encoder rebuilds its frames exactly as a reader does.
 *
 * The rate model works on a fixed sample of coefficient positions (all of a small band, every s-th of a
 * large one, s prime so that no row pattern aliases), so that a trial costs a pass over a few thousand
 * values per plane instead of a coding pass over the whole series.
 */
import type { FrameModeSvd } from '../stack/frame-svd';
import { type AnalysedPlane, analysePlane } from './wavelet-plane';
import type { Band } from './wavelet-transform';

/** Most sampled positions per band for the rate model. */
const SAMPLE_PER_BAND = 512;
const PRIMES = [1, 2, 3, 5, 7, 11, 13, 17, 19, 23, 29, 31, 37, 41, 43, 47, 53, 59, 61, 67, 71, 73, 79, 83];

export interface StackGeometry {
  width: number;
  height: number;
  levels: number;
  bands: Band[];
  /** Band of every coefficient (Mallat layout). */
  map: Uint8Array;
  /** Synthesis gain of every coefficient's band (pixel-domain squared error per unit coefficient error). */
  gain: Float64Array;
  /** Sampled positions, their bands, and per band the number of coefficients one sample stands for. */
  sample: Int32Array;
  sampleBand: Uint8Array;
  sampleWeight: Float64Array;
}

export interface ChannelAnalysis {
  /** W(F_j) for every frame. */
  frames: Float64Array[];
  /** W(μ). */
  mean: Float64Array;
  /** W(1), the constant plane (carries the per-frame offsets d_j). */
  ones: Float64Array;
  svd: FrameModeSvd;
  /** W(P_i), formed on first use. */
  basis(i: number): Float64Array;
  /** Sampled W(P_i) (the positions of {@link StackGeometry.sample}), formed on first use. */
  basisSample(i: number): Float64Array;
  /** Sampled W(F_j), W(μ) and W(1). */
  frameSamples: Float64Array[];
  meanSample: Float64Array;
  onesSample: Float64Array;
  /** Eigen-frames available (min(N, the prepared maximum)). */
  maxRank: number;
}

export interface StackAnalysis {
  geometry: StackGeometry;
  channels: ChannelAnalysis[];
}

function sampleOf(x: Float64Array, idx: Int32Array): Float64Array {
  const out = new Float64Array(idx.length);
  for (let s = 0; s < idx.length; s++) out[s] = x[idx[s]];
  return out;
}

function geometryOf(a: AnalysedPlane): StackGeometry {
  const { width, bands, map } = a;
  const gain = new Float64Array(map.length);
  for (let i = 0; i < map.length; i++) gain[i] = bands[map[i]].gain;
  const idx: number[] = [];
  const band: number[] = [];
  const sampleWeight = new Float64Array(bands.length);
  bands.forEach((b, bi) => {
    const size = b.w * b.h;
    const stride = PRIMES.find((p) => p * SAMPLE_PER_BAND >= size) ?? PRIMES[PRIMES.length - 1];
    let taken = 0;
    for (let k = 0; k < size; k += stride) {
      idx.push((b.y0 + Math.floor(k / b.w)) * width + b.x0 + (k % b.w));
      band.push(bi);
      taken++;
    }
    sampleWeight[bi] = taken ? size / taken : 0;
  });
  return {
    width,
    height: a.height,
    levels: a.levels,
    bands,
    map,
    gain,
    sample: Int32Array.from(idx),
    sampleBand: Uint8Array.from(band),
    sampleWeight,
  };
}

/** A plane of this geometry as the plane coder's input (the coefficients are not copied). */
export function asAnalysed(g: StackGeometry, coeffs: Float64Array): AnalysedPlane {
  return { width: g.width, height: g.height, levels: g.levels, bands: g.bands, map: g.map, coeffs };
}

/**
 * Transform every frame of every coded channel once.
 * @param coded - [channel][frame] planes; `svd` the frame-mode SVD of each channel; `maxRank` the most
 * eigen-frames any encode may use; `transformed` the frames' coefficients when already computed
 * ([channel][frame], each `analysePlane(coded[c][j]).coeffs`, e.g. by other threads).
 */
export function analyseStack(
  coded: Float64Array[][],
  svd: FrameModeSvd[],
  width: number,
  height: number,
  maxRank: number,
  transformed?: Float64Array[][],
): StackAnalysis {
  const ones = analysePlane(new Float64Array(width * height).fill(1), width, height);
  const geometry = geometryOf(ones);
  const channels = coded.map((planes, c): ChannelAnalysis => {
    const N = planes.length;
    const frames = transformed?.[c] ?? planes.map((p) => analysePlane(p, width, height).coeffs);
    const n = width * height;
    const mean = new Float64Array(n);
    for (const f of frames) for (let p = 0; p < n; p++) mean[p] += f[p];
    for (let p = 0; p < n; p++) mean[p] /= N;
    const s = svd[c];
    const centred = (j: number, out: Float64Array, x: Float64Array, m: Float64Array, o: Float64Array) => {
      const d = s.offsets[j];
      for (let p = 0; p < out.length; p++) out[p] = x[p] - m[p] - d * o[p];
      return out;
    };
    /** Σ_j V_ji·(F_j − μ − d_j·1) over the given (full or sampled) planes. */
    const combine = (i: number, fr: Float64Array[], m: Float64Array, o: Float64Array) => {
      const P = new Float64Array(m.length);
      const y = new Float64Array(m.length);
      for (let j = 0; j < N; j++) {
        const w = s.V[j * N + i];
        if (w === 0) continue;
        centred(j, y, fr[j], m, o);
        for (let p = 0; p < P.length; p++) P[p] += w * y[p];
      }
      return P;
    };
    const frameSamples = frames.map((f) => sampleOf(f, geometry.sample));
    const meanSample = sampleOf(mean, geometry.sample);
    const onesSample = sampleOf(ones.coeffs, geometry.sample);
    const full: Float64Array[] = [];
    const sampled: Float64Array[] = [];
    const rankLimit = Math.min(maxRank, N);
    const check = (i: number) => {
      if (!(Number.isInteger(i) && i >= 0 && i < rankLimit))
        throw new RangeError(`eigen-frame ${i} of ${rankLimit}`);
    };
    return {
      frames,
      mean,
      ones: ones.coeffs,
      svd: s,
      maxRank: rankLimit,
      frameSamples,
      meanSample,
      onesSample,
      basis(i) {
        check(i);
        full[i] ??= combine(i, frames, mean, ones.coeffs);
        return full[i];
      },
      basisSample(i) {
        check(i);
        sampled[i] ??= full[i]
          ? sampleOf(full[i], geometry.sample)
          : combine(i, frameSamples, meanSample, onesSample);
        return sampled[i];
      },
    };
  });
  return { geometry, channels };
}
