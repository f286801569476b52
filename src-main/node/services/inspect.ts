/**
 * The inspect service: decode a scan and report its size, depth and singular-value spectra, with the
 * energy ranks and the Eckart–Young errors of the best rank-k approximations. Used by the CLI
 * (`rankfold inspect`), and available to IPC/HTTP handlers through the same contract types.
 *
 * Luma for colour scans: Y = 0.299 R + 0.587 G + 0.114 B (JFIF 1.02 / ITU-R BT.601 full range), on the
 * source scale and unrounded.
 */
import {
  CancelledError,
  checkInspectRequest,
  type DecodedImage,
  INSPECT_ENERGY_FRACTIONS,
  INSPECT_FULL_SPECTRUM_LIMIT,
  INSPECT_RANKS,
  INSPECT_TOP_VALUES,
  type InspectReport,
  type InspectRequest,
  type PlaneSpectrum,
  type WithWarnings,
} from '../../contract';
import {
  bytesFor,
  defaultBackend,
  initEngine,
  JACOBI_LIMIT,
  type Matrix,
  Orthonormalizer,
  Rng,
  singularValues,
} from '../../engine/linalg';
import { type RowSource, sketchSpectrum } from '../../engine/lowrank/sketch';
import { TILED_PIXELS } from '../../engine/lowrank/tiled';
import { energyRank, frobeniusOptimal, psnrFromFrobenius, spectralBound } from '../../engine/metrics';
import { decodeImage, probeImage } from '../image/decode';
import { decodeSamples } from '../image/raw-decode';

/** BT.601 / JFIF 1.02 luma weights. */
const LUMA_WEIGHTS = [0.299, 0.587, 0.114] as const;
/** Extra columns for the randomized top-value path, so the last reported values are accurate too (HMT 2011 §4.2). */
const TOP_OVERSAMPLE = 32;
/**
 * Power iterations for the top-value path (HMT Alg. 4.4). Measured on samples/ledger-page.png
 * (1600×2100) against its full spectrum: with p = 32 and q = 2 the top 100 values agree to 5e-12·σ₁;
 * values near the 512th come out a few per cent low (the end of any sketch converges last).
 */
const TOP_POWER_ITERS = 2;
/** Colour channels (R, G, B) get the full spectrum up to this short side, else their top values only. */
const CHANNEL_FULL_SPECTRUM_LIMIT = 1024;
/** Number of top values for colour channels above {@link CHANNEL_FULL_SPECTRUM_LIMIT}. */
const CHANNEL_TOP_VALUES = 128;

export interface SpectrumPolicy {
  /** Short sides up to this get every singular value. */
  fullLimit: number;
  /** Otherwise this many top values (randomized SVD). */
  topValues: number;
}

/** The policy for the gray/luma plane (issue text: full spectrum up to 2048 on the short side, else top 512). */
const MAIN_PLANE_POLICY: SpectrumPolicy = {
  fullLimit: INSPECT_FULL_SPECTRUM_LIMIT,
  topValues: INSPECT_TOP_VALUES,
};
const CHANNEL_POLICY: SpectrumPolicy = {
  fullLimit: CHANNEL_FULL_SPECTRUM_LIMIT,
  topValues: CHANNEL_TOP_VALUES,
};

export interface InspectOptions {
  /** Called after each stage: `done` of `total` planes. */
  onProgress?: (stage: string, done: number, total: number) => void;
  /** Abort between planes; rejects with CancelledError. */
  signal?: AbortSignal;
  /**
   * Scans above this many pixels are read as integer samples and their spectra estimated from a
   * randomized sketch read in strips ({@link sketchSpectrum}). Default {@link TILED_PIXELS}.
   */
  sketchAbove?: number;
}

/** Top values a sketched (large) gray or luma plane reports, and its sketch settings. */
const SKETCH_POLICY = { k: 64, oversample: 16, powerIters: 1 } as const;
/** The same for the colour channels of a large scan. */
const SKETCH_CHANNEL_POLICY = { k: 16, oversample: 8, powerIters: 1 } as const;

