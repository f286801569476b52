/**
 * The residual-only shortcut of the two-layer file for large scans: decide from statistics whether a low-rank
 * base is worth factoring at all, and when it is not, code the scan as a residual layer alone (rank 0) without
 * factoring the whole plane, with at most {@link MAX_CODES} real encodes of the whole file.
 *
 * Decision (a prediction, not a trial of the whole file): on a centred crop of {@link CROP_SIDE}² pixels at the
 * same bits per pixel (or, under a PSNR floor, at the bytes the wavelet needs there for the floor),
 * - the wavelet coder's squared error at those bytes: its rate model (estimateBits, calibrated by ≤ 3 real
 *   encodes of the small crop) and the exact transform-domain error of the coded crop;
 * - the base layer's estimated squared error at the same bytes: tiles of {@link CROP_TILES} factored on the
 *   crop, and the coarse step scan of the rate–distortion search (prefix energies of the quantised components
 *   against their cost-model bits; estimate only, ratio 1, tile means and headers not charged, so the
 *   estimate favours the base).
 * The base is skipped when the wavelet's error is below {@link MARGIN} times the base's. Equal-slope
 * reasoning (Shoham & Gersho, IEEE Trans. ASSP 36(9):1445–1453, 1988): a base component is only worth its
 * bits on top of the residual if it removes more error per bit than the wavelet does at the budget; when the
 * base alone is clearly worse at every byte count near the budget, a mixed split was not chosen by the full
 * search on any of our test images (mixed won only where the two were within 6%; measured on the fixtures
 * camera, moon, page, text and phantom at 0.1–1 bpp with the full search of ./two-layer).
 */
import type { Budget } from '../../contract';
import type { QuantPlane } from '../codec/quantised';
import {
  type AnalysedPlane,
  analysePlane,
  estimateBits,
  estimateSquaredError,
  prepareEstimates,
  releaseAnalysed,
} from '../codec/wavelet-plane';
import { psnrFromSse } from '../metrics';
import type { CropFit } from './crop-fit';
import type { LayerSummary } from './encode-options';
import { codeAll, cropPlanes, floorSse, spreadRatio, stepForError, stepScales } from './floor-aim';
import { fitResidual, type ResidualBytes, residualTarget } from './residual-fit';
import { planesCoder } from './side-coder';
import { runHere, type SideRunner } from './side-jobs';
import { emptyBase } from './two-layer';

/** Side of the centred crop the decision is taken on. */
const CROP_SIDE = 512;
/** Tile sides of the base estimate on the crop. */
const CROP_TILES = [32, 64] as const;
/**
 * Skip the base when the wavelet's predicted error is below this share of the base's: under a byte budget,
 * and under a PSNR floor. Byte budgets: it was 0.8, which sent scans at crop ratios 0.80–0.84 to the full
 * two-layer search at 13–16× the CPU (moon upscaled to 7.8 MP at 0.4 and 0.5 bpp: 36–37 s user against 2.3 s,
 * 12–13 residual encodes). On eight 7.8–8.1-megapixel cases at crop ratios 0.75–0.84 (moon and phantom
 * upscaled, with noise, 0.25–0.6 bpp) the full search kept residual only every time, its best base or mixed
 * split 2–5% worse in squared error with no trend towards the base as the ratio grew; its residual only was
 * 0.9–2.5% larger than the shortcut's (it lands closer to the budget) for +0.02–0.06 dB. Where a base pays
 * (ruled patches on the moon scan: crop ratio 4.6) its mixed split is 3.3 dB over residual only at equal
 * bytes. Floors stay at 0.8: the moon scan at 34 dB (crop ratio 0.97) is 1813 bytes base only and 3440
 * residual only. The full search's own cost is unchanged (./two-layer), so a scan just above the margin
 * still costs ~15× one just below it.
 */
const MARGIN = { bytes: 0.85, floor: 0.8 } as const;
/** Most real encodes of the whole residual layer under a PSNR floor. */
const MAX_CODES = 3;
/**
 * Landing of the whole file's residual: stop at ≥ 97% of the byte target, every encode aimed at 99% (the crop's
 * calibration is a few per cent off, more at 0.1 bpp; the second encode is aimed from the first with the rate
 * model's elasticity corrected by 1.2, see ./residual-fit, and lands at 96–100%), error measured on the
 * kept encode only. Five 7–9-megapixel grey scans (the single-scan speed scan; camera, moon, page and text
 * Lanczos-3 upscaled with σ 1.5 noise) at 0.1/0.25/0.5/1 bpp, 19 cases on this path: 31 real encodes in all,
 * 8 cases in one (stopping at 98%: 35 encodes, 5 cases in one); the four cases that now stop at 97.6–97.8% are 0.01–0.05 dB
 * under the 98% stop's second encode, with 1.1–1.9% fewer bytes. The first encode landed at 78–100% of the
 * target: neither the crop (centre, or five crops), a strip sample of a quarter of the whole transform coded
 * for real, nor a context-conditioned entropy of the whole predicted the whole scan's bytes to better than
 * ±3%, so a single encode cannot be promised.
 */
