/**
 * The stack layout's writer (stack version 3, container 1.4; see ./stack-codec for the model and the
 * chunks): one real encode of a series at step Δ with a given number of eigen-frames per channel.
 *
 * Everything is done on the transformed frames of ./stack-analysis: the mean frame and the eigen-frames are
 * quantised and coded with coefficient coder 2; the per-frame weights [d_j, c_j] are refitted by least
 * squares against the *dequantised* planes (inner products weighted by the bands' synthesis gains, which
 * approximate the pixel-domain ones) and stored as float32; then frame j's residual coefficients
 * W(F_j) − Ŵ(μ) − d_j·W(1) − Σ c_ji·Ŵ(P_i) are coded where the squared error they remove is at least λ per
 * byte. No plane is transformed again. The decoded frames (inverse transforms, exactly as a reader
 * rebuilds them) are formed only when asked for, so a trial that only needs bytes costs no inverse transform.
 */
import { solveSpdRidge } from '../linalg';
import { encodeCompactHeader } from './compact-header';
import { type Chunk, writeContainer } from './container';
import { asAnalysed, type ChannelAnalysis, type StackAnalysis } from './stack-analysis';
import {
  chunkId,
  type EncodedStack,
  f32be,
  frameHashes,
  type PreparedStack,
  STACK_CONTAINER_MINOR,
  STACK_VERSION,
  type StackByteSplit,
  type StackHeader,
  serialHeader,
} from './stack-header';
import { LAMBDA_PER_BYTE } from './stack-plan';
import { frameRebuilder } from './stack-quality';
import { type CodedCoefficients, codeAnalysed, reconstructCoded } from './wavelet-plane';

/** What a real encode is asked for. */
export interface EncodePlan {
  step: number;
  /** Eigen-frames per coded channel. */
  ranks: number[];
  /** Code per-frame residuals where they pay. */
  residuals: boolean;
  /** Per channel, the frames whose residual is tried (default: every frame). */
  tryResidual?: boolean[][];
}

/** sign(q)·(|q| + δ)·Δ_b of coefficient i, the coder-2 reconstruction of ./wavelet-plane (0 for q = 0). */
function recon(c: CodedCoefficients, i: number, map: Uint8Array): number {
  const v = c.q[i];
  if (v === 0) return 0;
  const b = map[i];
  const d = (c.offsets as Float64Array)[2 * b + (v === 1 || v === -1 ? 0 : 1)];
  return (v < 0 ? v - d : v + d) * c.steps[b];
}

/** The dequantised coefficients of a coded plane, in the transform domain. */
function dequantised(c: CodedCoefficients, map: Uint8Array): Float64Array {
  const out = new Float64Array(c.q.length);
  for (let i = 0; i < out.length; i++) out[i] = recon(c, i, map);
  return out;
}

/** A residual the encoder coded: its coefficients and the pixel-domain squared error it removes (estimated). */
interface ResidualTrial {
  code: CodedCoefficients;
  gain: number;
}

/** Σ g·(r² − (r − r̂)²) over the coded coefficients (a zero coefficient removes nothing). */
function removedError(R: Float64Array, c: CodedCoefficients, map: Uint8Array, gain: Float64Array): number {
  let s = 0;
  for (let i = 0; i < R.length; i++) {
    if (c.q[i] === 0) continue;
    const e = R[i] - recon(c, i, map);
    s += gain[i] * (R[i] * R[i] - e * e);
  }
  return s;
}

interface ChannelCode {
  mean: CodedCoefficients;
  basis: CodedCoefficients[];
  coef: Float32Array;
  /** Every frame's residual as coded, or undefined where it was not tried (or codes to nothing). */
  residuals: Array<ResidualTrial | undefined>;
}

/** Every plane of one real encode, before the residuals to keep are chosen. */
export interface CodedStack {
  step: number;
  channels: ChannelCode[];
}

/** Weighted least squares of every frame on [W(1), Ŵ(P_0) … Ŵ(P_{k−1})] against W(F_j) − Ŵ(μ). */
function refit(ch: ChannelAnalysis, gain: Float64Array, deqMean: Float64Array, deqBasis: Float64Array[]) {
  const N = ch.frames.length;
  const cols = [ch.ones, ...deqBasis];
  const m = cols.length;
  const n = gain.length;
  const G = new Float64Array(m * m);
  const wcols = cols.map((c) => {
    const w = new Float64Array(n);
    for (let p = 0; p < n; p++) w[p] = c[p] * gain[p];
    return w;
  });
  for (let a = 0; a < m; a++)
    for (let b = a; b < m; b++) {
      let s = 0;
      const x = wcols[a];
      const y = cols[b];
      for (let p = 0; p < n; p++) s += x[p] * y[p];
      G[a * m + b] = G[b * m + a] = s;
    }
  const coef = new Float32Array(N * m);
  const rhs = new Float64Array(m);
  for (let j = 0; j < N; j++) {
    const F = ch.frames[j];
    rhs.fill(0);
    for (let a = 0; a < m; a++) {
      const x = wcols[a];
      let s = 0;
      for (let p = 0; p < n; p++) s += x[p] * (F[p] - deqMean[p]);
      rhs[a] = s;
    }
    coef.set(solveSpdRidge(G, rhs, m), j * m);
  }
  return coef;
}