/** BT.601 luma of three planes, unrounded, as Float32Array. */
export function lumaPlane(r: ArrayLike<number>, g: ArrayLike<number>, b: ArrayLike<number>): Float32Array {
  const out = new Float32Array(r.length);
  const [wr, wg, wb] = LUMA_WEIGHTS;
  for (let i = 0; i < out.length; i++) out[i] = wr * r[i] + wg * g[i] + wb * b[i];
  return out;
}

/**
 * The top k singular values only, by the randomized range finder with q power iterations
 * (Halko, Martinsson & Tropp, SIAM Review 53(2), 2011, Alg. 4.4, each step re-orthonormalised),
 * then σ(B) for B = QᵀA from the engine's `singularValues`; no singular vectors are formed.
 * Everything runs in f64: on scan spectra (σ₁ from the mean dwarfs the rest) f32 CholeskyQR breaks
 * down after the first power step and falls back to Householder, which measured 2.4× slower overall
 * on samples/ledger-page.png than f64 products with CholeskyQR2 throughout. Deterministic for a seed.
 */
export function topSingularValues(
  a: Matrix,
  k: number,
  oversample: number,
  powerIters: number,
  seed = 0x5eed,
): Float64Array {
  const m = a.rows;
  const n = a.cols;
  const l = Math.min(k + oversample, Math.min(m, n));
  const mx = Math.max(m, n);
  // A, Ω, Y, Z, plus the Orthonormalizer's f64 scratch for blocks up to mx×l (mx·l + 5l²; engine qr.ts).
  const ws = defaultBackend().workspace(bytesFor(0, m * n + 2 * n * l + m * l + mx * l + 6 * l * l));
  let bt: Float64Array;
  try {
    const A = ws.f64(m * n);
    for (let i = 0; i < m * n; i++) A[i] = a.data[i];
    const Om = ws.f64(n * l);
    new Rng(seed).fillNormal(Om);
    const Y = ws.f64(m * l);
    const Z = ws.f64(n * l);
    const orth = new Orthonormalizer(ws, mx, l, false);
    // A (m×n, row-major): A·X has strides (n, 1), Aᵀ·X has strides (1, n).
    const mulA = (X: Float64Array, out: Float64Array) =>
      ws.gemm(m, l, n, A, 0, n, 1, X, 0, l, out, 0, l, false);
    const mulAt = (X: Float64Array, out: Float64Array) =>
      ws.gemm(n, l, m, A, 0, 1, n, X, 0, l, out, 0, l, false);
    mulA(Om, Y);
    orth.run(Y, m, l, undefined, powerIters === 0);
    for (let it = 0; it < powerIters; it++) {
      mulAt(Y, Z);
      orth.run(Z, n, l, undefined, false);
      mulA(Z, Y);
      orth.run(Y, m, l, undefined, it === powerIters - 1);
    }
    mulAt(Y, Z); // Bᵀ = AᵀQ, n×l
    bt = Float64Array.from(Z);
  } finally {
    ws.release();
  }
  return singularValues({ rows: n, cols: l, data: bt }).slice(0, k);
}

/**
 * Spectrum, energy ranks and Eckart–Young errors of one plane (row-major, height×width).
 * Full spectrum when the short side ≤ policy.fullLimit (default 2048), else the top policy.topValues
 * (default 512) by randomized SVD.
 */
export function planeSpectrum(
  plane: Float32Array,
  width: number,
  height: number,
  maxValue: number,
  name: PlaneSpectrum['plane'],
  policy: SpectrumPolicy = MAIN_PLANE_POLICY,
): PlaneSpectrum {
  const a = { rows: height, cols: width, data: plane };
  const short = Math.min(width, height);
  let s: Float64Array;
  let method: PlaneSpectrum['method'];
  let complete: boolean;
  if (short <= policy.fullLimit) {
    s = singularValues(a);
    method = short <= JACOBI_LIMIT ? 'jacobi' : 'gram';
    complete = true;
  } else {
    s = topSingularValues(a, Math.min(policy.topValues, short), TOP_OVERSAMPLE, TOP_POWER_ITERS);
    method = 'randomized';
    complete = false;
  }
  let energy = 0;
  for (let start = 0; start < plane.length; start += 4096) {
    let block = 0;
    const end = Math.min(plane.length, start + 4096);
    for (let i = start; i < end; i++) block += plane[i] * plane[i];
    energy += block;
  }
  return {
    plane: name,
    singularValues: Array.from(s),
    complete,
    method,
    energy,
    ...spectrumFigures(s, energy, complete, width * height, maxValue),
  };
}