const LANDING = { close: 0.97, aim: 0.99, lazy: true, elasticity: 1.2 } as const;

export interface ResidualFirstInput {
  /** The coded planes (gray, or Y, Cb, Cr) and each one's share of the reported squared error. */
  planes: ArrayLike<number>[];
  weights: number[];
  width: number;
  height: number;
  maxValue: number;
  budget: Budget;
  /** The byte budget, for byte, percent and bpp budgets. */
  byteBudget?: number;
  /**
   * Build the file; `decided`: it is the last file built and nothing reads the analysed planes' coefficients
   * afterwards (its residual check may decode over them, ./residual-check).
   */
  build: (base: QuantPlane[], residual?: ResidualBytes, decided?: boolean) => Uint8Array;
  /** Squared error (RGB or gray samples, rounded as written) of a built file against the source. */
  measuredSse: (bytes: Uint8Array) => number;
  cancel: () => void;
  /** A second thread: the base estimate on the crop then runs there while the whole planes are transformed. */
  side?: SideRunner;
}

export interface ResidualOnly {
  basePlanes: QuantPlane[];
  residual: { steps: number[]; bytes: Uint8Array[] };
  /** The complete file, when it was built and checked here. */
  file?: Uint8Array;
  layers: LayerSummary;
  /** The decision's figures on the crop (weighted squared errors at equal bytes). */
  decision: { waveletSse: number; baseSse: number; cropBytes: number };
}

/** Aim at this share of a PSNR floor's squared error (0.02 dB under it), so the decoded check passes first time. */
const FLOOR_AIM = 0.995;
/**
 * The first encode's aim, as a share of the floor's squared error, over the five crops' ratio (./floor-aim
 * spreadRatio): that ratio was 0.1–2.5% above the whole scan's on the 24 cases of {@link RECODE_WORTH}, so
 * aiming at the floor itself lands 0–0.1 dB over it (simulated from 17 real encodes per case: 0.95–1.01 tried).
 */
const SPREAD_AIM = 1;
/**
 * A decoded file that meets its PSNR floor is kept unless one more encode, aimed by its measured error, is
 * predicted to save at least this share of its bytes ({@link recodeSaving}). The trade: one more real encode
 * and decoded check costs about a third of the run (~0.5 s and ~35 k page faults on an 8-megapixel scan), so
 * a file up to ~4% larger than the floor needs is kept. Five 7–9-megapixel grey scans (the single-scan speed
 * scan; camera, moon, page and text Lanczos-3 upscaled with σ 1.5 noise) at floors 34/38/42/43.6/46 dB,
 * 24 cases on this path: 34 real encodes with the earlier rule (recode when more than 0.1 dB over the floor),
 * 30 with this one, total bytes +0.07% (the largest single file +3.1%). The saving, not the dB over the floor,
 * is what a second encode buys: 0.1 dB was 0.04% of the bytes on one case and 7% on another.
 */
const RECODE_WORTH = 0.04;
/** The rate model's log-size change scaled by this to predict the coder's (see ./residual-fit elasticStep). */
const RECODE_ELASTICITY = 1.2;
/**
 * The residual-only file when the crop predicts that a base is not worth its bytes; undefined when a base
 * may pay (the caller then runs the full two-layer search) or when the budget kind is not handled here.
 */
