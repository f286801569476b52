/**
 * `compress` as a service: decode a scan, encode it under a budget into an .rkf container, write it
 * atomically, and report figures measured on the decoded file. Used by the CLI, the batch runner,
 * the workers, IPC and HTTP alike.
 */
import { stat } from 'node:fs/promises';
import { performance } from 'node:perf_hooks';
import {
  brotliCompressSync,
  brotliDecompressSync,
  constants,
  deflateRawSync,
  inflateRawSync,
} from 'node:zlib';
import {
  CancelledError,
  type CompressOptions,
  type CompressReport,
  checkCompressOptions,
  type DecodedImage,
  OutputError,
  UsageError,
  type WithWarnings,
} from '../../contract';
import type { ByteCompressor, EntropyId } from '../../engine/codec/entropy';
import { initEngine } from '../../engine/linalg';
import { encodeScan } from '../../engine/lowrank/encode';
import { budgetBytes, type EncodeOptions, type EncodeResult } from '../../engine/lowrank/encode-options';
import type { PlaneFactors } from '../../engine/lowrank/factorise';
import { residualFirstApplies } from '../../engine/lowrank/residual-scope';
import { floatScan, type ScanImage } from '../../engine/lowrank/scan-image';
import { encodeScanTiled, TILED_PIXELS, tiledEncoderFits } from '../../engine/lowrank/tiled';
import { decodeImage, hashSamples, type ProbeResult, probeImage } from '../image/decode';
import { decodeIntegerSamples } from '../image/integer-samples';
import { decodeSamples } from '../image/raw-decode';
import { assertWritable, writeFileAtomic } from '../io/atomic';
import { prepareFactorPath } from '../parallel/factor-path';
import { SideThread } from '../parallel/side-thread';
import { type ArenaAhead, arenasAhead } from './arenas-ahead';
import { compareCodecs } from './codec-comparison';
import { ProgressSpans } from './progress-spans';

/** Share of the progress bar `--compare` takes (its bisections usually cost about as much as the encode). */
const COMPARE_SHARE = 0.4;

export interface CompressHooks {
  onProgress?(p: { stage: string; fraction: number }): void;
  signal?: AbortSignal;
}

/** Extra knobs for benchmarks and tests; not part of the public options. */
export interface CompressInternals {
  entropy?: EntropyId;
  /**
   * Called once the output is on disk, with the decoded source and the encoder's result (its `decoded`
   * holds the reconstruction): the batch worker draws report thumbnails from these, with no second decode.
   */
  onWritten?: (source: DecodedImage, result: EncodeResult) => void | Promise<void>;
  /**
   * Scans above this many pixels, under a byte budget with tiles, take the bounded-memory tiled encoder
   * (integer samples, band by band; engine/lowrank/tiled.ts). Default {@link TILED_PIXELS}. `onWritten` is
   * not called on that path (it would need full float planes).
   */
  tiledAbove?: number;
  /**
   * Whole-plane factors of the encoded planes (engine/lowrank/given-factors.ts), e.g. the app session's:
   * with tile 0 the encode uses them instead of factoring the scan again.
   */
  factors?: PlaneFactors[];
  /**
   * Threads for one encode, the calling one included: 2 or more start one side thread for the parts that
   * split without changing the output (engine/lowrank/side-jobs.ts); 0 or 1 (default) compute everything on
   * the calling thread. The file is the same bit for bit either way.
   */
  workers?: number;
  /** A side thread already started (compressFile starts it before decoding, so it loads meanwhile). */
  side?: SideThread;
  /** The whole plane's arena memory the CLI's launcher made from the scan's header (./arenas-ahead.ts). */
  arenaAhead?: ArenaAhead;
}

export const ENCODER_NAME = 'rankfold 0.1.0';

/**
 * Layers when the options do not say: 'auto' (low-rank base plus a wavelet residual under byte budgets). It
 * won at equal bytes on every test image and rate (docs/format.md, "Residual layer").
 */
export const DEFAULT_LAYERS: 'auto' | 'base' = 'auto';

