/**
 * `compress --compare`: the standard codecs (JPEG through mozjpeg, WebP, AVIF; all through sharp) at the same
 * byte count as the .rkf file, with PSNR and SSIM against the source.
 */
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

/**
 * JPEG (mozjpeg), WebP and AVIF through sharp at the largest quality whose file is ≤ `bytes`
 * (binary search on quality 1–100), with PSNR/SSIM against the source. Alpha is left out (ours stores
 * it losslessly in the same byte count). 16-bit sources are compared on their 8-bit rendering scaled
 * by 257, since these codecs are used at 8 bits here.
 */
export async function compareCodecs(
  d: DecodedImage,
  bytes: number,
  codecs: StdCodec[] = ['jpeg', 'webp', 'avif'],
): Promise<CodecComparison[]> {
  const nc: 1 | 3 = d.channels >= 3 ? 3 : 1;
  const n = d.width * d.height;
  const scale = d.bitDepth === 16 ? 257 : 1;
  const raw = new Uint8Array(n * nc);
  for (let i = 0; i < n; i++)
    for (let c = 0; c < nc; c++) raw[i * nc + c] = Math.round(d.planes[c][i] / scale);
  const src = d.planes.slice(0, nc);
  const max = d.bitDepth === 16 ? 65535 : 255;
  const out: CodecComparison[] = [];
  for (const codec of codecs) {
    let lo = 1;
    let hi = 100;
    let best: { q: number; buf: Buffer } | undefined;
    const first = await encodeStandard(raw, d.width, d.height, nc, codec, 1);
    if (first.length <= bytes) {
      best = { q: 1, buf: first };
      while (lo < hi) {
        const mid = (lo + hi + 1) >> 1;
        const buf = await encodeStandard(raw, d.width, d.height, nc, codec, mid);
        if (buf.length <= bytes) {
          lo = mid;
          best = { q: mid, buf };
        } else hi = mid - 1;
      }
    }
    const chosen = best ?? { q: 1, buf: first };
    const planes = (await decodeStandard(chosen.buf, nc)).map((p) =>
      scale === 1 ? p : p.map((v) => v * scale),
    );
    out.push({
      codec,
      bytes: chosen.buf.length,
      quality: chosen.q,
      fits: best !== undefined,
      psnr: psnrPlanes(src, planes, max),
      ssim: d.width >= 11 && d.height >= 11 ? ssimPlanes(src, planes, d.width, d.height, max) : Number.NaN,
    });
  }
  return out;
}
