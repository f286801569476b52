/**
 * Adapter from the app's session jobs to the shared services, so the page's figures are the CLI's
 * figures: evaluate = `compressDecoded` (what `rankfold compress --json` reports for the same budget and
 * tile, with the CLI's default layers), save = the same bytes written atomically, or handed back for a download.
 * Runs inside the session's worker thread.
 */
import { basename, extname } from 'node:path';
import {
  type Budget,
  CLEANING_CAUTION,
  type CleanSettings,
  type DecodedImage,
  type EvaluateResult,
  encodeFactorSet,
  type FactorArrays,
  LOSSY_CAUTION,
  type SaveKind,
  type SaveRequest,
  type TileChoice,
  type TileRankMap,
  UsageError,
} from '../../contract';
import { encodeImage, encodeImageBuffer, formatFromPath } from '../image/encode';
import { assertWritable, writeFileAtomic } from '../io/atomic';
import { SideThread } from '../parallel/side-thread';
import { removedPng } from '../services/clean-outputs';
import { compressDecoded, DEFAULT_LAYERS } from '../services/compress';
import type { ProgressFn } from './factor';

type Progress = ProgressFn;

/** The session's side thread, started on the first encode and kept for the thread's life (it ends with it). */
let side: SideThread | undefined;
let sideTried = false;

/** Start the session's side thread, if it is not started yet (a spare thread does this while it waits). */
export function startSideThread(): void {
  if (sideTried) return;
  sideTried = true;
  side = SideThread.start();
}

/**
 * Progress, and the second thread `rankfold compress` uses by default (`--workers 2`: the crop's base estimate
 * and half the report's SSIM run beside the main work; the file is the same bit for bit without it).
 */
function hooks(progress: Progress) {
  startSideThread();
  return {
    onProgress: (p: { stage: string; fraction: number }) =>
      progress(Math.round(p.fraction * 100), 100, p.stage),
    side,
  };
}

function tileMaps(
  image: DecodedImage,
  ranks: { channel: string; tile: number; ranks: Int32Array }[],
): TileRankMap[] | undefined {
  const tiled = ranks.filter((r) => r.tile > 0);
  if (!tiled.length) return undefined;
  return tiled.map((r) => ({
    channel: r.channel,
    tile: r.tile,
    cols: Math.ceil(image.width / r.tile),
    rows: Math.ceil(image.height / r.tile),
    ranks: Array.from(r.ranks),
  }));
}

function planesSet(
  image: DecodedImage,
  prefix: string,
  planes: Float32Array[],
  extra: FactorArrays = {},
  count = planes.length,
): ArrayBuffer {
  const arrays: FactorArrays = { ...extra };
  planes.forEach((p, i) => {
    arrays[`${prefix}.${i}`] = p;
  });
  const names = image.colour === 'rgb' ? ['R', 'G', 'B', 'A'] : ['Y', 'A'];
  const channels = names.slice(0, count);
  const bytes = encodeFactorSet(
    {
      width: image.width,
      height: image.height,
      channels,
      ranks: channels.map(() => 0),
      energy: channels.map(() => 0),
      peak: image.bitDepth === 16 ? 65535 : 255,
      complete: false,
    },
    arrays,
  );
  return bytes.buffer as ArrayBuffer;
}

/**
 * The page evaluates and saves what `rankfold compress` writes by default: under byte budgets and PSNR floors
 * that may be a wavelet-coded residual layer on top of the low-rank base, or that layer alone (rank 0), which
 * at 38 dB on a 3-megapixel page is a quarter of the base-only file's bytes. The page rebuilds a base-only
 * whole-plane file itself from σ, U, V; for any other file it shows the decoded file the figures were
 * measured on (the `preview`), so the image, the figures and the saved file stay one and the same.
 */
const PAGE_LAYERS = DEFAULT_LAYERS;

/** Encode at a budget; tiled and two-layer results also return the decoded file for the page to show. */
async function evaluate(
  image: DecodedImage,
  args: { budget: Budget; tile: TileChoice; input: string },
  progress: Progress,
): Promise<EvaluateResult & { preview?: ArrayBuffer }> {
  const { report, result } = await compressDecoded(
    image,
    { budget: args.budget, tile: args.tile, layers: PAGE_LAYERS },
    hooks(progress),
  );
  const tileRanks = tileMaps(image, result.ranks);
  const layered = result.layers.residualBytes > 0;
  const preview = tileRanks || layered ? decodedSet(image, result.decoded.samples) : undefined;
  return { report: { ...report, input: args.input }, tileRanks, preview };
}

/**
 * The decoded file's samples (integers, rounded and clamped by the reader) as `rec.p` blocks of 8- or 16-bit
 * integers: a quarter or half of the float planes' bytes on their way to the page, with nothing lost.
 */
function decodedSet(image: DecodedImage, samples: Float32Array[]): ArrayBuffer {
  const extra: FactorArrays = {};
  samples.forEach((p, i) => {
    extra[`rec.${i}`] = image.bitDepth === 16 ? Uint16Array.from(p) : Uint8Array.from(p);
  });
  return planesSet(image, 'rec', [], extra, samples.length);
}

interface CleanOutput {
  images: ArrayBuffer;
  report: Record<string, unknown>;
  profile: { columns: number[]; rows: number[] };
}

/** Column and row means of a plane (the stripe profile of what cleaning removed). */
function stripeProfile(
  plane: Float32Array,
  width: number,
  height: number,
): { columns: number[]; rows: number[] } {
  const columns = new Float64Array(width);
  const rows = new Float64Array(height);
  for (let r = 0; r < height; r++) {
    let s = 0;
    const o = r * width;
    for (let c = 0; c < width; c++) {
      const v = plane[o + c];
      s += v;
      columns[c] += v;
    }
    rows[r] = s / width;
  }
  for (let c = 0; c < width; c++) columns[c] /= height;
  return { columns: Array.from(columns), rows: Array.from(rows) };
}