function summariseRanks(r: Pick<EncodeResult, 'ranks'>): CompressReport['ranks'] {
  return r.ranks.map((p) => {
    if (p.tile === 0) return { channel: p.channel, rank: p.ranks[0] ?? 0 };
    let min = Number.POSITIVE_INFINITY;
    let max = 0;
    let total = 0;
    for (const k of p.ranks) {
      min = Math.min(min, k);
      max = Math.max(max, k);
      total += k;
    }
    return {
      channel: p.channel,
      tiles: { count: p.ranks.length, min, max, mean: total / Math.max(1, p.ranks.length), total },
    };
  });
}

/**
 * Compress an already decoded scan in memory.
 * @returns the container bytes and the report (with `output` empty and timings.decodeMs 0).
 * @throws UsageError for an impossible budget, CancelledError when the signal fires.
 */
export async function compressDecoded(
  decoded: ScanImage,
  options: CompressOptions,
  hooks: CompressHooks & CompressInternals = {},
): Promise<{ bytes: Uint8Array; report: CompressReport; result: EncodeResult }> {
  checkCompressOptions(options);
  const check = cancelCheck(hooks, decoded.file);
  check();
  await initEngine();
  // Whole planes: kernels warmed and the thread pool registered, outside timings.factorMs (issue #12 item 3).
  if (!hooks.factors && (options.tile === 0 || (options.tile === 'auto' && options.budget.kind === 'rank')))
    await prepareFactorPath({
      rows: decoded.height,
      cols: decoded.width,
      rank: options.budget.kind === 'rank' ? options.budget.rank : undefined,
    });
  // One monotone progress over encode and --compare (progress-spans.ts).
  const spans = new ProgressSpans(hooks.onProgress);
  const own = hooks.side ? undefined : (hooks.workers ?? 1) >= 2 ? SideThread.start() : undefined;
  const side = hooks.side ?? own;
  try {
    return await encodeAndReport(decoded, options, hooks, check, spans, side);
  } finally {
    await own?.close();
  }
}

async function encodeAndReport(
  decoded: ScanImage,
  options: CompressOptions,
  hooks: CompressHooks & CompressInternals,
  check: () => void,
  spans: ProgressSpans,
  side: SideThread | undefined,
): Promise<{ bytes: Uint8Array; report: CompressReport; result: EncodeResult }> {
  const encoded = spans.part(0, options.compare ? 1 - COMPARE_SHARE : 1, 'encoded');
  const result = encodeScan(decoded, {
    side: side?.run,
    ...encoderSettings(
      options,
      { ...hooks, onProgress: (p) => encoded(p.stage, p.fraction) },
      decoded,
      check,
    ),
    layers: options.layers ?? DEFAULT_LAYERS,
    factors: hooks.factors,
    exact: options.lossless ? 'always' : options.lossless === false ? undefined : 'auto',
  });
  const outputBytes = result.bytes.length;
  const report: CompressReport = {
    ...reportFigures(decoded.file, '', decoded, outputBytes, 0, result, hooks),
    layers: result.layers,
  };
  if (options.compare) {
    const compared = spans.part(1 - COMPARE_SHARE, 1, 'compared');
    compared('compare', 0);
    report.compare = await compareCodecs(floatScan(decoded), outputBytes, undefined, {
      onProgress: (f) => compared('compare', f),
    });
    compared('done', 1);
  }
  return { bytes: result.bytes, report, result };
}

function round1(x: number): number {
  return Math.round(x * 10) / 10;
}

/**
 * Compress `input` to the .rkf file `output`. Never overwrites without `options.force`, never touches
 * the input, writes atomically, and writes nothing when anything fails.
 * @example const report = await compressFile('scan.tif', 'scan.rkf', { budget: { kind: 'bytes', bytes: 250_000 }, tile: 'auto' });
 * @throws InputError (bad input), UsageError (options), OutputError (output), CancelledError.
 */
