/**
 * The cleaning pipeline on decoded planes, split so that the costly denoising step can run in worker
 * threads over row bands: prepareClean (banding, noise level, sizes) → denoise bands → finishClean
 * (back to RGB, rounding, removed part, report figures). Pure: no Node, no I/O.
 */
import type {
  BandingReport,
  CleanMethodOptions,
  DenoiseMethod,
  NoiseColourReport,
  NoiseModelReport,
  NoisePlaneReport,
} from '../../contract';
import { NOISE_GAIN_YCBCR, rgbToYcbcrBt601, ycbcrBt601ToRgb } from '../colour';
import { psnrPlanes } from '../metrics';
import { type Stabiliser, stabilisePlane, unstabilisePlane } from './anscombe';
import { analyseBanding, type BandingAnalysis, subtractProfiles } from './banding';
import { bandingReport } from './banding-report';
import { lambdaStar } from './gavish-donoho';
import { denoiseLevels, joinLevels, runLevelJobs, withPassThrough } from './level-jobs';
import { estimateNoiseSigma } from './noise-estimate';
import { flatEvidence, MIN_FLAT_BLOCKS } from './noise-evidence';
import { planNoiseModel } from './noise-model';
import { patchCrossCovariance, WIENER_AVERAGE } from './noise-psd-cross';
import { clipLevels, noiseColour, patchSpectrum } from './noise-psd-plan';
import { autoGroupParams, type GroupParams, groupMedianRuleSigma } from './patch-groups';
import { coarseLevels, type DenoiseLevel } from './pyramid';
import { type DenoiseStats, mergeStats, rowBands } from './row-bands';
import { autoTileSize, denoiseTiles } from './tiles';

export interface CleanInput {
  width: number;
  height: number;
  channels: 1 | 2 | 3 | 4;
  bitDepth: 8 | 16;
  planes: Float32Array[];
}

/** The options the pipeline takes: declared once in the contract. */
export type CleanSettings = CleanMethodOptions;

/** Below this σ (8-bit scale) an estimated noise level is taken as "no noise": 8-bit rounding alone gives 0.29. */
const MIN_AUTO_SIGMA_8BIT = 0.6;

export interface PreparedClean {
  width: number;
  height: number;
  maxValue: number;
  colour: boolean;
  /** Colour (non-alpha) channels after banding removal, unrounded. */
  corrected: Float32Array[];
  /** Planes to denoise: [gray] or [Y, Cb, Cr]; empty when denoising is off. */
  work: Float32Array[];
  workNames: string[];
  sigmas: number[];
  /**
   * Indices of the work planes that are denoised. A plane whose estimated σ is below rounding level (the
   * chroma of a gray scan stored as RGB, for example) is passed through; the guide plane 0 is always in.
   */
  active: number[];
  noiseSigma: number | null;
  noiseSource: 'estimated' | 'given' | 'off';
  noiseSkipped?: string;
  /** The fitted or given noise model (null when off or σ was given). */
  noiseModel: NoiseModelReport | null;
  /** The noise's measured spatial colour, when it was found correlated or forced (noise-psd-plan.ts). */
  noiseColour?: NoiseColourReport;
  /** Per colour channel variance-stabilising transforms (Poisson–Gaussian path), or null. */
  stabilisers: Stabiliser[] | null;
  method: DenoiseMethod | 'off';
  params: GroupParams | null;
  tile: number | null;
  banding: BandingReport;
  /** Per colour channel profiles that were subtracted (null when that axis was not removed). */
  rowProfiles: Float64Array[] | null;
  columnProfiles: Float64Array[] | null;
  bandingMs: number;
  /** User overrides of the threshold rule. */
  fixed: { rank?: number; threshold?: number };
  /** Correlated noise: the coarse levels (pyramid.ts; planes in `active` order), denoised beside the full size. */
  coarse?: DenoiseLevel[];
}

const clock = (globalThis as { performance?: { now(): number } }).performance;
const now = () => (clock ? clock.now() : Date.now());