export function residualFirst(inp: ResidualFirstInput): ResidualOnly | undefined {
  const { planes, weights, width, height, maxValue, budget, byteBudget, cancel } = inp;
  if (byteBudget === undefined && budget.kind !== 'psnr') return undefined;
  const nc = planes.length;
  const cw = Math.min(width, CROP_SIDE);
  const ch = Math.min(height, CROP_SIDE);
  // Shared with the second thread (./floor-aim cropPlanes): its jobs read the crop, which neither thread writes,
  // without a copy.
  const crop = cropPlanes(planes, width, (width - cw) >> 1, (height - ch) >> 1, cw, ch);
  const scales = stepScales(weights);
  const startBase = (bytes: number) =>
    (inp.side ?? runHere)('crop-base-sse', {
      crop,
      width: cw,
      height: ch,
      weights,
      scales,
      bytes,
      maxValue,
      tiles: [...CROP_TILES],
    });
  let cropBytes = 0;
  let waveletSse = Number.NaN;
  let baseJob: () => number;
  let ratio = 0.8;
  let floorRatio = 1;
  let fitJob: (() => CropFit) | undefined;
  if (byteBudget !== undefined) {
    cropBytes = (byteBudget * cw * ch) / (width * height);
    // The bytes are known at once: the crop's fit starts first (on the side thread, when there is one), then
    // the base estimate (there too, after the fit, while this thread transforms the whole planes, then codes:
    // the fit is needed before the first encode, the estimate only once the residual is fitted; without a
    // second thread both run here at once, and the whole planes are analysed in the crop's released memory).
    fitJob = (inp.side ?? runHere)('crop-fit', {
      crop,
      width: cw,
      height: ch,
      weights,
      scales,
      bytes: cropBytes,
      ratio,
    });
    baseJob = startBase(cropBytes);
  } else {
    const db = (budget as { db: number }).db;
    const target = floorSse(db, cw * ch * nc, maxValue) * FLOOR_AIM;
    if (!(target > 0)) return undefined;
    // The crop coded for the floor, then the base estimate at its bytes: one job, on the side thread when
    // there is one, while this thread transforms the whole planes (./crop-fit cropFloor).
    const floorJob = (inp.side ?? runHere)('crop-floor', {
      crop,
      width: cw,
      height: ch,
      weights,
      scales,
      maxValue,
      tiles: [...CROP_TILES],
      target,
    });
    baseJob = () => {
      const r = floorJob();
      cropBytes = r[0];
      waveletSse = r[1];
      floorRatio = r[2];
      return r[3];
    };
  }
  cancel();
  // With a second thread the whole planes are transformed meanwhile (wasted only when the base may pay).
  // A byte budget's planes are rebuilt once, after the encode is decided (the PSNR floor's at every check).
  const oneRebuild = byteBudget !== undefined;
  const early = inp.side ? planes.map((p) => analysePlane(p, width, height, oneRebuild)) : undefined;
  if (fitJob) {
    const f = fitJob();
    cancel();
    if (!f.fits) {
      baseJob();
      early?.forEach(releaseAnalysed);
      return undefined;
    }
    ratio = f.ratio;
    waveletSse = f.sse;
  }
  // Under a floor the crop's job may still run on the second thread: the whole planes' estimate samples, which
  // the aim needs first, are built meanwhile.
  if (byteBudget === undefined) early?.forEach(prepareEstimates);
  let decision = { waveletSse, baseSse: Number.NaN, cropBytes };
  /** The base estimate joined: whether the crop predicts that a base is not worth its bytes. */
  const skipBase = () => {
    const baseSse = baseJob();
    decision = { waveletSse, baseSse, cropBytes };
    return waveletSse < (byteBudget !== undefined ? MARGIN.bytes : MARGIN.floor) * baseSse;
  };
  // With a second thread under a byte budget, the estimate is joined only after the residual is fitted
  // (below): this thread codes meanwhile instead of waiting for the other one to finish it.
  const later = inp.side !== undefined && byteBudget !== undefined;
  if (!later && !skipBase()) return undefined;
  cancel();
  const basePlanes = planes.map(() => emptyBase(width, height));
  // A colour scan's chroma planes are coded on the second thread while this one codes Y (./side-coder).
  const { analysed, code } = planesCoder(
    early ?? planes.map((p) => analysePlane(p, width, height, oneRebuild)),
    inp.side,
  );
  const summary = (
    residual: { steps: number[]; bytes: Uint8Array[] },
    fileBytes: number,
    sse: number,
    encodes: number,
  ) => {
    const residualBytes = residual.bytes.reduce((s, b) => s + b.length, 0);
    const chosen = {
      kind: 'residual-only' as const,
      baseComponents: 0,
      baseBytes: fileBytes - residualBytes,
      residualBytes,
      residualStep: residual.steps[0],
      fileBytes,
      sse,
    };
    return {
      basePlanes,
      residual,
      layers: {
        baseBytes: 0,
        residualBytes,
        residualSteps: residual.steps,
        chosen: chosen.kind,
        candidates: [chosen],
        residualEncodes: encodes,
      },
      decision,
    };
  };
  if (byteBudget !== undefined) {
    const target = residualTarget(inp.build, basePlanes, byteBudget);
    const fit =
      target < 8 * nc
        ? undefined
        : fitResidual(analysed, weights, scales, target, ratio, cancel, LANDING, code).fit;
    // The fit is dropped when the estimate, joined only now, says a base may pay: the same outcome as
    // deciding first, at the cost of the fit's encodes on that (rare, and ~15× costlier) path.
    if (later && !skipBase()) {
      analysed.forEach(releaseAnalysed);
      return undefined;
    }
    if (!fit) return undefined;
    const residual = { steps: fit.steps, bytes: fit.bytes };
    const file = inp.build(basePlanes, residual, true);
    if (file.length > byteBudget) return undefined;
    return { ...summary(residual, file.length, fit.sse, fit.codes), file };
  }
  // PSNR floor: aim the transform-domain error just under the floor's, scaled by the crop's decoded-over-
  // transform ratio, then check the decoded file: a file under the floor, or one whose next encode is predicted
  // to save at least RECODE_WORTH of its bytes, is coded again with the aim scaled by its measured ratio. The
  // smallest file that passed is kept.
  const db = (budget as { db: number }).db;
  const count = width * height * nc;
  const floor = floorSse(db, count, maxValue);
  // The first encode is aimed by five crops at the step the centre crop's ratio gives (see ./floor-aim).
  const step0 = stepForError(analysed, weights, (floor * FLOOR_AIM) / floorRatio);
  // The five crops are split between this thread and the second one (their arenas reused crop to crop).
  const side = inp.side ?? runHere;
  let aim =
    (floor * SPREAD_AIM) / spreadRatio(planes, width, height, weights, maxValue, step0, CROP_SIDE, side);
  let kept: ResidualOnly | undefined;
  let codes = 0;
  while (codes < MAX_CODES) {
    cancel();
    const c = codeAll(analysed, weights, stepForError(analysed, weights, aim), code);
    const residual = { steps: c.steps, bytes: c.bytes };
    const file = inp.build(basePlanes, residual);
    const measured = inp.measuredSse(file);
    const psnr = psnrFromSse(measured, count, maxValue);
    codes++;
    if (psnr >= db && (!kept || file.length < (kept.file as Uint8Array).length)) {
      kept = { ...summary(residual, file.length, c.sse, codes), file };
      const d = c.steps[0] / scales[0];
      if (recodeSaving(analysed, weights, d, (floor * FLOOR_AIM) / measured) < RECODE_WORTH) return kept;
    }
    aim *= (floor / measured) * FLOOR_AIM;
  }
  if (kept) kept.layers.residualEncodes = codes;
  return kept;
}

