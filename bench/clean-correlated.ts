// The correlated-noise part of the cleaning benchmark (bench/clean.bench.ts): white noise filtered by a 3×3
// binomial kernel [1 2 1]ᵀ[1 2 1]/16 and by a 5×5 Gaussian of σ_k = 1, scaled to σ 5 and 10 per pixel after
// filtering, rounded and clipped to 8 bits. Rankfold runs `clean --noise auto --banding off` with the noise
// spectrum measured from the scan (noise-psd.ts; with correlated noise also the coarse-scale pass, pyramid.ts)
// and, for comparison, with `--noise-colour white` (the white-noise path of before). scikit-image 0.19's
// wavelet / NL-means / TV run as in bench/clean.bench.ts but told the true σ per pixel (they model white noise).
import { join } from 'node:path';
import { cleanDecoded } from '../src-main/node/services/clean';
import { BINOMIAL_3, filteredNoise, GAUSSIAN_5 } from '../test/clean/correlated-noise';
import {
  asDecoded,
  clip,
  type Gray,
  psnr,
  runSkimage,
  skimageWhiteScript,
  writeGrayPng,
} from './clean-shared';

const SK_TRUE_SIGMA = skimageWhiteScript('told');

const KERNELS: Array<[string, number[]]> = [
  ['binomial 3×3', BINOMIAL_3],
  ['Gaussian 5×5, σ_k 1', GAUSSIAN_5],
];

/** Runs the section and logs its table. RANKFOLD_BENCH_CORRELATED=0 skips it. */
export async function correlatedSection(
  images: Gray[],
  tmp: string,
  sk: boolean,
  log: (s?: string) => void,
): Promise<void> {
  if (process.env.RANKFOLD_BENCH_CORRELATED === '0') return;
  log('### Correlated noise: the noise spectrum measured from the scan');
  log('');
  log(
    'White noise filtered by a 3×3 binomial kernel or a 5×5 Gaussian (σ_k = 1), scaled to σ per pixel after filtering, rounded to 8 bits.',
  );
  log(
    'Rankfold: `clean --noise auto --banding off` (spectrum measured; "colour" is what it found; correlated noise also gets the coarse-scale pass of pyramid.ts), and the same with `--noise-colour white`.',
  );
  log(
    'scikit-image 0.19.3 wavelet (BayesShrink) / NL-means (h = 0.8σ) / TV (weight 0.1), told the true σ per pixel. Target: beat the best of them and the white path.',
  );
  log('');
  const rows: string[] = [];
  const jobs: Array<{ id: string; truth: string; noisy: string; sigma: number }> = [];
  const ours: Record<string, { model: number; white: number; sigmaHat: number; colour: string }> = {};
  for (const g of images)
    for (const [kname, k] of KERNELS)
      for (const sigma of [5, 10]) {
        const n = filteredNoise(g.width, g.height, k, sigma, 7000 + sigma);
        const noisy = g.data.map((v, i) => clip(v + n[i]));
        const id = `${g.name}|${kname}|${sigma}`;
        const p0 = psnr(noisy, g.data);
        const run = (noiseColour: 'auto' | 'white') =>
          cleanDecoded(asDecoded(g, noisy), { noise: 'auto', banding: 'off', workers: 2, noiseColour });
        const model = await run('auto');
        const white = await run('white');
        ours[id] = {
          model: psnr(model.planes[0], g.data) - p0,
          white: psnr(white.planes[0], g.data) - p0,
          sigmaHat: model.report.noiseSigma ?? Number.NaN,
          colour: model.report.noiseColour?.colour ?? 'white',
        };
        if (sk) {
          const t = join(tmp, `corr-${jobs.length}-truth.png`);
          const f = join(tmp, `corr-${jobs.length}-noisy.png`);
          await writeGrayPng(t, g, g.data);
          await writeGrayPng(f, g, noisy);
          jobs.push({ id, truth: t, noisy: f, sigma });
        }
      }
  const skRes = sk ? runSkimage(tmp, 'correlated', SK_TRUE_SIGMA, jobs, log) : {};
  log(
    '| image | kernel | σ | σ̂ | colour | white path | **with spectrum** | wavelet | NL-means | TV | best skimage | spectrum − best | spectrum − white |',
  );
  log('|---|---|---|---|---|---|---|---|---|---|---|---|---|');
  for (const [id, o] of Object.entries(ours)) {
    const [name, kname, sigma] = id.split('|');
    const s = skRes[id];
    const best = s ? Math.max(s.wavelet, s['nl-means'], s.tv) : Number.NaN;
    const f = (v: number) => (Number.isFinite(v) ? v.toFixed(2) : '—');
    rows.push(
      `| ${name} | ${kname} | ${sigma} | ${f(o.sigmaHat)} | ${o.colour} | ${f(o.white)} | **${f(o.model)}** | ${s ? `${f(s.wavelet)} | ${f(s['nl-means'])} | ${f(s.tv)}` : '— | — | —'} | ${f(best)} | ${f(o.model - best)} | ${f(o.model - o.white)} |`,
    );
  }
  for (const r of rows) log(r);
  log('');
}
