/**
 * `compress --compare`: the standard codecs (JPEG through mozjpeg, WebP, AVIF; all through sharp) at the same
 * byte count as the .rkf file, with PSNR and SSIM against the source. Each codec's quality is found by
 * bisection in at most 8 encodes, and the codecs run in parallel where there are cores.
 */
import { availableParallelism } from 'node:os';
import sharp from 'sharp';
import type { CodecComparison, DecodedImage } from '../../contract';
import { psnrPlanes, ssimPlanes } from '../../engine/metrics';

type StdCodec = CodecComparison['codec'];

/** Encode 8-bit interleaved samples with a standard codec through sharp at one quality. */
export async function encodeStandard(
  raw: Uint8Array,
  width: number,
  height: number,
  channels: 1 | 3,
  codec: StdCodec,
  quality: number,
): Promise<Buffer> {
  const src = sharp(Buffer.from(raw.buffer, raw.byteOffset, raw.byteLength), {
    raw: { width, height, channels },
  });
  // A grey scan stays one channel: without this, libvips writes a three-channel JPEG whose constant chroma
  // still costs about 500 bytes at 512×512, and the comparison would understate JPEG.
  const img = channels === 1 ? src.toColourspace('b-w') : src;
  if (codec === 'jpeg') return img.jpeg({ quality, mozjpeg: true }).toBuffer();
  if (codec === 'webp') return img.webp({ quality, effort: 6 }).toBuffer();
  return img.avif({ quality, effort: 4 }).toBuffer();
}

/** Decode a standard-codec file back to planes of `channels` channels on the 8-bit scale. */
async function decodeStandard(bytes: Buffer, channels: 1 | 3): Promise<Float32Array[]> {
  const { data, info } = await sharp(bytes)
    .toColourspace(channels === 1 ? 'b-w' : 'srgb')
    .removeAlpha()
    .raw()
    .toBuffer({ resolveWithObject: true });
  const n = info.width * info.height;
  const planes = Array.from({ length: channels }, () => new Float32Array(n));
  const ch = info.channels;
  for (let i = 0; i < n; i++)
    for (let c = 0; c < channels; c++) planes[c][i] = data[i * ch + Math.min(c, ch - 1)];
  return planes;
}

/** Most encodes one codec's quality search may make (issue #12 item 2). */
export const MAX_ENCODES = 8;
/** Quality range of all three codecs in sharp. */
const Q_MIN = 1;
const Q_MAX = 100;

/** One trial encode: the quality asked and the file it gave. */
export interface Trial {
  q: number;
  buf: Buffer;
}

/**
 * Bisection on quality for the largest file of at most `target` bytes, with at most {@link MAX_ENCODES}
 * calls of `encode`. File size grows with quality for these codecs nearly always, so the search keeps the
 * bracket [lo, hi] of the largest fitting quality: 7 halvings of 1…100, then quality 1 only if no quality
 * tried so far fitted (to know whether any fits) — 8 encodes at most. The answer is the largest file
 * among the trials that fit (ties: the higher quality), so a rare non-monotone step never returns a
 * smaller file than one already seen; `fits` is false when even quality 1 is over the target (then the
 * quality-1 file is returned).
 */
export async function searchQuality(
  target: number,
  encode: (q: number) => Promise<Buffer>,
  onTrial?: (n: number) => void,
): Promise<Trial & { fits: boolean; trials: number }> {
  const trials: Trial[] = [];
  const tryQ = async (q: number) => {
    const buf = await encode(q);
    trials.push({ q, buf });
    onTrial?.(trials.length);
    return buf.length <= target;
  };
  let lo = Q_MIN;
  let hi = Q_MAX;
  while (lo < hi) {
    const mid = (lo + hi + 1) >> 1;
    if (await tryQ(mid)) lo = mid;
    else hi = mid - 1;
  }
  if (!trials.some((t) => t.q === lo)) await tryQ(lo);
  let best: Trial | undefined;
  for (const t of trials)
    if (
      t.buf.length <= target &&
      (!best || t.buf.length > best.buf.length || (t.buf.length === best.buf.length && t.q > best.q))
    )
      best = t;
  const chosen = best ?? (trials.find((t) => t.q === Q_MIN) as Trial);
  return { ...chosen, fits: best !== undefined, trials: trials.length };
}

