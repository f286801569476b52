/** Synthetic damage for the cleaning tests: seeded Gaussian noise and stripe patterns on fixture images. */

import type { DecodedImage } from '../../src-main/contract';
import { analyseBanding, subtractProfiles } from '../../src-main/engine/clean';
import type { CleanInput } from '../../src-main/engine/clean/pipeline';
import { lcg32 } from '../../src-main/engine/linalg';
import { decodeImage } from '../../src-main/node/image/decode';
import { fixture, image } from '../helpers/fixtures';

/** Uniform on (0, 1) from the engine's Numerical Recipes LCG (linalg/random.ts `lcg32`), seeded. */
export function rng(seed: number): () => number {
  const next = lcg32(seed);
  return () => (next() + 0.5) / 4294967296;
}

/** Box–Muller transform (Box & Muller, Ann. Math. Statist. 29(2), 1958): one N(0,1) sample per call. */
export function gaussian(r: () => number): () => number {
  return () => Math.sqrt(-2 * Math.log(r())) * Math.cos(2 * Math.PI * r());
}

export interface Gray {
  width: number;
  height: number;
  data: Float32Array;
}

/** First channel of a fixture (the skimage gray images are stored as 3 equal channels), optionally cropped. */
export async function fixtureGray(
  name: string,
  crop?: { x: number; y: number; w: number; h: number },
): Promise<Gray> {
  const d = await decodeImage(image(name));
  const c = crop ?? { x: 0, y: 0, w: d.width, h: d.height };
  const out = new Float32Array(c.w * c.h);
  for (let y = 0; y < c.h; y++)
    for (let x = 0; x < c.w; x++) out[y * c.w + x] = d.planes[0][(c.y + y) * d.width + c.x + x];
  return { width: c.w, height: c.h, data: out };
}

/** A fixture image as the cleaning pipeline takes it (all channels, as decoded). */
export async function fixtureInput(name: string): Promise<CleanInput> {
  const d = await decodeImage(image(name));
  return { width: d.width, height: d.height, channels: d.channels, bitDepth: d.bitDepth, planes: d.planes };
}

/** The first plane of a fixture kept in its own folder of test/fixtures (not images/), as it is. */
export async function folderGray(folder: string, name: string): Promise<Gray> {
  const d = await decodeImage(fixture(folder, name));
  return { width: d.width, height: d.height, data: Float32Array.from(d.planes[0]) };
}

/** `data` (g's size) with what `--banding auto` finds removed: analyseBanding in auto mode, then its profiles. */
export function autoBandingRemoved(data: Float32Array, g: Gray, maxValue = 255): Float32Array {
  const a = analyseBanding(data, g.width, g.height, 'auto', { maxValue });
  return subtractProfiles(
    data,
    g.width,
    g.height,
    a.removeRows ? a.rows.profile : null,
    a.removeColumns ? a.columns.profile : null,
  );
}

/** truth + σ·N(0,1) (+ optional row/column offsets), rounded and clipped to [0, max] as a real file would be. */
export function damage(
  truth: Gray,
  opts: { sigma?: number; seed?: number; rows?: Float64Array; columns?: Float64Array; max?: number },
): Float32Array {
  const g = gaussian(rng(opts.seed ?? 1));
  const max = opts.max ?? 255;
  const out = new Float32Array(truth.data.length);
  for (let y = 0; y < truth.height; y++)
    for (let x = 0; x < truth.width; x++) {
      const i = y * truth.width + x;
      const v =
        truth.data[i] +
        (opts.sigma ? opts.sigma * g() : 0) +
        (opts.rows ? opts.rows[y] : 0) +
        (opts.columns ? opts.columns[x] : 0);
      out[i] = Math.min(max, Math.max(0, Math.round(v)));
    }
  return out;
}

/**
 * p minus its mean, scaled to the given RMS exactly, in place (returns p). The one normalisation of the
 * synthetic stripe profiles of the cleaning tests and of bench/clean-banding.ts.
 */