export function prepareClean(input: CleanInput, settings: CleanSettings): PreparedClean {
  const { width, height, channels } = input;
  const maxValue = input.bitDepth === 16 ? 65535 : 255;
  const colourCount = channels >= 3 ? 3 : 1;
  const colour = colourCount === 3;
  const t0 = now();
  // 1. Banding, per colour channel; an axis found in any channel is removed from all of them.
  let corrected = input.planes.slice(0, colourCount);
  const analyses: BandingAnalysis[] = [];
  let rowProfiles: Float64Array[] | null = null;
  let columnProfiles: Float64Array[] | null = null;
  if (settings.banding !== 'off') {
    for (const plane of corrected)
      analyses.push(analyseBanding(plane, width, height, settings.banding, { maxValue }));
    const removeRows = analyses.some((a) => a.removeRows);
    const removeColumns = analyses.some((a) => a.removeColumns);
    if (removeRows || removeColumns) {
      rowProfiles = removeRows ? analyses.map((a) => a.rows.profile) : null;
      columnProfiles = removeColumns ? analyses.map((a) => a.columns.profile) : null;
      corrected = corrected.map((p, c) =>
        subtractProfiles(p, width, height, rowProfiles?.[c] ?? null, columnProfiles?.[c] ?? null),
      );
    }
  }
  const banding = bandingReport(settings.banding, analyses, rowProfiles, columnProfiles);
  const bandingMs = now() - t0;
  // 2. Noise level and sizes.
  const fixed = { rank: settings.rank, threshold: settings.threshold };
  const base = {
    width,
    height,
    maxValue,
    colour,
    corrected,
    banding,
    rowProfiles,
    columnProfiles,
    bandingMs,
    fixed,
  };
  /** The plan when nothing is denoised (noiseSkipped says why, where there is a reason to give). */
  const noDenoise = (
    noiseSigma: number | null,
    noiseSource: PreparedClean['noiseSource'],
    noiseSkipped?: string,
    noiseModel: NoiseModelReport | null = null,
  ): PreparedClean => ({
    ...base,
    noiseModel,
    stabilisers: null,
    work: [],
    workNames: [],
    sigmas: [],
    active: [],
    noiseSigma,
    noiseSource,
    ...(noiseSkipped === undefined ? {} : { noiseSkipped }),
    method: 'off',
    params: null,
    tile: null,
  });
  if (settings.noise === 'off') return noDenoise(null, 'off');
  const workNames = colour ? ['Y', 'Cb', 'Cr'] : ['gray'];
  const plan = planNoiseModel(
    corrected,
    colour ? ['R', 'G', 'B'] : ['gray'],
    width,
    height,
    maxValue,
    settings,
  );
  const { stabilisers } = plan;
  const source = stabilisers ? corrected.map((p, c) => stabilisePlane(p, stabilisers[c])) : corrected;
  const work = colour ? rgbToYcbcrBt601(source[0], source[1], source[2], (maxValue + 1) / 2) : [source[0]];
  let sigmas: number[];
  let noiseSigma: number;
  const fixedSigma = typeof settings.noise === 'number' ? settings.noise : plan.sigma;
  if (fixedSigma !== null) {
    noiseSigma = fixedSigma;
    sigmas = colour ? NOISE_GAIN_YCBCR.map((g) => g * fixedSigma) : [fixedSigma];
  } else {
    sigmas = work.map((p, c) =>
      c === 0 ? estimateNoiseSigma(p, width, height, 0, maxValue) : estimateNoiseSigma(p, width, height),
    );
    // Each plane's own σ is measured (scanner noise is rarely equal across channels, and gray scans
    // stored as RGB have no chroma noise at all); the headline figure is the mean over R, G, B.
    noiseSigma = colour
      ? corrected.reduce((a, p) => a + estimateNoiseSigma(p, width, height, 0, maxValue), 0) /
        corrected.length
      : sigmas[0];
  }
  // Correlated noise (noise-psd-plan.ts), measured on the guide plane: its σ per pixel replaces the fine-scale one.
  const given = typeof settings.noise === 'number' || plan.report?.source === 'given';
  const stabilised = stabilisers !== null;
  const dims = { width, height, maxValue, colour };
  const tone = noiseColour(work[0], sigmas, noiseSigma, { ...dims, given, stabilised, settings, source });
  ({ sigmas, noiseSigma } = tone);
  const noiseSource =
    typeof settings.noise === 'number' || plan.report?.source === 'given' ? 'given' : 'estimated';
  const model = {
    noiseModel: plan.report,
    stabilisers,
    ...(tone.report ? { noiseColour: tone.report } : {}),
  };
  const active = sigmas
    .map((sg, c) =>
      c === 0 || noiseSource === 'given' || (sg * 255) / maxValue >= MIN_AUTO_SIGMA_8BIT ? c : -1,
    )
    .filter((c) => c >= 0);
  // Sizes follow the noise of the plane used for matching (gray or luma).
  const sigma8 = (sigmas[0] * 255) / maxValue;
  const method = settings.method ?? 'groups';
  const fixedOverride = settings.rank !== undefined || settings.threshold !== undefined;
  if (noiseSource === 'estimated' && sigma8 < MIN_AUTO_SIGMA_8BIT && !fixedOverride) {
    const skipped = noDenoise(
      noiseSigma,
      noiseSource,
      `estimated noise σ ${noiseSigma.toFixed(2)} is below ${((MIN_AUTO_SIGMA_8BIT * maxValue) / 255).toFixed(2)} grey levels (rounding level); nothing to remove`,
      plan.report,
    );
    // Where the texture's share took σ̂ down to this level, the colour report says so (noise-psd-plan.ts).
    return tone.whiteFactor !== undefined && tone.report ? { ...skipped, noiseColour: tone.report } : skipped;
  }
  // White noise must be seen in the flat parts of the scan (noise-evidence.ts); otherwise σ̂ was read off content.
  // Not with --noise-colour white or measured: there the user says what the noise is.
  const autoColour = (settings.noiseColour ?? 'auto') === 'auto';
  if (noiseSource === 'estimated' && autoColour && !tone.psd && !fixedOverride) {
    const [lo, hi] = clipLevels(work[0], maxValue, stabilised);
    const evidence = flatEvidence(work[0], width, height, sigmas[0], lo, hi);
    if (evidence.blocks < MIN_FLAT_BLOCKS) {
      const skipped = noDenoise(
        noiseSigma,
        noiseSource,
        `estimated noise σ ${noiseSigma.toFixed(2)} is not seen in the flat parts of the scan (${evidence.blocks} flat blocks agree with it, at least ${MIN_FLAT_BLOCKS} needed): it comes from edges or fine content; nothing to remove`,
        plan.report,
      );
      return tone.report ? { ...skipped, noiseColour: tone.report } : skipped;
    }
  }
  const common: Omit<PreparedClean, 'params' | 'tile'> = {
    ...base,
    ...model,
    work,
    workNames,
    sigmas,
    active,
    noiseSigma,
    noiseSource,
    method,
  };
  if (method === 'tiles') return { ...common, params: null, tile: settings.tile ?? autoTileSize(sigma8) };
  const auto = autoGroupParams(sigma8);
  const patch = settings.patch ?? auto.patch;
  const params: GroupParams = {
    ...auto,
    patch,
    // Reference patches tile the image without overlap; the other members of each group overlap them.
    stride: patch,
    groupSize: settings.groupSize ?? auto.groupSize,
    rank: settings.rank,
    threshold: settings.threshold,
    // A fixed rank or threshold is a request about the low-rank pass alone: the Wiener pass is left out.
    wiener: fixedOverride ? undefined : auto.wiener && { ...auto.wiener, stride: patch },
  };
  const spectrum = patchSpectrum(tone.psd, patch);
  if (spectrum && tone.psd) {
    params.noiseSpectrum = spectrum;
    params.noiseCrossCovariance = patchCrossCovariance(tone.psd, patch, WIENER_AVERAGE);
  }
  const coarse =
    spectrum && tone.psd && !fixedOverride
      ? coarseLevels({
          ...dims,
          planes: active.map((c) => work[c]),
          sigmas: active.map((c) => sigmas[c]),
          psd: tone.psd,
        })
      : [];
  return { ...common, params, tile: null, ...(coarse.length ? { coarse } : {}) };
}