/** Decode `req.file` and report what it is made of. */
export async function inspectScan(
  request: InspectRequest,
  options: InspectOptions = {},
): Promise<InspectReport> {
  const req = checkInspectRequest(request);
  const t0 = performance.now();
  const probe = await probeImage(req.file, { page: req.page, pixelLimit: req.pixelLimit });
  if (probe.width * probe.height > (options.sketchAbove ?? TILED_PIXELS))
    return inspectSketched(req, options, t0);
  const img = await decodeImage(req.file, { page: req.page, pixelLimit: req.pixelLimit });
  const t1 = performance.now();
  await initEngine();
  const maxValue = img.bitDepth === 16 ? 65535 : 255;
  const jobs: { name: PlaneSpectrum['plane']; plane: () => Float32Array; policy: SpectrumPolicy }[] =
    img.colour === 'rgb'
      ? [
          {
            name: 'luma',
            plane: () => lumaPlane(img.planes[0], img.planes[1], img.planes[2]),
            policy: MAIN_PLANE_POLICY,
          },
          { name: 'red', plane: () => img.planes[0], policy: CHANNEL_POLICY },
          { name: 'green', plane: () => img.planes[1], policy: CHANNEL_POLICY },
          { name: 'blue', plane: () => img.planes[2], policy: CHANNEL_POLICY },
        ]
      : [{ name: 'gray', plane: () => img.planes[0], policy: MAIN_PLANE_POLICY }];
  const spectra: PlaneSpectrum[] = [];
  for (const [i, job] of jobs.entries()) {
    if (options.signal?.aborted) throw new CancelledError(`inspecting ${req.file}`);
    spectra.push(planeSpectrum(job.plane(), img.width, img.height, maxValue, job.name, job.policy));
    options.onProgress?.('spectrum', i + 1, jobs.length);
    // Yield so a cancel request or progress output can get through between planes.
    await new Promise((resolve) => setImmediate(resolve));
  }
  const t2 = performance.now();
  return inspectReport(req, img, maxValue, spectra, [t0, t1, t2]);
}

/** The spectrum figures of one plane from its top values and its exact energy (shared by both paths). */
function spectrumFigures(
  s: Float64Array,
  energy: number,
  complete: boolean,
  n: number,
  maxValue: number,
): Pick<PlaneSpectrum, 'energyRanks' | 'errors'> {
  const total = complete ? undefined : energy;
  const energyRanks = INSPECT_ENERGY_FRACTIONS.map((fraction) => {
    const k = energyRank(s, fraction, total);
    return { fraction, rank: k < 0 ? null : k };
  });
  const errors = INSPECT_RANKS.filter((k) => k < s.length).map((k) => {
    const frobenius = frobeniusOptimal(s, k, total);
    const db = psnrFromFrobenius(frobenius, n, maxValue);
    return {
      k,
      spectral: spectralBound(s, k),
      frobenius,
      rms: frobenius / Math.sqrt(n),
      psnrDb: Number.isFinite(db) ? db : null,
    };
  });
  return { energyRanks, errors };
}

/**
 * inspect for a scan above `sketchAbove` pixels: integer samples (1–2 bytes each), and each plane's top
 * values from a randomized sketch read in strips of rows (HMT 2011 Alg. 4.4 with q = 1, then Alg. 5.1);
 * the energy Σa² is exact. Luma rows are formed per strip.
 */
