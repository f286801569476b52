/**
 * Encode one decoded scan into an .rkf file under a budget: colour transform, factorisation (whole
 * plane or tiles), rate–distortion search, entropy coding and the container. Under a byte budget with
 * `layers: 'auto'`, ./two-layer then splits the bytes between the low-rank base and a wavelet-coded residual.
 * The result is decoded again with the real reader so every figure in the report is measured on the file
 * as written.
 */
import type { Budget, DecodedImage } from '../../contract';
import { UsageError } from '../../contract/errors';
import { hinted } from '../../contract/replies';

const WHOLE_PLANE_ADVICE = ' — pass --tile 0 for a whole-image SVD';

import { type ArenaPassArgs, withArenaHelper } from '../codec/arena-split';
import { encodePlanes, RESIDUAL_MAX_PIXELS } from '../codec/image-file';
import type { QuantPlane } from '../codec/quantised';
import { rgbToYcbcr, YCBCR_ERROR_WEIGHTS } from '../colour';
import { psnrFromSse, psnrPlanes, ssimPlanes } from '../metrics';
import { AUTO_PROBE_PIXELS, centredCrop } from './centred-crop';
import { decodeImageFile } from './decode-image';
import { budgetBytes, type EncodeOptions, type EncodeResult, type LayerSummary } from './encode-options';
import { errorFigures } from './error-figures';
import { factorPlane, type PlaneFactors } from './factorise';
import { solveFloor, truncationError } from './floor-solve';
import { fittingFactors } from './given-factors';
import { imageWriter } from './image-writer';
import { chooseExact } from './lossless-choice';
import { startPlaneEnergy } from './plane-energy';
import { decodedSse, finishScan, maxOf, measuredSse, type Prepared, residualFirstFor } from './scan-finish';
import { floatScan, type ScanImage } from './scan-image';
import { type Plan, type PlaneInput, solveBytes, solveRank } from './solve';
import { chooseLayers, emptyBase, type LayerPlan } from './two-layer';

/** Tile sides `--tile auto` tries. */
const AUTO_TILES = [32, 64, 128] as const;
/** Relative quantisation loss allowed at a fixed rank: 2.3% of the truncation error ≈ 0.1 dB. */
const RANK_QUANT_LOSS = 0.023;
/** Per-sample quantisation MSE floor at a fixed rank (grey levels² on the 8-bit scale). */
const RANK_QUANT_FLOOR_MSE = 0.01;

function prepare(img: ScanImage): Prepared {
  const colour = img.channels >= 3;
  if (colour) {
    const ycc = rgbToYcbcr(img.planes[0], img.planes[1], img.planes[2], img.bitDepth);
    return { names: ['Y', 'Cb', 'Cr'], planes: ycc, weights: [...YCBCR_ERROR_WEIGHTS], colour };
  }
  return { names: ['gray'], planes: [img.planes[0]], weights: [1], colour };
}

export function encodeScan(img: ScanImage, opts: EncodeOptions): EncodeResult {
  const side = opts.side;
  // The plane arenas' passes use the side thread too (../codec/arena-split).
  const arenaSide = side && ((a: ArenaPassArgs) => side('arena-pass', a));
  return withArenaHelper(arenaSide, () => chooseExact(img, opts, encodeLossy));
}