export interface CompareOptions {
  /** The encoder (default {@link encodeStandard}); tests inject a counting one. */
  encode?: typeof encodeStandard;
  /** Fraction 0…1 of the comparison done: encodes made over the most possible, never decreasing. */
  onProgress?: (fraction: number) => void;
  /** Codecs searched at once (default: the cores, at least 1). Results do not depend on it. */
  concurrency?: number;
}

/**
 * JPEG (mozjpeg), WebP and AVIF through sharp at the largest file ≤ `bytes` (searchQuality: bisection on
 * quality, ≤ 8 encodes each), with PSNR/SSIM against the source. The codecs are searched in parallel, up
 * to one per core (sharp encodes on libuv's thread pool); each search depends only on its own encodes, so
 * the results are the same at any concurrency and come back in `codecs` order. Alpha is left out (ours
 * stores it losslessly in the same byte count). 16-bit sources are compared on their 8-bit rendering
 * scaled by 257, since these codecs are used at 8 bits here. (No JPEG 2000: sharp's libvips has no
 * OpenJPEG writer; the benchmarks run opj_compress instead.)
 */
export async function compareCodecs(
  d: DecodedImage,
  bytes: number,
  codecs: StdCodec[] = ['jpeg', 'webp', 'avif'],
  options: CompareOptions = {},
): Promise<CodecComparison[]> {
  const nc: 1 | 3 = d.channels >= 3 ? 3 : 1;
  const n = d.width * d.height;
  const scale = d.bitDepth === 16 ? 257 : 1;
  const raw = new Uint8Array(n * nc);
  for (let i = 0; i < n; i++)
    for (let c = 0; c < nc; c++) raw[i * nc + c] = Math.round(d.planes[c][i] / scale);
  const src = d.planes.slice(0, nc);
  const max = d.bitDepth === 16 ? 65535 : 255;
  const encode = options.encode ?? encodeStandard;
  // Progress: encodes so far over the most possible, plus one step per codec for its decode and metrics.
  const steps = codecs.length * (MAX_ENCODES + 1);
  let done = 0;
  const step = () => options.onProgress?.(Math.min(1, ++done / steps));
  const one = async (codec: StdCodec): Promise<CodecComparison> => {
    let made = 0;
    const r = await searchQuality(
      bytes,
      (q) => encode(raw, d.width, d.height, nc, codec, q),
      () => {
        made++;
        step();
      },
    );
    const planes = (await decodeStandard(r.buf, nc)).map((p) => (scale === 1 ? p : p.map((v) => v * scale)));
    const result = {
      codec,
      bytes: r.buf.length,
      quality: r.q,
      fits: r.fits,
      psnr: psnrPlanes(src, planes, max),
      ssim: d.width >= 11 && d.height >= 11 ? ssimPlanes(src, planes, d.width, d.height, max) : Number.NaN,
    };
    // The steps this search did not need, so the whole reaches 1 when every codec is done.
    for (; made < MAX_ENCODES + 1; made++) step();
    return result;
  };
  const limit = Math.max(1, Math.min(codecs.length, options.concurrency ?? availableParallelism()));
  return mapLimited(codecs, limit, one);
}

/** `items.map(fn)` with at most `limit` calls in flight; results in input order. */
async function mapLimited<T, R>(items: T[], limit: number, fn: (item: T) => Promise<R>): Promise<R[]> {
  const out: R[] = new Array(items.length);
  let next = 0;
  const lane = async () => {
    while (next < items.length) {
      const i = next++;
      out[i] = await fn(items[i]);
    }
  };
  await Promise.all(Array.from({ length: Math.min(limit, items.length) }, lane));
  return out;
}
