/** Requests and results of `clean`, shared by the CLI, the worker pool, IPC and HTTP. */
import { UsageError } from './errors';
import {
  CLEAN_NOISE_OPTIONS,
  checkNoise,
  checkNoiseLevel,
  checkOptional,
  NOISE_COLOUR_OPTION,
  OPTIONS,
} from './options';
import { is } from './validate';

/** 'auto' estimates σ from the image; a number is σ in grey levels of the input; 'off' skips denoising. */
type NoiseMode = 'auto' | 'off' | number;
export type BandingMode = 'auto' | 'rows' | 'columns' | 'both' | 'off';
type BandingDirectionResult = 'none' | 'rows' | 'columns' | 'both';
/** 'groups' = block-matched patch groups (default); 'tiles' = overlapping tiles with Hann blending. */
export type DenoiseMethod = 'groups' | 'tiles';
/** How the noise depends on brightness: 'auto' decides from the fitted model (see NoiseModelReport). */
export type NoiseModelChoice = 'auto' | 'gaussian' | 'poisson-gaussian';
/** Spatial colour of the noise: 'auto' measures the spectrum and decides (see NoiseColourReport). */
export type NoiseColourChoice = 'auto' | 'white' | 'measured';

/** What the cleaning pipeline itself needs (engine/clean/pipeline.ts takes exactly these). */
export interface CleanMethodOptions {
  noise: NoiseMode;
  banding: BandingMode;
  /** Noise model; 'auto' (default) fits σ²(x) = a·x + b and stabilises the variance when a matters. */
  noiseModel?: NoiseModelChoice;
  /** A given model σ²(x) = a·x + b in grey levels of the input (`--noise A,B`); needs noise 'auto'. */
  noiseLevel?: { a: number; b: number };
  /** Noise colour; 'auto' (default) measures the noise spectrum and models it when it is clearly not white. */
  noiseColour?: NoiseColourChoice;
  /** Keep exactly this many singular components per group/tile instead of the Gavish–Donoho threshold. */
  rank?: number;
  /** Fixed singular-value threshold per group/tile, in grey levels, instead of the Gavish–Donoho threshold. */
  threshold?: number;
  method?: DenoiseMethod;
  /** Patch side (groups) in pixels, 4–12; automatic from σ when omitted. */
  patch?: number;
  /** Patches per group, 8–96; automatic when omitted. */
  groupSize?: number;
  /** Tile side (tiles method), 8–128; automatic when omitted. */
  tile?: number;
}

export interface CleanOptions extends CleanMethodOptions {
  /** Worker threads for denoising: 0 = in this thread; default 2. Output is identical for any count. */
  workers?: number;
  /** TIFF page, 0-based. */
  page?: number;
  pixelLimit?: number;
  /** Overwrite existing outputs. */
  force?: boolean;
  /** Also write the removed part as an 8-bit PNG (offset to mid-grey, scaled). */
  removed?: string;
  /** Also write the stripe profiles as CSV. */
  profile?: string;
}

interface AxisBandingReport {
  detected: boolean;
  removed: boolean;
  /** RMS of the stripe profile, grey levels of the input (strongest channel). */
  strength: number;
  /** Dominant period in pixels, or null. */
  period: number | null;
  /** Standard error of the profile estimate, grey levels. */
  noiseFloor: number;
  /** Agreement of the two image halves' profiles (1 = identical). */
  consistency: number;
}

export interface BandingReport {
  mode: BandingMode;
  direction: BandingDirectionResult;
  /** RMS of the removed stripe pattern (rows and columns combined), grey levels; 0 when none removed. */
  strength: number;
  /** Period of the strongest removed axis, or null. */
  period: number | null;
  rows: AxisBandingReport | null;
  columns: AxisBandingReport | null;
}

export interface NoisePlaneReport {
  /** 'gray', or 'Y', 'Cb', 'Cr' for colour (JFIF YCbCr). */
  plane: string;
  /** σ used, in that plane's units (grey levels). */
  sigma: number;
  /** Gavish–Donoho threshold of a typical group/tile of this plane, grey levels. */
  threshold: number;
}

/** One level set of the noise fit: mean intensity, measured σ, blocks used, and whether the fit kept it. */
interface NoiseFitPoint {
  level: number;
  sigma: number;
  count: number;
  used: boolean;
}

/** The noise model σ²(x) = a·x + b of one plane (gray, or R, G, B). */
export interface NoiseModelPlane {
  plane: string;
  a: number;
  b: number;
  /** Standard errors of the fitted a and b (null when given). */
  seA: number | null;
  seB: number | null;
  /** The level-set estimates the fit used (empty when given). */
  points: NoiseFitPoint[];
}

export interface NoiseModelReport {
  /** The model the cleaning used. */
  model: 'gaussian' | 'poisson-gaussian';
  /** 'fitted' from the scan, or 'given' with --noise A,B. */
  source: 'fitted' | 'given';
  /** Why this model: chosen from the fit, or forced by --noise-model / --noise A,B. */
  reason: string;
  /** a and b of the gray plane, or the mean over R, G, B. */
  a: number;
  b: number;
  planes: NoiseModelPlane[];
  /**
   * Present when b (the variance at x = 0) is extrapolated: the flat level sets the fit used start where the
   * slope part a·x already exceeds b. A sentence giving that level and the standard error of b.
   */
  bNote?: string;
}