/**
 * The share of the bytes that coding again at step Δ₂ would save over the file coded at `step` (Δ₁), where Δ₂
 * scales the error by `errorScale` (the next encode's aim over the measured error): the rate model's
 * estimates (estimateSquaredError for Δ₂, estimateBits for the size) with the size change raised to
 * {@link RECODE_ELASTICITY}. Measured on the 24 cases of {@link RECODE_WORTH}: predicted 0–14%, real 0–8%;
 * the model overstates the saving below ~0.05 bpp (so such files are coded again, as before).
 */
export function recodeSaving(
  analysed: AnalysedPlane[],
  weights: number[],
  step: number,
  errorScale: number,
): number {
  const scales = stepScales(weights);
  const at = (f: (a: AnalysedPlane, d: number) => number, d: number, w?: number[]) =>
    analysed.reduce((s, a, k) => s + (w ? w[k] : 1) * f(a, d * scales[k]), 0);
  const e1 = at(estimateSquaredError, step, weights);
  const b1 = at(estimateBits, step);
  if (!(e1 > 0 && b1 > 0 && errorScale > 0)) return 0;
  const l1 = Math.log2(step);
  let lo = l1 - 4;
  let hi = l1 + 4;
  for (let i = 0; i < 24; i++) {
    const mid = (lo + hi) / 2;
    if (at(estimateSquaredError, 2 ** mid, weights) > e1 * errorScale) hi = mid;
    else lo = mid;
  }
  const saving = 1 - (at(estimateBits, 2 ** lo) / b1) ** RECODE_ELASTICITY;
  return Number.isFinite(saving) ? saving : 0;
}
