/** Requests and results of `compress` and `expand`, shared by the CLI, the worker pool, IPC and HTTP. */

/** What the user asks for. Exactly one kind. */
export type Budget =
  | { kind: 'rank'; rank: number }
  | { kind: 'bytes'; bytes: number }
  | { kind: 'percent'; percent: number }
  | { kind: 'bpp'; bpp: number }
  | { kind: 'psnr'; db: number }
  | { kind: 'ssim'; value: number };

/** Tile size: 0 = whole plane, 16–512 = square tiles, 'auto' = best of a few sizes for the budget. */
export type TileChoice = number | 'auto';

export interface CompressOptions {
  budget: Budget;
  tile: TileChoice;
  /** TIFF page, 0-based. */
  page?: number;
  /** Overwrite an existing output. */
  force?: boolean;
  /** Also encode JPEG/WebP/AVIF at the nearest size ≤ ours and report their PSNR/SSIM. */
  compare?: boolean;
  /** Refuse inputs with more pixels than this. */
  pixelLimit?: number;
  /**
   * 'auto' (default): under a byte budget (bytes, percent, bpp), also try a wavelet-coded residual layer on
   * top of the low-rank base and keep the split with the least error. 'base': the low-rank factors only.
   * Rank budgets and quality floors are always base-only; so are scans above 2^25 pixels.
   */
  layers?: 'auto' | 'base';
  /**
   * true: write the lossless file (every sample exact), with no lossy search; a byte budget must still hold
   * it. Absent (default): the lossless file is written where it fits the byte budget, or is no larger than
   * the lossy file that meets a quality floor. false: never the lossless file.
   */
  lossless?: boolean;
}

/** One split of the byte budget between the layers that the two-layer search tried. */
interface LayerCandidateReport {
  kind: 'base-only' | 'residual-only' | 'mixed';
  /** What it cost: the whole file, and its base and residual layers. */
  fileBytes: number;
  baseBytes: number;
  residualBytes: number;
  /** Weighted squared error before rounding (the residual's estimated in the wavelet domain). */
  sse: number;
  /** Slope multiplier of a mixed candidate (the base keeps components at least κ·λ steep). */
  kappa?: number;
  /** Kept components over every tile and plane of the base. */
  baseComponents: number;
  residualStep?: number;
}

/** Bytes per layer of the written file, and how the split was chosen. */
interface LayerReport {
  /** Bytes of the low-rank base (the factor streams) and of the wavelet-coded residual. */
  baseBytes: number;
  residualBytes: number;
  /** Residual quantiser step per coded plane (null: no residual). */
  residualSteps: Array<number | null>;
  chosen: LayerCandidateReport['kind'] | 'lossless';
  /** Every candidate the search tried (empty when it did not run: rank or quality budgets, large scans). */
  candidates: LayerCandidateReport[];
  /** Real encodes of the residual layer during the search (each codes every plane once). */
  residualEncodes: number;
  /** Bytes of the exact planes of a lossless file (its layers are then 0 and `chosen` is 'lossless'). */
  losslessBytes?: number;
}

interface ErrorFigures {
  /** Achieved ‖A − Â‖_F over all coded planes, in grey levels of the input. */
  frobenius: number;
  /** Eckart–Young optimum at the same ranks: sqrt(Σ_{i>k} σ_i²), in grey levels. */
  frobeniusOptimal: number;
  /** Eckart–Young spectral bound σ_{k+1} (largest over planes/tiles), in grey levels. */
  spectralBound: number;
}

export interface CodecComparison {
  codec: 'jpeg' | 'webp' | 'avif';
  bytes: number;
  /** False when even the lowest quality is larger than our file (then bytes/quality are of quality 1). */
  fits?: boolean;
  quality: number;
  psnr: number;
  ssim: number;
}

export interface CompressReport {
  input: string;
  output: string;
  width: number;
  height: number;
  channels: number;
  bitDepth: 8 | 16;
  sourceSha256: string;
  rawBytes: number;
  inputBytes: number;
  outputBytes: number;
  /** rawBytes / outputBytes. */
  ratio: number;
  /** 8 · outputBytes / (width · height). */
  bpp: number;
  /** Per channel: the rank (whole plane) or a per-tile summary, of the low-rank base layer. */
  ranks: Array<{
    channel: string;
    rank?: number;
    tiles?: { count: number; min: number; max: number; mean: number; total: number };
  }>;
  psnr: number;
  ssim: number;
  /** About the low-rank base layer (with a residual layer, the base's own error, not the file's). */
  errors: ErrorFigures;
  /** Bytes per layer (absent for the large-scan encoder, which writes base-only files). */
  layers?: LayerReport;
  timings: { decodeMs: number; factorMs: number; encodeMs: number };
  compare?: CodecComparison[];
  /** Tile side used (0 = whole plane). */
  tile: number;
  /** Entropy coder of the factor streams ('rc' = Rankfold's range coder). */
  entropy: string;
  /** True when the expanded samples equal the source exactly (then `expand` checks the source hash). */
  lossless: boolean;
}

/** Options of `expand`. */
export interface ExpandOptions {
  /** Overwrite an existing output. */
  force?: boolean;
  /** Refuse containers declaring more pixels than this. */
  pixelLimit?: number;
  /** 'restore' (default) writes the source's stored layout and orientation tag; 'upright' writes upright pixels. */
  orientation?: 'restore' | 'upright';
}

export interface ExpandReport {
  input: string;
  output: string;
  format: 'png' | 'tiff';
  width: number;
  height: number;
  channels: number;
  bitDepth: 8 | 16;
  inputBytes: number;
  outputBytes: number;
  /** The container said the compression was lossless, so the source SHA-256 was checked (and matched). */
  hashChecked: boolean;
  /** The lossless alpha plane was checked against its stored SHA-256 (and matched). */
  alphaChecked: boolean;
  sourceSha256: string;
  lossless: boolean;
  metadata: { icc: boolean; density?: number; orientation?: number };
  /** decodeMs covers reading, validating and decoding the container. */
  timings: { decodeMs: number; writeMs: number };
}