/** {@link encodeScan}'s lossy file: low-rank base, with a residual layer where that wins. */
function encodeLossy(scan: ScanImage, opts: EncodeOptions): EncodeResult {
  const now = opts.now ?? Date.now;
  const progress = opts.onProgress ?? (() => {});
  const cancel = opts.checkCancelled ?? (() => {});
  const entropy = opts.entropy ?? 'rc';
  const max = maxOf(scan.bitDepth);
  const { width, height } = scan;
  const scanPrep = prepare(scan);
  const build = imageWriter(scan, opts, scanPrep.names);
  const meanStep = max / 1020;
  const byteBudget = budgetBytes(opts.budget, scan);
  const t0 = now();
  const first = residualFirstFor(scan, opts, scanPrep, max, byteBudget, build, cancel);
  if (first) {
    const img = scan;
    const prep = scanPrep;
    // Rank 0: the Eckart–Young optimum is the whole energy, which is the base error; σ₁ was not computed.
    // Summed on the second thread while this one measures the file (./plane-energy).
    const energy = startPlaneEnergy(prep.planes, prep.weights, opts.side);
    let finished: ReturnType<typeof finishScan>;
    try {
      finished = finishScan(
        img,
        prep,
        entropy,
        opts,
        build,
        first.basePlanes,
        first.residual,
        first.file,
        first.decoded,
      );
    } catch (err) {
      energy();
      throw err;
    }
    const { frobenius: _f, baseBytes: _b, ...r } = finished;
    const e = energy();
    const errors = { frobenius: Math.sqrt(e), frobeniusOptimal: Math.sqrt(e), spectralBound: Number.NaN };
    progress('done', 1);
    return { ...r, errors, factorMs: 0, encodeMs: now() - t0, layers: first.layers };
  }
  // Every other path computes on float planes (../scan-image: the same values as the decoder's integers).
  const img = floatScan(scan);
  const prep = img === scan ? scanPrep : prepare(img);
  const probed =
    opts.tile === 'auto' && opts.budget.kind !== 'rank' ? probeTile(img, opts, byteBudget) : undefined;
  const tiles: number[] =
    probed !== undefined
      ? [probed]
      : opts.tile === 'auto'
        ? opts.budget.kind === 'rank'
          ? [0]
          : AUTO_TILES.filter((t) => t < Math.max(width, height) || t === AUTO_TILES[0])
        : [opts.tile];
  for (const t of tiles)
    if (t !== 0 && Math.min(width, height) < 8)
      throw new UsageError(
        `${img.file}: image is ${width}×${height} pixels; tiles need at least 8×8${WHOLE_PLANE_ADVICE}`,
        hinted('whole-plane', WHOLE_PLANE_ADVICE),
      );

  const measure = (planes: QuantPlane[]) => {
    cancel();
    return build(planes).length;
  };

  const twoLayer =
    opts.layers === 'auto' &&
    byteBudget !== undefined &&
    (opts.budget.kind === 'bytes' || opts.budget.kind === 'bpp' || opts.budget.kind === 'percent') &&
    width * height <= RESIDUAL_MAX_PIXELS;
  let tooSmall: UsageError | undefined;
  let factorMs = 0;
  let encodeMs = 0;
  let best: { plan: Plan; inputs: PlaneInput[]; factors: PlaneFactors[]; size: number } | undefined;
  const total = tiles.length;
  for (let ti = 0; ti < tiles.length; ti++) {
    const tile = tiles[ti];
    const t0 = now();
    progress('factor', ti / total);
    const given = tile === 0 ? fittingFactors(opts.factors, prep.planes.length, width, height) : undefined;
    const factors =
      given ??
      prep.planes.map((p) => {
        cancel();
        return factorPlane(p, width, height, {
          tile,
          meanRemoval: tile !== 0,
          meanStep,
          maxRank: tile === 0 ? wholePlaneRank(opts.budget, byteBudget, width, height) : undefined,
        });
      });
    const inputs: PlaneInput[] = factors.map((f, k) => ({
      factors: f,
      weight: prep.weights[k],
      stepScale: Math.sqrt(prep.weights[0] / prep.weights[k]),
    }));
    const t1 = now();
    factorMs += t1 - t0;
    progress('allocate', (ti + 0.5) / total);
    let plan: Plan;
    try {
      plan = solveFor(inputs, opts.budget, byteBudget, max, measure, img, prep, build, (stage, f) =>
        progress(stage, (ti + 0.5 + 0.45 * f) / total),
      );
    } catch (err) {
      // Below the smallest base-only file (tile means, rank codes): a residual-only file may still fit.
      if (!(twoLayer && err instanceof UsageError && /smallest possible file/.test(err.message))) throw err;
      tooSmall = err;
      plan = {
        planes: inputs.map((i) => emptyBase(i.factors.width, i.factors.height)),
        delta: 1,
        bytes: 0,
        estimatedError: Number.POSITIVE_INFINITY,
      };
    }
    const size = plan.bytes || measure(plan.planes);
    encodeMs += now() - t1;
    const better =
      !best ||
      (byteBudget !== undefined || opts.budget.kind === 'rank'
        ? plan.estimatedError < best.plan.estimatedError
        : size < best.size);
    if (better) best = { plan, inputs, factors, size };
  }
  if (!best) throw new RangeError('no tile size to try');
  const t2 = now();
  let layered: LayerPlan | undefined;
  if (twoLayer && byteBudget !== undefined) {
    progress('layers', 0.8);
    const chosen = best;
    layered = chooseLayers({
      planes: prep.planes,
      width,
      height,
      weights: prep.weights,
      inputs: chosen.inputs,
      basePlan: chosen.plan,
      budget: byteBudget,
      build: (planes, residual) => build(planes, false, residual),
      baseBytes: (planes) =>
        encodePlanes(planes, entropy, opts.compressors).reduce((s, b) => s + b.length, 0),
      cancel,
    });
    if (layered.chosen.fileBytes > byteBudget && tooSmall) throw tooSmall;
  }
  const basePlanes = layered ? layered.basePlanes : best.plan.planes;
  const residual = layered?.residual;
  progress('write', 0.95);
  // A quality floor's plan carries the file it confirmed (and its decode): not written or decoded again.
  const confirmed = layered ? undefined : best.plan;
  const { frobenius, baseBytes, ...r } = finishScan(
    img,
    prep,
    entropy,
    opts,
    build,
    basePlanes,
    residual,
    confirmed?.file,
    confirmed?.decoded,
  );
  encodeMs += now() - t2;
  const errors = errorFigures(best.factors, r.ranks, prep, frobenius, basePlanes[0].tile, layered);
  const layers: LayerSummary = {
    baseBytes,
    residualBytes: residual ? residual.bytes.reduce((s, b) => s + b.length, 0) : 0,
    residualSteps: basePlanes.map((_, k) => residual?.steps[k] ?? null),
    chosen: layered?.chosen.kind ?? 'base-only',
    candidates: layered?.candidates ?? [],
    residualEncodes: layered?.residualEncodes ?? 0,
  };
  progress('done', 1);
  return { ...r, errors, factorMs, encodeMs, layers };
}

