/**
 * `inspect`: what a scan is made of — size, depth, channels and its singular-value spectrum.
 * Spoken by the CLI (`rankfold inspect --json`), the services and any transport.
 */
import { checkOption, OPTIONS } from './options';
import { checkString, invalidParameterError, is } from './validate';

export interface InspectRequest {
  /** Path of the scan (PNG, TIFF, JPEG or WebP). */
  file: string;
  /** TIFF page, 0-based. Default 0. */
  page?: number;
  /** Refuse images with more pixels than this. Default 268402689 (sharp's limitInputPixels default). */
  pixelLimit?: number;
}

/** Energy fractions reported by `inspect`: 90 %, 99 % and 99.9 % of Σσᵢ². */
export const INSPECT_ENERGY_FRACTIONS = [0.9, 0.99, 0.999] as const;
/** Ranks k at which `inspect` reports the Eckart–Young errors (those below the plane's rank). */
export const INSPECT_RANKS = [1, 5, 10, 20, 50, 100, 200, 500] as const;
/** Short sides up to this get the full spectrum; larger planes get the top {@link INSPECT_TOP_VALUES}. */
export const INSPECT_FULL_SPECTRUM_LIMIT = 2048;
export const INSPECT_TOP_VALUES = 512;

interface EnergyRank {
  /** Fraction of Σσᵢ² (the Frobenius energy ‖A‖_F²), e.g. 0.99. */
  fraction: number;
  /** Smallest rank capturing it; null when only the top values are known and they do not reach it. */
  rank: number | null;
}

/** Best rank-k errors (Eckart–Young–Mirsky), in grey levels of the input. */
interface RankError {
  k: number;
  /** ‖A−A_k‖₂ = σ_{k+1}. */
  spectral: number;
  /** ‖A−A_k‖_F = sqrt(Σ_{i>k} σᵢ²). */
  frobenius: number;
  /** Root-mean-square error per pixel, frobenius/sqrt(width·height). */
  rms: number;
  /** PSNR of the unrounded best rank-k approximation, 10·log10(MAX²·N/‖A−A_k‖_F²); null when the error is 0 (infinite PSNR; JSON has no Infinity). */
  psnrDb: number | null;
}

/** The spectrum of one plane. */
export interface PlaneSpectrum {
  /** 'gray', 'luma' (BT.601: 0.299 R + 0.587 G + 0.114 B), 'red', 'green' or 'blue'. */
  plane: 'gray' | 'luma' | 'red' | 'green' | 'blue';
  /** Singular values, non-increasing, in grey levels of the input (0–255 or 0–65535 scale). */
  singularValues: number[];
  /** True when singularValues holds all min(width, height) values; false for the top values only. */
  complete: boolean;
  /** How they were computed: 'jacobi' (one-sided Jacobi), 'gram' (eigenvalues of the Gram matrix), 'randomized' (top values, HMT 2011). */
  method: 'jacobi' | 'gram' | 'randomized';
  /**
   * Present when the values are estimated from a randomized sketch read in strips (scans above the
   * tiled threshold, 2^25 pixels by default): the values are the sketch's, the energy is exact.
   */
  sketch?: {
    reference: string;
    /** Sketch width l = k + oversampling. */
    columns: number;
    powerIterations: number;
    /** Passes over the samples (2q + 2). */
    passes: number;
    /** Rows found constant and multiplied in O(l) (blank paper). */
    constantRows: number;
  };
  /** ‖A‖_F² = Σ aᵢⱼ² = Σ σᵢ² (exact sum of squared samples). */
  energy: number;
  energyRanks: EnergyRank[];
  errors: RankError[];
}

export interface InspectReport {
  file: string;
  /** Container format: png, tiff, jpeg, webp. */
  format: string;
  width: number;
  height: number;
  channels: 1 | 2 | 3 | 4;
  bitDepth: 8 | 16;
  colour: 'gray' | 'rgb';
  hasAlpha: boolean;
  /** Largest sample value for the bit depth: 255 or 65535 (the MAX of PSNR). */
  maxValue: number;
  pages: number;
  page: number;
  inputBytes: number;
  rawBytes: number;
  /** Pixels per inch, if the file states it. */
  density?: number;
  /** EXIF orientation of the source (already applied to the pixels). */
  orientation?: number;
  hasIccProfile: boolean;
  /** SHA-256 of the decoded samples (see docs/format.md). */
  sourceSha256: string;
  /** Metadata left out on reading (out-of-range resolution, damaged ICC profile…), one sentence each. */
  warnings?: string[];
  /** Which plane `singularValues` describes: the gray plane, or luma for colour. */
  plane: 'gray' | 'luma';
  /** Singular values of the gray or luma plane, in grey levels of the input. Same as spectra[0].singularValues. */
  singularValues: number[];
  /**
   * The gray or luma plane first, then red, green and blue for colour scans. Alpha is not analysed.
   * Colour channels get every value up to 1024 pixels on the short side, else their top 128.
   */
  spectra: PlaneSpectrum[];
  timings: { decodeMs: number; spectrumMs: number };
}

/** Validate an InspectRequest from any transport. */
export function checkInspectRequest(v: unknown): InspectRequest {
  if (!is.plainObject(v)) throw invalidParameterError('inspect request', 'an object', v);
  const out: InspectRequest = { file: checkString('file', v.file) };
  if (v.page !== undefined) out.page = checkOption(OPTIONS.page, v.page);
  if (v.pixelLimit !== undefined) out.pixelLimit = checkOption(OPTIONS.pixelLimit, v.pixelLimit);
  return out;
}