function toRms(p: Float64Array, rms: number): Float64Array {
  const n = p.length;
  const mean = p.reduce((a, b) => a + b, 0) / n;
  let s = 0;
  for (let i = 0; i < n; i++) {
    p[i] -= mean;
    s += p[i] * p[i];
  }
  const k = rms / Math.sqrt(s / n);
  for (let i = 0; i < n; i++) p[i] *= k;
  return p;
}

/** Zero-mean random profile with the given RMS (exactly, after normalisation). */
export function randomProfile(length: number, rms: number, seed: number): Float64Array {
  const g = gaussian(rng(seed));
  return toRms(
    Float64Array.from({ length }, () => g()),
    rms,
  );
}

/** RMS·√2·sin(2πi/period): a periodic profile with the given RMS. */
export function sineProfile(length: number, rms: number, period: number): Float64Array {
  return Float64Array.from({ length }, (_, i) => rms * Math.SQRT2 * Math.sin((2 * Math.PI * i) / period));
}

/** PSNR in dB, 10·log10(MAX²/MSE) (the textbook definition; skimage 0.19.3 peak_signal_noise_ratio agrees). */
export function psnr(a: ArrayLike<number>, b: ArrayLike<number>, max = 255): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += (a[i] - b[i]) ** 2;
  return 10 * Math.log10((max * max) / (s / a.length));
}

export function rounded(p: Float32Array, max = 255): Float32Array {
  return p.map((v) => Math.min(max, Math.max(0, Math.round(v))));
}

/**
 * One Poisson(λ) sample: Knuth's multiplication method below λ = 30 (D. E. Knuth, TAOCP vol. 2, §3.4.1),
 * the normal approximation N(λ, λ) rounded above (common practice; its variance is λ + 1/12).
 */
function poisson(r: () => number, g: () => number): (lambda: number) => number {
  return (lambda) => {
    if (lambda <= 0) return 0;
    if (lambda >= 30) return Math.max(0, Math.round(lambda + Math.sqrt(lambda) * g()));
    const limit = Math.exp(-lambda);
    let k = 0;
    let p = r();
    while (p > limit) {
      k++;
      p *= r();
    }
    return k;
  };
}

/** truth → a·Poisson(truth/a) + N(0, b), rounded and clipped to [0, max]: variance a·x + b (Foi et al. 2008). */
export function poissonGaussian(truth: Gray, a: number, b: number, seed: number, max = 255): Float32Array {
  const r = rng(seed);
  const g = gaussian(rng(seed + 7919));
  const draw = poisson(r, g);
  const sb = Math.sqrt(Math.max(0, b));
  return truth.data.map((x) => Math.min(max, Math.max(0, Math.round(a * draw(x / a) + sb * g()))));
}

/** Piecewise-constant bands of random widths in [minWidth, maxWidth] px, zero mean, the given RMS exactly. */
export function bandProfile(length: number, rms: number, minWidth: number, maxWidth: number, seed: number) {
  const r = rng(seed);
  const g = gaussian(rng(seed + 1));
  const p = new Float64Array(length);
  for (let x = 0; x < length; ) {
    const w = Math.round(minWidth + (maxWidth - minWidth) * r());
    const v = g();
    for (let k = 0; k < w && x < length; k++, x++) p[x] = v;
  }
  return toRms(p, rms);
}

/** A grey 8-bit scan as the decoder would hand it over, with `planes` as its samples (`file` names it in reports). */
export function greyDecoded(t: Gray, planes: Float32Array[], file = 'correlated.png'): DecodedImage {
  return {
    file,
    width: t.width,
    height: t.height,
    channels: 1,
    bitDepth: 8,
    colour: 'gray',
    hasAlpha: false,
    planes,
    meta: { format: 'png' },
    inputBytes: 0,
    rawBytes: t.width * t.height,
    sourceSha256: '',
  };
}