function encodeChannel(an: StackAnalysis, c: number, plan: EncodePlan): ChannelCode {
  const g = an.geometry;
  const ch = an.channels[c];
  const N = ch.frames.length;
  const { step } = plan;
  const mean = codeAnalysed(asAnalysed(g, ch.mean), step / Math.sqrt(N), 2);
  const deqMean = dequantised(mean, g.map);
  const basis: CodedCoefficients[] = [];
  const deqBasis: Float64Array[] = [];
  for (let i = 0; i < plan.ranks[c]; i++) {
    const code = codeAnalysed(asAnalysed(g, ch.basis(i)), step, 2);
    basis.push(code);
    deqBasis.push(dequantised(code, g.map));
  }
  const coef = refit(ch, g.gain, deqMean, deqBasis);
  const m = deqBasis.length + 1;
  const residuals: Array<ResidualTrial | undefined> = [];
  const n = g.gain.length;
  const R = new Float64Array(n);
  for (let j = 0; j < N; j++) {
    if (!plan.residuals || plan.tryResidual?.[c][j] === false) {
      residuals.push(undefined);
      continue;
    }
    const F = ch.frames[j];
    const row = coef.subarray(j * m, (j + 1) * m);
    const d0 = row[0];
    for (let p = 0; p < n; p++) R[p] = F[p] - deqMean[p] - d0 * ch.ones[p];
    for (let i = 0; i < deqBasis.length; i++) {
      const w = row[i + 1];
      const P = deqBasis[i];
      for (let p = 0; p < n; p++) R[p] -= w * P[p];
    }
    // codeAnalysed reads R and keeps only its quantised copy, so R is reused for the next frame.
    const code = codeAnalysed(asAnalysed(g, R), step, 2);
    if (code.nonZero === 0) {
      residuals.push(undefined);
      continue;
    }
    residuals.push({ code, gain: removedError(R, code, g.map, g.gain) });
  }
  return { mean, basis, coef, residuals };
}

/** The header of a stack-version-3 file; `residual[j][c]` says whether frame j has a residual in channel c. */
function stackHeader(prep: PreparedStack, step: number, ranks: number[], residual: boolean[][]): StackHeader {
  const { input, svd } = prep;
  return {
    format: 'rankfold',
    layout: 'stack',
    stackVersion: STACK_VERSION,
    width: input.width,
    height: input.height,
    bitDepth: input.bitDepth,
    channels: input.channels,
    colour: input.channels === 3 ? 'ycbcr' : 'gray',
    frameCount: input.frames.length,
    model: 'frame-svd',
    planeCoder: 'cdf97-rc',
    step,
    ranks,
    spectrum: svd.map((s) => Array.from(s.sigma, (v) => Number(v.toPrecision(4)))),
    frameTable: input.frames.map((f, j) => ({
      name: f.name,
      sourceSha256: f.sourceSha256,
      residual: residual[j],
    })),
    meta: input.meta,
  };
}

/** Compact framing: 12-byte preamble, 4-byte CRC, and about 8 bytes of chunk header per chunk. */
const FRAMING = { file: 16, chunk: 8 };

/**
 * Predicted bytes of everything but the coded planes and coefficients (HEAD, SHSH, SQAL, framing) for a
 * file of `chunks` chunks; the header's size hardly depends on the step, the ranks and the residual masks.
 */
export function fixedBytesFor(prep: PreparedStack): (chunks: number) => number {
  const N = prep.input.frames.length;
  const coded = prep.input.channels === 3 ? 3 : 1;
  const h = stackHeader(
    prep,
    1 / 3,
    new Array(coded).fill(0),
    prep.input.frames.map(() => new Array(coded).fill(false)),
  );
  const head = encodeCompactHeader(serialHeader(h)).length + 40 * N;
  return (chunks) => head + FRAMING.file + FRAMING.chunk * chunks;
}