async function inspectSketched(
  req: InspectRequest,
  options: InspectOptions,
  t0: number,
): Promise<InspectReport> {
  options.onProgress?.('decode', 0, 1);
  const img = await decodeSamples(req.file, { page: req.page, pixelLimit: req.pixelLimit });
  const t1 = performance.now();
  options.onProgress?.('decode', 1, 1);
  await initEngine();
  const { width, height } = img;
  const maxValue = img.bitDepth === 16 ? 65535 : 255;
  const plane = (p: ArrayLike<number>) => (y0: number, y1: number, out: Float64Array) => {
    const from = y0 * width;
    const len = (y1 - y0) * width;
    for (let i = 0; i < len; i++) out[i] = p[from + i];
  };
  const [wr, wg, wb] = LUMA_WEIGHTS;
  const luma = (y0: number, y1: number, out: Float64Array) => {
    const [r, g, b] = img.planes;
    const from = y0 * width;
    const len = (y1 - y0) * width;
    // As lumaPlane: Float32 luma, so the values match the whole-plane path's.
    for (let i = 0; i < len; i++)
      out[i] = Math.fround(wr * r[from + i] + wg * g[from + i] + wb * b[from + i]);
  };
  type Job = {
    name: PlaneSpectrum['plane'];
    rows: RowSource;
    policy: typeof SKETCH_POLICY | typeof SKETCH_CHANNEL_POLICY;
  };
  const jobs: Job[] =
    img.colour === 'rgb'
      ? [
          { name: 'luma', rows: luma, policy: SKETCH_POLICY },
          { name: 'red', rows: plane(img.planes[0]), policy: SKETCH_CHANNEL_POLICY },
          { name: 'green', rows: plane(img.planes[1]), policy: SKETCH_CHANNEL_POLICY },
          { name: 'blue', rows: plane(img.planes[2]), policy: SKETCH_CHANNEL_POLICY },
        ]
      : [{ name: 'gray', rows: plane(img.planes[0]), policy: SKETCH_POLICY }];
  const spectra: PlaneSpectrum[] = [];
  const strips = Math.ceil(height / 64);
  const perJob = strips * (2 * SKETCH_POLICY.powerIters + 2);
  const total = perJob * jobs.length;
  for (const [j, job] of jobs.entries()) {
    if (options.signal?.aborted) throw new CancelledError(`inspecting ${req.file}`);
    let last = 0;
    const r = sketchSpectrum(height, width, job.rows, {
      ...job.policy,
      onStrip: (done) => {
        // Throttled: the callback draws on a terminal.
        if (done - last >= 8 || done === perJob) {
          last = done;
          options.onProgress?.('spectrum', j * perJob + done, total);
        }
      },
    });
    spectra.push({
      plane: job.name,
      singularValues: Array.from(r.s),
      complete: false,
      method: 'randomized',
      sketch: {
        reference: 'Halko, Martinsson & Tropp 2011, Alg. 4.4 (range finder, power iterations) and 5.1',
        columns: r.columns,
        powerIterations: job.policy.powerIters,
        passes: r.passes,
        constantRows: r.constantRows,
      },
      energy: r.energy,
      ...spectrumFigures(r.s, r.energy, false, width * height, maxValue),
    });
    await new Promise((resolve) => setImmediate(resolve));
  }
  const t2 = performance.now();
  return inspectReport(req, img, maxValue, spectra, [t0, t1, t2]);
}

/** The report of either path (float planes or integer samples) from the decoded scan and its spectra. */
function inspectReport(
  req: InspectRequest,
  img: Omit<DecodedImage, 'planes'> & WithWarnings,
  maxValue: number,
  spectra: PlaneSpectrum[],
  [t0, t1, t2]: [number, number, number],
): InspectReport {
  return {
    file: req.file,
    format: img.meta.format,
    width: img.width,
    height: img.height,
    channels: img.channels,
    bitDepth: img.bitDepth,
    colour: img.colour,
    hasAlpha: img.hasAlpha,
    maxValue,
    pages: img.meta.pages ?? 1,
    page: img.meta.page ?? 0,
    inputBytes: img.inputBytes,
    rawBytes: img.rawBytes,
    density: img.meta.density,
    orientation: img.meta.orientation,
    hasIccProfile: Boolean(img.meta.icc),
    sourceSha256: img.sourceSha256,
    plane: spectra[0].plane === 'luma' ? 'luma' : 'gray',
    singularValues: spectra[0].singularValues,
    spectra,
    timings: { decodeMs: Math.round(t1 - t0), spectrumMs: Math.round(t2 - t1) },
    ...(img.warnings ? { warnings: img.warnings } : {}),
  };
}
