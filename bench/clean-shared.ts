// Shared helpers of the cleaning benchmark (bench/clean.bench.ts, clean-banding.ts, clean-noise-model.ts):
// seeded noise, PSNR, 8-bit grey images in and out, and the scikit-image runner.
import { execFileSync } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import sharp from 'sharp';
import type { DecodedImage } from '../src-main/contract';
import { lcg32 } from '../src-main/engine/linalg';
import { decodeImage } from '../src-main/node/image/decode';

export const QUICK = process.env.RANKFOLD_BENCH_QUICK === '1';

export function rng(seed: number) {
  const next = lcg32(seed);
  return () => (next() + 0.5) / 4294967296;
}
export function gaussian(seed: number) {
  const r = rng(seed);
  return () => Math.sqrt(-2 * Math.log(r())) * Math.cos(2 * Math.PI * r());
}
export function psnr(a: ArrayLike<number>, b: ArrayLike<number>, max = 255) {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += (a[i] - b[i]) ** 2;
  return 10 * Math.log10((max * max) / (s / a.length));
}
export const clip = (v: number) => Math.min(255, Math.max(0, Math.round(v)));

export interface Gray {
  name: string;
  width: number;
  height: number;
  data: Float32Array;
}

export function asDecoded(g: Gray, data: Float32Array): DecodedImage {
  return {
    file: g.name,
    width: g.width,
    height: g.height,
    channels: 1,
    bitDepth: 8,
    colour: 'gray',
    hasAlpha: false,
    planes: [data],
    meta: { format: 'png' },
    inputBytes: 0,
    rawBytes: g.width * g.height,
    sourceSha256: '',
  };
}

export async function loadGray(file: string, name: string): Promise<Gray> {
  const d = await decodeImage(file);
  const n = d.width * d.height;
  const data = new Float32Array(n);
  if (d.channels >= 3)
    for (let i = 0; i < n; i++)
      data[i] = Math.round(0.299 * d.planes[0][i] + 0.587 * d.planes[1][i] + 0.114 * d.planes[2][i]);
  else data.set(d.planes[0]);
  return { name, width: d.width, height: d.height, data };
}

/** scikit-image 0.19 from Debian, installed by apt-get when missing (never by npm test). */
export function skimageAvailable(): boolean {
  if (skimageImports()) return true;
  try {
    execFileSync('apt-get', ['install', '-y', '-q', 'python3-skimage'], { stdio: 'ignore' });
  } catch {
    return false;
  }
  return skimageImports();
}

function skimageImports(): boolean {
  try {
    execFileSync(
      '/usr/bin/python3',
      ['-c', 'import skimage; assert skimage.__version__.startswith("0.19")'],
      { stdio: 'ignore' },
    );
    return true;
  } catch {
    return false;
  }
}

export async function writeGrayPng(file: string, g: Gray, data: Float32Array) {
  await sharp(Buffer.from(Uint8Array.from(data)), { raw: { width: g.width, height: g.height, channels: 1 } })
    .toColourspace('b-w')
    .png()
    .toFile(file);
}

/**
 * The scikit-image 0.19 script of the white-noise comparisons: wavelet (BayesShrink), NL-means (fast, h = 0.8σ,
 * 5×5 patches, distance 6) and TV (Chambolle, weight 0.1) on each job's noisy 8-bit file, gains in dB against
 * its truth. `sigma: 'estimated'` gives each the σ that `restoration.estimate_sigma` finds (the wavelet its own
 * estimate); `sigma: 'told'` tells all of them the job's true σ (job.sigma, grey levels).
 */
export function skimageWhiteScript(sigma: 'estimated' | 'told'): string {
  const told = sigma === 'told';
  return `
import json, sys
import numpy as np
from skimage import io, restoration, metrics
res = {}
for job in json.load(open(sys.argv[1])):
    t = io.imread(job['truth']).astype(float) / 255
    n = io.imread(job['noisy']).astype(float) / 255
    if t.ndim == 3: t = t[..., 0]
    if n.ndim == 3: n = n[..., 0]
    s = ${told ? "job['sigma'] / 255" : 'restoration.estimate_sigma(n)'}
    out = {
      'wavelet': restoration.denoise_wavelet(n, ${told ? 'sigma=s, ' : ''}method='BayesShrink', mode='soft', rescale_sigma=True),
      'nl-means': restoration.denoise_nl_means(n, h=0.8 * s, sigma=s, fast_mode=True, patch_size=5, patch_distance=6),
      'tv': restoration.denoise_tv_chambolle(n, weight=0.1),
    }
    p0 = metrics.peak_signal_noise_ratio(t, n, data_range=1)
    res[job['id']] = {k: metrics.peak_signal_noise_ratio(t, np.clip(v, 0, 1), data_range=1) - p0 for k, v in out.items()}
print(json.dumps(res))
`;
}

/**
 * Run a Python script on a job list with Debian's python3 (scikit-image); its stdout is one JSON object of
 * gains per job id. A failure is logged and gives no results.
 */
export function runSkimage(
  tmp: string,
  name: string,
  script: string,
  jobs: unknown[],
  log: (s?: string) => void,
): Record<string, Record<string, number>> {
  if (!jobs.length) return {};
  writeFileSync(join(tmp, `${name}-jobs.json`), JSON.stringify(jobs));
  writeFileSync(join(tmp, `${name}.py`), script);
  try {
    return JSON.parse(
      execFileSync('/usr/bin/python3', [join(tmp, `${name}.py`), join(tmp, `${name}-jobs.json`)], {
        encoding: 'utf8',
        stdio: ['ignore', 'pipe', 'ignore'],
      }),
    );
  } catch (err) {
    log(`(scikit-image run failed: ${(err as Error).message.split('\n')[0]})`);
    return {};
  }
}