/**
 * Code every plane of a plan (the residuals of the frames it tries included, kept or not).
 * @example const coded = codePlanned(prep, { step: 4, ranks: [2], residuals: true });
 */
function codePlanned(prep: PreparedStack, plan: EncodePlan): CodedStack {
  const { step } = plan;
  if (!(step > 0 && Number.isFinite(step)))
    throw new RangeError(`stack quantiser step must be > 0, got ${step}`);
  const an = prep.analysis();
  return { step, channels: an.channels.map((_, c) => encodeChannel(an, c, plan)) };
}

/** The residuals a file keeps by default: those removing at least λ squared error per byte. */
export function paying(coded: CodedStack): boolean[][] {
  const lambda = LAMBDA_PER_BYTE * coded.step * coded.step;
  return coded.channels.map((ch) =>
    ch.residuals.map((r) => r !== undefined && r.gain >= lambda * r.code.bytes.length),
  );
}

/**
 * Encode a prepared series with a given plan.
 * @example const e = encodePlanned(prep, { step: 4, ranks: [2], residuals: true }); e.bytes // the .rkf file
 */
export function encodePlanned(prep: PreparedStack, plan: EncodePlan): EncodedStack {
  const coded = codePlanned(prep, plan);
  return assemble(prep, coded, paying(coded));
}

/**
 * The file of a coded series keeping the residuals `keep[c][j]` (each must have been coded). Choosing
 * another set of residuals needs no coding: the other chunks do not depend on it.
 */
export function assemble(prep: PreparedStack, coded: CodedStack, keep: boolean[][]): EncodedStack {
  const { input } = prep;
  const g = prep.analysis().geometry;
  const N = input.frames.length;
  const { step } = coded;
  const split: StackByteSplit = { header: 0, mean: 0, basis: 0, coefficients: 0, residuals: 0, container: 0 };
  const body: Chunk[] = [];
  const codes = coded.channels.map((ch, c) => ({
    ...ch,
    residuals: ch.residuals.map((r, j) => (keep[c][j] ? r?.code : undefined)),
  }));
  codes.forEach((code, c) => {
    body.push({ type: 'SMEA', id: c, payload: code.mean.bytes });
    split.mean += code.mean.bytes.length;
    code.basis.forEach((b, i) => {
      body.push({ type: 'SBAS', id: chunkId(c, i), payload: b.bytes });
      split.basis += b.bytes.length;
    });
    const cof = f32be(code.coef);
    body.push({ type: 'SCOF', id: c, payload: cof });
    split.coefficients += cof.length;
    code.residuals.forEach((r, j) => {
      if (!r) return;
      body.push({ type: 'SRES', id: chunkId(c, j), payload: r.bytes });
      split.residuals += r.bytes.length;
    });
  });
  const header = stackHeader(
    prep,
    step,
    codes.map((c) => c.basis.length),
    input.frames.map((_, j) => codes.map((c) => c.residuals[j] !== undefined)),
  );
  const head = encodeCompactHeader(serialHeader(header));
  const hashes = frameHashes(header.frameTable);
  // Frame quality is measured on the decoded frames once the rate control has chosen this encode
  // (recordFrameQuality); until then the chunk holds NaN, "not recorded", at its final size.
  const quality = f32be(new Float32Array(2 * N).fill(Number.NaN));
  const chunks: Chunk[] = [
    { type: 'HEAD', id: 0, payload: head },
    { type: 'SHSH', id: 0, payload: hashes },
    { type: 'SQAL', id: 0, payload: quality },
    ...body,
  ];
  split.header = head.length + hashes.length + quality.length;
  const bytes = writeContainer(chunks, STACK_CONTAINER_MINOR);
  split.container =
    bytes.length - split.header - split.mean - split.basis - split.coefficients - split.residuals;
  let frameOf: ((j: number) => Float32Array[]) | undefined;
  const rebuilder = () => {
    if (!frameOf) {
      const a = asAnalysed(g, new Float64Array(0));
      frameOf = frameRebuilder(
        prep,
        codes.map((code) => ({
          mean: reconstructCoded(a, code.mean),
          basis: code.basis.map((b) => reconstructCoded(a, b)),
          coef: code.coef,
          residual: (j: number) => {
            const r = code.residuals[j];
            return r && reconstructCoded(a, r);
          },
        })),
      );
    }
    return frameOf;
  };
  let decoded: Float32Array[][] | undefined;
  return {
    bytes,
    header,
    split,
    chunks,
    coded,
    frameOf: rebuilder,
    get decoded() {
      const at = rebuilder();
      decoded ??= Array.from({ length: N }, (_, j) => at(j).map((p) => p.slice()));
      return decoded;
    },
  };
}