type CleanFn = typeof import('./clean-adapter').cleanWithService;

/** The cleaning service, loaded on first use (its worker pool starts only when cleaning). */
async function cleaner(): Promise<CleanFn> {
  const { cleanWithService } = await import('./clean-adapter');
  return cleanWithService;
}

async function clean(
  image: DecodedImage,
  args: { settings: CleanSettings },
  progress: Progress,
): Promise<CleanOutput> {
  const run = await cleaner();
  const { cleaned, removed, report, profile } = await run(image, args.settings, progress);
  const extra: FactorArrays = {};
  removed.forEach((r, i) => {
    extra[`removed.${i}`] = r;
  });
  const images = planesSet(image, 'cleaned', cleaned.slice(0, removed.length), extra);
  // The stripe profile the service subtracted (first colour channel); else the means of the removed part.
  const measured = stripeProfile(removed[0], image.width, image.height);
  return {
    images,
    report,
    profile: {
      columns: profile.columns ? Array.from(profile.columns[0]) : measured.columns,
      rows: profile.rows ? Array.from(profile.rows[0]) : measured.rows,
    },
  };
}

interface SaveOutput {
  data?: ArrayBuffer;
  fileName: string;
  bytes: number;
  caution: string;
  path?: string;
}

function outName(input: string, kind: SaveKind, bitDepth: 8 | 16): string {
  const stem = basename(input, extname(input));
  if (kind === 'rkf') return `${stem}.rkf`;
  if (kind === 'removed') return `${stem}-removed.png`;
  const ext = bitDepth === 16 ? '.tif' : '.png';
  return kind === 'cleaned' ? `${stem}-cleaned${ext}` : `${stem}-expanded${ext}`;
}

/** Write (path given) or return (download) the .rkf, the expanded image or the cleaned image. */
async function save(
  image: DecodedImage,
  args: Omit<SaveRequest, 'scanId' | 'job'> & { input: string },
  progress: Progress,
): Promise<SaveOutput> {
  const fileName = args.path ? basename(args.path) : outName(args.input, args.kind, image.bitDepth);
  if (args.kind === 'rkf' && !/\.rkf$/i.test(fileName))
    throw new UsageError(`${fileName}: a compressed file must end in .rkf`);
  if (args.kind === 'removed' && !/\.png$/i.test(fileName))
    throw new UsageError(`${fileName}: the removed part is written as PNG; give a file name ending in .png`);
  if (args.path) await assertWritable(args.path, args.force);
  if (args.kind === 'removed') return saveRemoved(image, args, fileName, progress);
  const meta = { icc: image.meta.icc, density: image.meta.density, orientation: image.meta.orientation };
  let planes: Float32Array[];
  let caution = LOSSY_CAUTION;
  if (args.kind === 'cleaned') {
    if (!args.settings) throw new UsageError('Saving a cleaned image needs the clean settings');
    planes = (await (await cleaner())(image, args.settings, progress)).cleaned;
    caution = CLEANING_CAUTION;
  } else {
    const { bytes, result } = await compressDecoded(
      image,
      { budget: args.budget, tile: args.tile, layers: PAGE_LAYERS },
      hooks(progress),
    );
    if (args.kind === 'rkf') {
      if (args.path) {
        await writeFileAtomic(args.path, bytes, { force: args.force });
        return { path: args.path, fileName, bytes: bytes.length, caution };
      }
      const copy = bytes.slice();
      return { data: copy.buffer as ArrayBuffer, fileName, bytes: copy.length, caution };
    }
    planes = result.decoded.samples;
  }
  const img = {
    width: image.width,
    height: image.height,
    channels: image.channels,
    bitDepth: image.bitDepth,
    planes,
    meta,
  };
  if (args.path) {
    formatFromPath(args.path);
    const w = await encodeImage(args.path, img, { force: args.force });
    return { path: args.path, fileName, bytes: w.bytes, caution };
  }
  const buf = await encodeImageBuffer(img, { format: formatFromPath(fileName) });
  const copy = new Uint8Array(buf);
  return { data: copy.buffer as ArrayBuffer, fileName, bytes: copy.length, caution };
}

/** The part cleaning removed, as `rankfold clean --removed` writes it (mid-grey PNG with its scale). */
async function saveRemoved(
  image: DecodedImage,
  args: Omit<SaveRequest, 'scanId' | 'job'>,
  fileName: string,
  progress: Progress,
): Promise<SaveOutput> {
  if (!args.settings) throw new UsageError('Saving the removed part needs the clean settings');
  const { removed } = await (await cleaner())(image, args.settings, progress);
  const { bytes } = await removedPng(removed, image.width, image.height, image.bitDepth);
  if (args.path) {
    await writeFileAtomic(args.path, bytes, { force: args.force });
    return { path: args.path, fileName, bytes: bytes.length, caution: CLEANING_CAUTION };
  }
  const copy = new Uint8Array(bytes);
  return { data: copy.buffer as ArrayBuffer, fileName, bytes: copy.length, caution: CLEANING_CAUTION };
}

export async function sessionServices() {
  return {
    evaluate: evaluate as (
      i: DecodedImage,
      a: Record<string, unknown>,
      p: Progress,
    ) => Promise<EvaluateResult & { preview?: ArrayBuffer }>,
    clean: clean as unknown as (
      i: DecodedImage,
      a: Record<string, unknown>,
      p: Progress,
    ) => Promise<CleanOutput>,
    save: save as unknown as (
      i: DecodedImage,
      a: Record<string, unknown>,
      p: Progress,
    ) => Promise<SaveOutput>,
  };
}