/** For large scans: pick the auto tile size on a centred crop at the same bits per pixel or floor. */
function probeTile(
  img: DecodedImage,
  opts: EncodeOptions,
  byteBudget: number | undefined,
): number | undefined {
  const { width, height } = img;
  if (width * height <= AUTO_PROBE_PIXELS * 1.5) return undefined;
  const crop = centredCrop(img);
  const budget: Budget =
    byteBudget !== undefined ? { kind: 'bpp', bpp: (8 * byteBudget) / (width * height) } : opts.budget;
  const r = encodeLossy(crop, { ...opts, budget, onProgress: undefined, layers: 'base' });
  return r.ranks[0]?.tile;
}

/** Components a whole-plane SVD needs for a budget (generous: ~1 bit per stored entry). */
function wholePlaneRank(b: Budget, bytes: number | undefined, width: number, height: number): number {
  const side = Math.min(width, height);
  if (b.kind === 'rank') return Math.min(side, b.rank);
  if (bytes !== undefined) return Math.min(side, Math.ceil((8 * bytes) / (width + height)) + 16);
  return Math.min(side, Math.max(64, Math.ceil(side / 3)));
}

function solveFor(
  inputs: PlaneInput[],
  budget: Budget,
  byteBudget: number | undefined,
  max: number,
  measure: (p: QuantPlane[]) => number,
  img: DecodedImage,
  prep: Prepared,
  build: (p: QuantPlane[]) => Uint8Array,
  progress: (stage: string, fraction: number) => void,
): Plan {
  if (budget.kind === 'rank') {
    let loss = RANK_QUANT_LOSS;
    let floor = RANK_QUANT_FLOOR_MSE;
    let plan = solveRank(inputs, budget.rank, max, loss, floor);
    const fullRank = inputs.every((i) =>
      i.factors.tiles.every((t) => budget.rank >= Math.min(t.rect.w, t.rect.h)),
    );
    // Verify on the decoded file: the quantiser may not cost more than ~0.25 dB over the rank-K optimum.
    // At full rank, refine the step until the file decodes to the source exactly (lossless), if it can.
    for (let i = 0; i < (fullRank ? 8 : 3); i++) {
      const measured = measuredSse(build(plan.planes), img, prep);
      if (fullRank ? measured === 0 : measured <= plan.estimatedError * 1.06 + 1e-9) break;
      loss /= 4;
      floor /= 4;
      plan = solveRank(inputs, budget.rank, max, loss, floor);
    }
    return plan;
  }
  if (byteBudget !== undefined) {
    try {
      return solveBytes(inputs, byteBudget, max, measure);
    } catch (err) {
      const m = /minimum size (\d+)/.exec((err as Error).message);
      if (m)
        throw new UsageError(
          `${img.file}: a budget of ${byteBudget} bytes is below the smallest possible file for this image (${m[1]} bytes: header, tile means${prep.colour ? ', three planes' : ''}${img.hasAlpha ? ', lossless alpha' : ''}); raise the budget or use a larger --tile`,
        );
      throw err;
    }
  }
  const nc = prep.colour ? 3 : 1;
  const count = img.width * img.height * nc;
  const meets = (bytes: Uint8Array) => {
    const d = decodeImageFile(bytes, img.file);
    const src = img.planes.slice(0, nc);
    const out = d.samples.slice(0, nc);
    if (budget.kind === 'psnr') return psnrPlanes(src, out, max) >= budget.db;
    return ssimPlanes(src, out, img.width, img.height, max) >= (budget as { value: number }).value;
  };
  if (budget.kind === 'psnr') {
    const target = count * max * max * 10 ** (-budget.db / 10);
    const words = `floor ${budget.db} dB`;
    const found = solveFloor(
      inputs,
      target,
      max,
      count,
      (planes) => {
        const file = build(planes);
        const decoded = decodeImageFile(file, img.file);
        const sse = decodedSse(decoded, img, prep);
        return { file, decoded, sse, ok: psnrFromSse(sse, count, max) >= budget.db };
      },
      (stage, f) =>
        stage === 'check'
          ? progress('measure', 0.6 + 0.4 * f)
          : progress(words, (stage === 'model' ? 0 : 0.1) + 0.5 * f),
    );
    if (found) return found;
    // Past the factors' own reach, the full-rank fallback below cannot help: say so at once.
    if (truncationError(inputs) > target * TRUNCATION_MARGIN) throw floorOutOfReach(img, budget.db, inputs);
    const plan = solveRank(inputs, Math.max(img.width, img.height), max, 0, 0.0005);
    if (!meets(build(plan.planes)))
      throw new UsageError(
        `${img.file}: PSNR ${budget.db} dB cannot be reached by this codec for this image`,
      );
    return plan;
  }
  if (budget.kind === 'ssim') {
    if (img.width < 11 || img.height < 11)
      throw new UsageError(`${img.file}: SSIM needs at least 11×11 pixels (Wang et al. 2004 window)`);
    let lo = measure(inputs.map((i) => emptyPlane(i)));
    let hi = img.rawBytes + lo;
    let found: Plan | undefined;
    for (let i = 0; i < 10 && hi - lo > Math.max(16, hi * 0.02); i++) {
      const mid = Math.floor(Math.sqrt(lo * hi));
      const plan = solveBytes(inputs, mid, max, measure);
      const bytes = build(plan.planes);
      if (meets(bytes)) {
        hi = Math.min(mid, bytes.length);
        if (!found || bytes.length < found.bytes) found = { ...plan, bytes: bytes.length };
      } else lo = mid;
    }
    if (!found) {
      const plan = solveRank(inputs, Math.max(img.width, img.height), max, 0, 0.0005);
      if (!meets(build(plan.planes)))
        throw new UsageError(
          `${img.file}: SSIM ${budget.value} cannot be reached by this codec for this image`,
        );
      found = plan;
    }
    return found;
  }
  throw new UsageError(`unknown budget kind ${(budget as { kind: string }).kind}`);
}

/** Rounding and clamping can take the decoded error a little below the factors' truncation error. */
const TRUNCATION_MARGIN = 1.05;

/** The quality floor is beyond what the factors at hand can reach (a whole plane keeps a capped rank). */
function floorOutOfReach(img: DecodedImage, db: number, inputs: PlaneInput[]): UsageError {
  const whole = inputs[0].factors.tile === 0;
  const kept = inputs[0].factors.tiles[0]?.s.length ?? 0;
  return new UsageError(
    whole
      ? `${img.file}: PSNR ${db} dB cannot be reached with the ${kept} components a whole-plane factorisation keeps; use tiles (--tile auto)`
      : `${img.file}: PSNR ${db} dB cannot be reached by this codec for this image`,
  );
}

function emptyPlane(inp: PlaneInput): QuantPlane {
  const f = inp.factors;
  return {
    width: f.width,
    height: f.height,
    tile: f.tile,
    step: 1,
    meanStep: f.meanStep,
    tiles: f.tiles.map((t) => ({ meanQ: t.meanQ, u: [], v: [] })),
  };
}