/** Denoise in this thread (same band code as the workers, so the result is identical). */
export function denoiseInProcess(
  prep: PreparedClean,
  bands = 1,
  onProgress?: (fraction: number) => void,
): { planes: Float32Array[]; stats: DenoiseStats } {
  const { width, height } = prep;
  const planes = prep.active.map((c) => prep.work[c]);
  const sigmas = prep.active.map((c) => prep.sigmas[c]);
  if (prep.method === 'tiles') {
    const parts = planes.map((p, k) =>
      denoiseTiles(p, width, height, sigmas[k], prep.tile ?? 16, prep.fixed),
    );
    return {
      planes: withPassThrough(
        prep,
        parts.map((r) => r.plane),
      ),
      stats: mergeStats(
        parts.map((r) => ({
          groups: r.stats.tiles,
          rankSum: r.stats.rankSum,
          rankMin: r.stats.rankMin,
          rankMax: r.stats.rankMax,
          exact: 0,
        })),
      ),
    };
  }
  const levels = denoiseLevels(prep);
  const out = levels.map((L) => L.planes.map(() => new Float32Array(L.width * L.height)));
  const list = rowBands(height, bands);
  const jobs = [
    ...list.map(([rowStart, rowEnd]) => ({ level: 0, rowStart, rowEnd })),
    ...levels.slice(1).map((L, l) => ({ level: l + 1, rowStart: 0, rowEnd: L.height })),
  ];
  const stats = runLevelJobs(levels, jobs, out, onProgress);
  return { planes: joinLevels(prep, out), stats: mergeStats(stats) };
}