export async function compressFile(
  input: string,
  output: string,
  options: CompressOptions,
  hooks: CompressHooks & CompressInternals = {},
): Promise<CompressReport & WithWarnings> {
  checkCompressOptions(options);
  if (!/\.rkf$/i.test(output)) throw new UsageError(`${output}: the output of compress must end in .rkf`);
  await assertWritable(output, options.force);
  if (await sameFile(input, output))
    throw new OutputError(output, 'is the input file; Rankfold never overwrites its input');
  hooks.onProgress?.({ stage: 'decode', fraction: 0 });
  const t0 = performance.now();
  // The side thread loads while the scan is probed and decoded (its start-up takes about as long as both).
  const side = (hooks.workers ?? 1) >= 2 && !hooks.side ? SideThread.start() : undefined;
  try {
    const probe = await probeImage(input, { page: options.page, pixelLimit: options.pixelLimit });
    if (
      !options.lossless &&
      probe.width * probe.height > (hooks.tiledAbove ?? TILED_PIXELS) &&
      tiledEncoderFits(options.budget, options.tile)
    ) {
      await side?.close();
      return await compressTiled(input, output, options, hooks, t0);
    }
    const whole = side ? { ...hooks, side } : hooks;
    // With a second core, the whole planes' arenas are made now and touched on it meanwhile (./arenas-ahead).
    const dropAhead = arenasAhead(
      probe,
      { ...options, layers: options.layers ?? DEFAULT_LAYERS },
      whole.side,
      hooks.arenaAhead,
    );
    try {
      return await compressWhole(input, output, options, whole, t0, probe);
    } finally {
      dropAhead();
    }
  } finally {
    await side?.close();
  }
}

async function compressWhole(
  input: string,
  output: string,
  options: CompressOptions,
  hooks: CompressHooks & CompressInternals,
  t0: number,
  probe: ProbeResult,
): Promise<CompressReport & WithWarnings> {
  // The planes' pages are touched on a pool thread while sharp decodes only when this scan has a second core.
  // A scan without alpha whose encode takes the residual-only shortcut keeps its integer samples
  // (../image/integer-samples).
  const layers = options.layers ?? DEFAULT_LAYERS;
  const shortcut = residualFirstApplies(probe.width, probe.height, { layers, budget: options.budget });
  const decoded = await (shortcut ? decodeIntegerSamples : decodeImage)(input, {
    page: options.page,
    pixelLimit: options.pixelLimit,
    probe,
    prefault: hooks.side !== undefined,
  });
  const decodeMs = performance.now() - t0;
  await hooks.arenaAhead?.touch.stop(); // the launcher's pool-thread touch writes that memory no more
  const { bytes, report, result } = await compressDecoded(decoded, options, hooks);
  if (hooks.signal?.aborted) throw new CancelledError(`compressing ${input}`);
  const byteBudget = budgetBytes(options.budget, decoded);
  if (byteBudget !== undefined && bytes.length > byteBudget)
    throw new OutputError(
      output,
      `would be ${bytes.length} bytes, over the budget of ${byteBudget}; nothing was written`,
    );
  await writeFileAtomic(output, bytes, { force: options.force });
  const onDisk = (await stat(output)).size;
  if (hooks.onWritten) await hooks.onWritten(floatScan(decoded), result);
  return {
    ...report,
    output,
    outputBytes: onDisk,
    timings: { ...report.timings, decodeMs: round1(decodeMs) },
    ...(decoded.warnings ? { warnings: decoded.warnings } : {}),
  };
}

/** A check that throws CancelledError once the hooks' signal has fired. */
function cancelCheck(hooks: CompressHooks, file: string): () => void {
  return () => {
    if (hooks.signal?.aborted) throw new CancelledError(`compressing ${file}`);
  };
}

/** The encoder options both encoders (whole-scan and tiled) take from the request and the hooks. */
function encoderSettings(
  options: CompressOptions,
  hooks: CompressHooks & CompressInternals,
  img: { hasAlpha: boolean; planes: ArrayLike<number>[]; channels: number; bitDepth: 8 | 16 },
  check: () => void,
): EncodeOptions {
  return {
    budget: options.budget,
    tile: options.tile,
    entropy: hooks.entropy ?? 'rc',
    compressors: COMPRESSORS,
    encoder: ENCODER_NAME,
    alphaSha256: img.hasAlpha ? hashSamples([img.planes[img.channels - 1]], img.bitDepth) : undefined,
    onProgress: hooks.onProgress ? (stage, fraction) => hooks.onProgress?.({ stage, fraction }) : undefined,
    checkCancelled: check,
    now: () => performance.now(),
  };
}