/** The measured spatial spectrum of the noise (engine/clean/noise-psd.ts) and whether the denoiser used it. */
export interface NoiseColourReport {
  /** 'correlated': the denoiser used the measured spectrum; 'white': one σ at every frequency. */
  colour: 'white' | 'correlated';
  /** 'measured' and decided from the scan, or forced with --noise-colour. */
  source: 'measured' | 'forced';
  reason: string;
  /** Measured σ per pixel (gray or luma), grey levels; null when nothing was measured. */
  sigma: number | null;
  /** Spectral flatness 1/Σρ(Δ)² (1 = white). */
  flatness: number | null;
  /** Mean normalised spectrum over the highest frequencies (1 = white). */
  highShare: number | null;
  /** Mean of the horizontal and vertical neighbour correlations. */
  lagOne: number | null;
  /** Flat blocks measured. */
  blocks: number;
}

export interface CleanReport {
  input: string;
  output: string;
  removed?: string;
  removedScale?: number;
  profile?: string;
  width: number;
  height: number;
  channels: number;
  bitDepth: 8 | 16;
  /** σ̂ of the noise in grey levels of the input (per colour channel), or null when denoising is off. */
  noiseSigma: number | null;
  /**
   * The noise level function σ²(x) = a·x + b fitted from the scan (or given), and the model used; null when
   * denoising is off or σ was given. With poisson-gaussian, noiseSigma is σ at the scan's mean brightness.
   */
  noiseModel: NoiseModelReport | null;
  /**
   * The noise's spatial colour, present when it was found correlated or --noise-colour was given (absent: the
   * noise was treated as white, as it always was before the measurement existed).
   */
  noiseColour?: NoiseColourReport;
  /** How noiseSigma was obtained. */
  noiseSource: 'estimated' | 'given' | 'off';
  /** Gavish–Donoho σ̂ = y_med/√(n·μ_β), median over sampled patch groups (a cross-check), grey levels. */
  noiseSigmaMedianRule: number | null;
  /** Threshold of a typical group (luma/gray plane), grey levels; null when off or a fixed rank is used. */
  threshold: number | null;
  method: DenoiseMethod | 'off';
  /** Why denoising did not run, when it did not. */
  noiseSkipped?: string;
  /** Per-group (or per-tile) kept rank. */
  rank: { fixed: number | null; groups: number; mean: number; min: number; max: number } | null;
  planes: NoisePlaneReport[];
  params: {
    patch?: number;
    groupSize?: number;
    stride?: number;
    searchRadius?: number;
    tile?: number;
  } | null;
  banding: BandingReport;
  /** PSNR of the output against the input, dB; null when the output equals the input (infinite PSNR). */
  psnrChange: number | null;
  /** Samples whose value changed. */
  changedSamples: number;
  /** RMS of the removed part, grey levels. */
  removedRms: number;
  workers: number;
  timings: { decodeMs: number; bandingMs: number; denoiseMs: number; encodeMs: number; totalMs: number };
  caution: string;
}

/**
 * Check and complete `clean` options (noise and banding default to 'auto'); the one validator the CLI,
 * the app's requests and the service share. @throws UsageError naming the option.
 */
export function checkCleanOptions(options: Partial<CleanOptions>): CleanOptions {
  if (!is.plainObject(options)) throw new UsageError('Expected an object for clean options');
  const noise = checkNoise(options.noise ?? 'auto');
  const banding = checkOptional<BandingMode>(OPTIONS.banding, options.banding ?? 'auto') as BandingMode;
  checkOptional(OPTIONS.cleanRank, options.rank);
  checkOptional(OPTIONS.threshold, options.threshold);
  checkOptional(OPTIONS.method, options.method);
  checkOptional(OPTIONS.patch, options.patch);
  checkOptional(OPTIONS.groupSize, options.groupSize);
  checkOptional(OPTIONS.cleanTile, options.tile);
  checkOptional(OPTIONS.workers, options.workers);
  checkOptional(OPTIONS.page, options.page);
  checkOptional(OPTIONS.pixelLimit, options.pixelLimit);
  checkOptional(NOISE_COLOUR_OPTION, options.noiseColour);
  if (noise === 'off' && banding === 'off')
    throw new UsageError('Nothing to do: both --noise and --banding are off.');
  const noiseModel = checkOptional<NoiseModelChoice>(CLEAN_NOISE_OPTIONS.noiseModel, options.noiseModel);
  const noiseLevel = options.noiseLevel === undefined ? undefined : checkNoiseLevel(options.noiseLevel);
  if (noiseLevel && noise !== 'auto')
    throw new UsageError(
      '--noise A,B is the noise model itself; it cannot be combined with another --noise.',
    );
  if (noiseLevel && noiseModel === 'gaussian')
    throw new UsageError('--noise-model gaussian takes --noise auto or --noise SIGMA, not --noise A,B.');
  if (typeof noise === 'number' && noiseModel === 'poisson-gaussian')
    throw new UsageError(
      '--noise-model poisson-gaussian takes --noise auto or --noise A,B, not --noise SIGMA.',
    );
  return {
    ...options,
    noise,
    banding,
    ...(noiseModel === undefined ? {} : { noiseModel }),
    ...(noiseLevel === undefined ? {} : { noiseLevel }),
  };
}