export interface FinishedClean {
  /** All channels (alpha copied unchanged), integer-valued, clipped to the sample range. */
  planes: Float32Array[];
  /** input − output per colour channel. */
  removed: Float32Array[];
  psnrChange: number | null;
  changedSamples: number;
  removedRms: number;
  noisePlanes: NoisePlaneReport[];
  threshold: number | null;
  noiseSigmaMedianRule: number | null;
}

export function finishClean(
  input: CleanInput,
  prep: PreparedClean,
  denoised: Float32Array[] | null,
): FinishedClean {
  const { width, height, maxValue } = prep;
  const colourCount = prep.corrected.length;
  let colourPlanes = prep.corrected;
  if (denoised?.length)
    colourPlanes = prep.colour
      ? ycbcrBt601ToRgb(denoised[0], denoised[1], denoised[2], (maxValue + 1) / 2)
      : [denoised[0]];
  const stab = prep.stabilisers;
  if (denoised?.length && stab) colourPlanes = colourPlanes.map((p, c) => unstabilisePlane(p, stab[c]));
  const planes: Float32Array[] = [];
  const removed: Float32Array[] = [];
  let changed = 0;
  let sq = 0;
  for (let c = 0; c < colourCount; c++) {
    const src = input.planes[c];
    const v = colourPlanes[c];
    const o = new Float32Array(width * height);
    const r = new Float32Array(width * height);
    for (let i = 0; i < o.length; i++) {
      const q = Math.min(maxValue, Math.max(0, Math.round(v[i])));
      o[i] = q;
      const d = src[i] - q;
      r[i] = d;
      if (d !== 0) changed++;
      sq += d * d;
    }
    planes.push(o);
    removed.push(r);
  }
  for (let c = colourCount; c < input.planes.length; c++) planes.push(Float32Array.from(input.planes[c]));
  const psnr =
    changed === 0
      ? null
      : psnrPlanes(planes.slice(0, colourCount), input.planes.slice(0, colourCount), maxValue);
  const params = prep.params;
  const noisePlanes: NoisePlaneReport[] = prep.work.length
    ? prep.active
        .map((c) => ({ name: prep.workNames[c], c }))
        .map(({ name, c }) => ({
          plane: name,
          sigma: prep.sigmas[c],
          threshold: typicalThreshold(prep, c),
        }))
    : [];
  const fixedRank = prep.fixed.rank !== undefined;
  return {
    planes,
    removed,
    psnrChange: psnr,
    changedSamples: changed,
    removedRms: Math.sqrt(sq / (colourCount * width * height)),
    noisePlanes,
    threshold: noisePlanes.length && !fixedRank ? noisePlanes[0].threshold : null,
    noiseSigmaMedianRule:
      params && prep.work.length ? groupMedianRuleSigma(prep.work[0], width, height, params, 256) : null,
  };
}

/** Threshold of a full group (m = patch², n = groupSize − 1 after centring) or a tile, for the report. */
function typicalThreshold(prep: PreparedClean, plane: number): number {
  const sigma = prep.sigmas[plane];
  if (prep.params) {
    if (prep.params.threshold !== undefined) return prep.params.threshold;
    const m = prep.params.patch ** 2;
    const n = prep.params.groupSize - 1;
    const big = Math.max(m, n);
    return lambdaStar(Math.min(m, n) / big) * Math.sqrt(big) * sigma;
  }
  if (prep.fixed.threshold !== undefined) return prep.fixed.threshold;
  const T = prep.tile ?? 16;
  return lambdaStar(1) * Math.sqrt(T) * sigma;
}