/** compressFile for a large scan: integer samples and the tiled encoder (see CompressInternals.tiledAbove). */
async function compressTiled(
  input: string,
  output: string,
  options: CompressOptions,
  hooks: CompressHooks & CompressInternals,
  t0: number,
): Promise<CompressReport> {
  if (options.compare)
    throw new UsageError(
      `${input}: --compare is not available for scans above ${hooks.tiledAbove ?? TILED_PIXELS} pixels (the standard codecs would need the whole scan as floats); leave it out`,
    );
  const img = await decodeSamples(input, { page: options.page, pixelLimit: options.pixelLimit });
  const decodeMs = performance.now() - t0;
  const check = cancelCheck(hooks, input);
  check();
  await initEngine();
  const result = encodeScanTiled(img, encoderSettings(options, hooks, img, check));
  check();
  const byteBudget = budgetBytes(options.budget, img);
  if (byteBudget !== undefined && result.bytes.length > byteBudget)
    throw new OutputError(
      output,
      `would be ${result.bytes.length} bytes, over the budget of ${byteBudget}; nothing was written`,
    );
  await writeFileAtomic(output, result.bytes, { force: options.force });
  const onDisk = (await stat(output)).size;
  return reportFigures(input, output, img, onDisk, round1(decodeMs), result, hooks);
}

/** The report's figures, in the order `--json` prints them, for either encoder's result. */
function reportFigures(
  input: string,
  output: string,
  img: Pick<
    DecodedImage,
    'width' | 'height' | 'channels' | 'bitDepth' | 'sourceSha256' | 'rawBytes' | 'inputBytes'
  >,
  outputBytes: number,
  decodeMs: number,
  result: Pick<EncodeResult, 'ranks' | 'psnr' | 'ssim' | 'errors' | 'factorMs' | 'encodeMs' | 'lossless'>,
  hooks: CompressInternals,
): CompressReport {
  const { width, height } = img;
  return {
    input,
    output,
    width,
    height,
    channels: img.channels,
    bitDepth: img.bitDepth,
    sourceSha256: img.sourceSha256,
    rawBytes: img.rawBytes,
    inputBytes: img.inputBytes,
    outputBytes,
    ratio: img.rawBytes / outputBytes,
    bpp: (8 * outputBytes) / (width * height),
    ranks: summariseRanks(result),
    psnr: result.psnr,
    ssim: result.ssim,
    errors: result.errors,
    timings: { decodeMs, factorMs: round1(result.factorMs), encodeMs: round1(result.encodeMs) },
    tile: result.ranks[0]?.tile ?? 0,
    entropy: hooks.entropy ?? 'rc',
    lossless: result.lossless,
  };
}

async function sameFile(a: string, b: string): Promise<boolean> {
  try {
    const [x, y] = await Promise.all([stat(a), stat(b)]);
    return x.ino === y.ino && x.dev === y.dev;
  } catch {
    return false;
  }
}

/** General-purpose byte compressors from node:zlib, handed to the pure engine as functions. */
export const brotli: ByteCompressor = {
  id: 'brotli',
  compress: (b) =>
    new Uint8Array(
      brotliCompressSync(b, {
        params: {
          [constants.BROTLI_PARAM_QUALITY]: 11,
          [constants.BROTLI_PARAM_LGWIN]: 24,
          [constants.BROTLI_PARAM_SIZE_HINT]: b.length,
        },
      }),
    ),
  decompress: (b, maxLength) => new Uint8Array(brotliDecompressSync(b, { maxOutputLength: maxLength })),
};

export const deflate: ByteCompressor = {
  id: 'deflate',
  compress: (b) => new Uint8Array(deflateRawSync(b, { level: 9 })),
  decompress: (b, maxLength) => new Uint8Array(inflateRawSync(b, { maxOutputLength: maxLength })),
};

export const COMPRESSORS: ByteCompressor[] = [brotli, deflate];
