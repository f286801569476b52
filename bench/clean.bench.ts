// Cleaning benchmark: `npm run bench clean`. Writes section 30-clean.md (see scripts/bench.mjs).
//
// Ground truth comes from synthetic damage added to clean images (test/fixtures/images, plus any PNG in
// samples/): Gaussian noise of σ = 5, 10, 20; column stripes of RMS 3 and 8; periodic row banding. Every
// gain is a PSNR difference against the damaged input measured in this run; the baselines measured in the
// same run are (a) one whole-image Gavish–Donoho hard threshold (σ unknown, ω(β)·y_med), (b) scikit-image
// 0.19's wavelet (BayesShrink), non-local means and TV denoisers run by Debian's python3-skimage when it
// is installed (the benchmark says so and skips them when it is not), and (c) one worker for the speed-up.
import { execFileSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { cpus, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import type { DecodedImage } from '../src-main/contract';
import { analyseBanding, medianOf, omega, subtractProfiles } from '../src-main/engine/clean';
import { eigenWorkspace, lcg32, smallGram, smallSymmetricEigen } from '../src-main/engine/linalg';
import { decodeImage } from '../src-main/node/image/decode';
import { cleanDecoded } from '../src-main/node/services/clean';
import { poissonGaussianSection } from './clean-noise-model';

const QUICK = process.env.RANKFOLD_BENCH_QUICK === '1';
const outDir = process.env.RANKFOLD_BENCH_OUT ?? 'docs/bench';
const lines: string[] = [];
const log = (s = '') => {
  lines.push(s);
  console.log(s);
};

function rng(seed: number) {
  const next = lcg32(seed);
  return () => (next() + 0.5) / 4294967296;
}
function gaussian(seed: number) {
  const r = rng(seed);
  return () => Math.sqrt(-2 * Math.log(r())) * Math.cos(2 * Math.PI * r());
}
function psnr(a: ArrayLike<number>, b: ArrayLike<number>, max = 255) {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += (a[i] - b[i]) ** 2;
  return 10 * Math.log10((max * max) / (s / a.length));
}
const clip = (v: number) => Math.min(255, Math.max(0, Math.round(v)));

interface Gray {
  name: string;
  width: number;
  height: number;
  data: Float32Array;
}

function asDecoded(g: Gray, data: Float32Array): DecodedImage {
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

async function loadGray(file: string, name: string): Promise<Gray> {
  const d = await decodeImage(file);
  const n = d.width * d.height;
  const data = new Float32Array(n);
  if (d.channels >= 3)
    for (let i = 0; i < n; i++)
      data[i] = Math.round(0.299 * d.planes[0][i] + 0.587 * d.planes[1][i] + 0.114 * d.planes[2][i]);
  else data.set(d.planes[0]);
  return { name, width: d.width, height: d.height, data };
}

/** Whole-image Gavish–Donoho hard threshold, σ unknown (τ = ω(β)·y_med), via the eigen-decomposition of XᵀX. */
function globalThreshold(g: Gray, noisy: Float32Array): Float32Array {
  // Orient X as rows ≥ cols so the Gram matrix is the short side.
  const tall = g.height >= g.width;
  const m = tall ? g.height : g.width;
  const n = tall ? g.width : g.height;
  const X = new Float64Array(m * n);
  for (let y = 0; y < g.height; y++)
    for (let x = 0; x < g.width; x++) X[tall ? y * n + x : x * n + y] = noisy[y * g.width + x];
  const ws = eigenWorkspace(n);
  smallGram(X, m, n, ws.V); // n ≤ m: XᵀX
  smallSymmetricEigen(ws);
  const sv = Float64Array.from({ length: n }, (_, i) => Math.sqrt(Math.max(0, ws.d[n - 1 - i])));
  const tau = omega(n / m) * medianOf(sv);
  const keep: number[] = [];
  for (let i = 0; i < n; i++) if (sv[i] > tau) keep.push(n - 1 - i);
  const out = new Float32Array(g.width * g.height);
  const tmp = new Float64Array(m);
  const R = new Float64Array(m * n);
  for (const col of keep) {
    for (let i = 0; i < m; i++) {
      let s = 0;
      for (let j = 0; j < n; j++) s += X[i * n + j] * ws.V[j * n + col];
      tmp[i] = s;
    }
    for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) R[i * n + j] += tmp[i] * ws.V[j * n + col];
  }
  for (let y = 0; y < g.height; y++)
    for (let x = 0; x < g.width; x++) out[y * g.width + x] = R[tall ? y * n + x : x * n + y];
  return out;
}

const SK_SCRIPT = `
import json, sys
import numpy as np
from skimage import io, restoration, metrics
res = {}
for job in json.load(open(sys.argv[1])):
    t = io.imread(job['truth']).astype(float) / 255
    n = io.imread(job['noisy']).astype(float) / 255
    if t.ndim == 3: t = t[..., 0]
    if n.ndim == 3: n = n[..., 0]
    s = restoration.estimate_sigma(n)
    out = {
      'wavelet': restoration.denoise_wavelet(n, method='BayesShrink', mode='soft', rescale_sigma=True),
      'nl-means': restoration.denoise_nl_means(n, h=0.8 * s, sigma=s, fast_mode=True, patch_size=5, patch_distance=6),
      'tv': restoration.denoise_tv_chambolle(n, weight=0.1),
    }
    p0 = metrics.peak_signal_noise_ratio(t, n, data_range=1)
    res[job['id']] = {k: metrics.peak_signal_noise_ratio(t, np.clip(v, 0, 1), data_range=1) - p0 for k, v in out.items()}
print(json.dumps(res))
`;

/** scikit-image 0.19 from Debian, installed by apt-get when missing (never by npm test). */
function skimageAvailable(): boolean {
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

async function writeGrayPng(file: string, g: Gray, data: Float32Array) {
  await sharp(Buffer.from(Uint8Array.from(data)), { raw: { width: g.width, height: g.height, channels: 1 } })
    .toColourspace('b-w')
    .png()
    .toFile(file);
}

async function main() {
  const fixtures = join('test', 'fixtures', 'images');
  const images: Gray[] = [];
  for (const f of ['camera.png', 'moon.png', 'page.png', 'text.png'])
    images.push(await loadGray(join(fixtures, f), f));
  if (existsSync('samples'))
    for (const f of readdirSync('samples')
      .filter((x) => /\.(png|tif|tiff)$/i.test(x))
      .sort()
      .slice(0, QUICK ? 1 : 6)) {
      try {
        const g = await loadGray(join('samples', f), `samples/${f}`);
        if (g.width * g.height <= 1_200_000) images.push(g);
      } catch {
        // not a readable sample; skip
      }
    }
  const sk = skimageAvailable();
  const tmp = mkdtempSync(join(tmpdir(), 'rankfold-bench-clean-'));
  log('## Cleaning (`npm run bench clean`)');
  log('');
  log(
    `Machine: ${cpus().length} × ${cpus()[0]?.model ?? 'unknown CPU'}, Node ${process.version}. Loaded machines give slower times; ratios are from the same run.`,
  );
  log('');
  log(
    `Load average at the start of this run: ${loadavg()
      .map((v) => v.toFixed(1))
      .join(', ')} on ${cpus().length} cores (the machine is shared; times are indicative).`,
  );
  log('');
  log('### Noise: PSNR gain against the truth (dB) and time');
  log('');
  log(
    'Gaussian noise of known σ added to clean images, rounded and clipped to 8 bits. Rankfold: `clean --noise auto --banding off`,',
  );
  log(
    '2 workers (σ estimated from the image). "Global GD" is one whole-image Gavish–Donoho threshold (σ unknown).',
  );
  log(
    sk
      ? 'scikit-image 0.19.3 (Debian python3-skimage) on the same noisy files: wavelet BayesShrink, NL-means (fast, h = 0.8σ̂, 5×5, distance 6), TV Chambolle (weight 0.1).'
      : '**scikit-image is not installed** (`apt-get install python3-skimage`), so its columns are omitted in this run.',
  );
  log('');
  const sigmas = QUICK ? [10] : [5, 10, 20];
  const rows: Array<{
    id: string;
    name: string;
    sigma: number;
    gain: number;
    global?: number;
    ms: number;
    sigmaHat: number;
  }> = [];
  const jobs: Array<{ id: string; truth: string; noisy: string }> = [];
  for (const g of images)
    for (const sigma of sigmas) {
      const gauss = gaussian(1000 + sigma);
      const noisy = g.data.map((v) => clip(v + sigma * gauss()));
      const id = `${g.name}@${sigma}`;
      const t0 = performance.now();
      const res = await cleanDecoded(asDecoded(g, noisy), { noise: 'auto', banding: 'off', workers: 2 });
      const ms = performance.now() - t0;
      const gain = psnr(res.planes[0], g.data) - psnr(noisy, g.data);
      const row: (typeof rows)[number] = {
        id,
        name: g.name,
        sigma,
        gain,
        ms,
        sigmaHat: res.report.noiseSigma ?? Number.NaN,
      };
      if (sigma === 10 && g.width * g.height <= 300_000)
        row.global = psnr(globalThreshold(g, noisy).map(clip), g.data) - psnr(noisy, g.data);
      rows.push(row);
      if (sk) {
        const t = join(tmp, `${jobs.length}-truth.png`);
        const n = join(tmp, `${jobs.length}-noisy.png`);
        await writeGrayPng(t, g, g.data);
        await writeGrayPng(n, g, noisy);
        jobs.push({ id, truth: t, noisy: n });
      }
    }
  let skRes: Record<string, Record<string, number>> = {};
  if (sk && jobs.length) {
    writeFileSync(join(tmp, 'jobs.json'), JSON.stringify(jobs));
    writeFileSync(join(tmp, 'sk.py'), SK_SCRIPT);
    try {
      skRes = JSON.parse(
        execFileSync('/usr/bin/python3', [join(tmp, 'sk.py'), join(tmp, 'jobs.json')], {
          encoding: 'utf8',
          stdio: ['ignore', 'pipe', 'ignore'],
        }),
      );
    } catch (err) {
      log(`(scikit-image run failed: ${(err as Error).message.split('\n')[0]})`);
    }
  }
  log(
    `| image | σ | σ̂ | Rankfold gain | time | global GD |${sk ? ' wavelet | NL-means | TV | best skimage | Rankfold − best |' : ''}`,
  );
  log(`|---|---|---|---|---|---|${sk ? '---|---|---|---|---|' : ''}`);
  for (const r of rows) {
    const s = skRes[r.id];
    const best = s ? Math.max(s.wavelet, s['nl-means'], s.tv) : Number.NaN;
    log(
      `| ${r.name} | ${r.sigma} | ${r.sigmaHat.toFixed(2)} | **${r.gain.toFixed(2)}** | ${(r.ms / 1000).toFixed(2)} s | ${r.global !== undefined ? r.global.toFixed(2) : '—'} |` +
        (sk
          ? s
            ? ` ${s.wavelet.toFixed(2)} | ${s['nl-means'].toFixed(2)} | ${s.tv.toFixed(2)} | ${best.toFixed(2)} | ${(r.gain - best).toFixed(2)} |`
            : ' — | — | — | — | — |'
          : ''),
    );
  }
  log('');
  log(
    'Published BM3D figures (Dabov et al., IEEE TIP 16(8), 2007, Table III) are not listed beside these: its test images (the 256×256',
  );
  log(
    "Cameraman and House, and the 512×512 set) are not in test/fixtures. camera.png here is scikit-image's 512×512 camera, a",
  );
  log('different file, so a published figure for it would compare different images.');
  log('');
  await poissonGaussianSection(images, tmp, sk, log);

  // Banding
  log('### Banding: detection and removal');
  log('');
  log(
    'Stripes of known profile plus Gaussian noise σ = 3, rounded to 8 bits; `clean --noise off --banding auto`.',
  );
  log('"Removed" is the share of the stripe energy taken out: 1 − ‖ŝ − s‖²/‖s‖².');
  log('');
  log('| image | damage | found | strength (true) | period (true) | removed | PSNR before → after | time |');
  log('|---|---|---|---|---|---|---|---|');
  const cases: Array<{
    label: string;
    rows?: (n: number) => Float64Array;
    cols?: (n: number) => Float64Array;
    rms: number;
    period?: number;
  }> = [
    { label: 'column stripes RMS 3', cols: (n) => profile(n, 3, 11), rms: 3 },
    { label: 'column stripes RMS 8', cols: (n) => profile(n, 8, 12), rms: 8 },
    { label: 'row banding, period 12.5, RMS 4', rows: (n) => sine(n, 4, 12.5), rms: 4, period: 12.5 },
    { label: 'wide column bands 50–200 px, RMS 4', cols: (n) => bands(n, 4, 21), rms: 4 },
    { label: 'wide row bands 50–200 px, RMS 4', rows: (n) => bands(n, 4, 22), rms: 4 },
    { label: 'clean (no damage)', rms: 0 },
  ];
  for (const g of images.slice(0, QUICK ? 1 : 4))
    for (const c of cases) {
      const gauss = gaussian(77);
      const rp = c.rows ? c.rows(g.height) : null;
      const cp = c.cols ? c.cols(g.width) : null;
      const dam = new Float32Array(g.data.length);
      for (let y = 0; y < g.height; y++)
        for (let x = 0; x < g.width; x++)
          dam[y * g.width + x] =
            c.rms === 0
              ? g.data[y * g.width + x]
              : clip(g.data[y * g.width + x] + (rp ? rp[y] : 0) + (cp ? cp[x] : 0) + 3 * gauss());
      const t0 = performance.now();
      const a = analyseBanding(dam, g.width, g.height, 'auto', { maxValue: 255 });
      const out = subtractProfiles(
        dam,
        g.width,
        g.height,
        a.removeRows ? a.rows.profile : null,
        a.removeColumns ? a.columns.profile : null,
      ).map(clip);
      const ms = performance.now() - t0;
      const truthP = rp ?? cp;
      const est = rp ? (a.removeRows ? a.rows.profile : null) : a.removeColumns ? a.columns.profile : null;
      let removed = '—';
      if (truthP) {
        let e0 = 0;
        let e1 = 0;
        for (let i = 0; i < truthP.length; i++) {
          e0 += truthP[i] ** 2;
          e1 += (truthP[i] - (est ? est[i] : 0)) ** 2;
        }
        removed = `${(100 * (1 - e1 / e0)).toFixed(1)} %`;
      }
      const axis = rp ? a.rows : a.columns;
      const before = psnr(dam, g.data);
      const after = psnr(out, g.data);
      log(
        `| ${g.name} | ${c.label} | ${a.direction} | ${c.rms ? `${axis.strength.toFixed(2)} (${c.rms})` : `— (input unchanged: ${Number.isFinite(psnr(out, dam)) ? `${psnr(out, dam).toFixed(1)} dB` : 'bit-identical'})`} | ${c.period ? `${axis.period?.toFixed(2) ?? 'none'} (${c.period})` : '—'} | ${removed} | ${Number.isFinite(before) ? `${before.toFixed(2)} → ${after.toFixed(2)}` : '∞ → ∞'} | ${ms.toFixed(0)} ms |`,
      );
    }
  const ls = join('samples', 'line-sensor-banding.png');
  const lsTruth = join('samples', 'line-sensor-banding-truth.png');
  if (existsSync(ls) && existsSync(lsTruth)) {
    const d = await loadGray(ls, 'samples/line-sensor-banding.png');
    const t = await loadGray(lsTruth, 'truth');
    const t0 = performance.now();
    const res = await cleanDecoded(asDecoded(d, d.data), { noise: 'off', banding: 'auto', workers: 2 });
    const ms = performance.now() - t0;
    const both = await cleanDecoded(asDecoded(d, d.data), { noise: 'auto', banding: 'auto', workers: 2 });
    const b = res.report.banding;
    log(
      `| ${d.name} (sensor model, truth file) | column fixed pattern + row banding | ${b.direction} | rows ${b.rows?.strength.toFixed(2)}, columns ${b.columns?.strength.toFixed(2)} | rows ${b.rows?.period?.toFixed(1) ?? 'none'} | — | ${psnr(d.data, t.data).toFixed(2)} → ${psnr(res.planes[0], t.data).toFixed(2)} (with noise removal too: ${psnr(both.planes[0], t.data).toFixed(2)}) | ${ms.toFixed(0)} ms |`,
    );
  }
  log('');

  // Large scan timing
  log('### A 2000×1500 scan, σ = 10');
  log('');
  const big = await loadGray(join(fixtures, 'camera.png'), 'camera.png');
  const W = QUICK ? 1000 : 2000;
  const H = QUICK ? 750 : 1500;
  const { data } = await sharp(Buffer.from(Uint8Array.from(big.data)), {
    raw: { width: big.width, height: big.height, channels: 1 },
  })
    .resize(W, H, { kernel: 'lanczos3' })
    .raw()
    .toBuffer({ resolveWithObject: true });
  const truth: Gray = {
    name: `camera upscaled ${W}×${H}`,
    width: W,
    height: H,
    data: Float32Array.from(data.subarray(0, W * H)),
  };
  const gauss = gaussian(5);
  const noisy = truth.data.map((v) => clip(v + 10 * gauss()));
  const timing: Record<
    number,
    { ms: number; cpuMs: number; gain: number; denoiseMs: number; bandingMs: number }
  > = {};
  const outputs: Record<number, Float32Array> = {};
  for (const workers of [1, 2]) {
    const t0 = performance.now();
    const c0 = process.cpuUsage();
    const res = await cleanDecoded(asDecoded(truth, noisy), { noise: 'auto', banding: 'auto', workers });
    const cpu = process.cpuUsage(c0);
    timing[workers] = {
      ms: performance.now() - t0,
      cpuMs: (cpu.user + cpu.system) / 1000,
      gain: psnr(res.planes[0], truth.data) - psnr(noisy, truth.data),
      denoiseMs: res.report.timings.denoiseMs,
      bandingMs: res.report.timings.bandingMs,
    };
    outputs[workers] = res.planes[0];
  }
  const same = Buffer.from(outputs[1].buffer).equals(Buffer.from(outputs[2].buffer));
  log(
    '| workers | wall, total (banding + noise, in memory) | CPU time (all threads) | banding | denoise | gain | output |',
  );
  log('|---|---|---|---|---|---|---|');
  for (const w of [1, 2])
    log(
      `| ${w} | ${(timing[w].ms / 1000).toFixed(2)} s | ${(timing[w].cpuMs / 1000).toFixed(2)} s | ${(timing[w].bandingMs / 1000).toFixed(2)} s | ${(timing[w].denoiseMs / 1000).toFixed(2)} s | ${timing[w].gain.toFixed(2)} dB | ${w === 2 ? (same ? 'identical to 1 worker' : '**differs from 1 worker**') : 'baseline'} |`,
    );
  log('');
  log(
    `Load average at the end of this run: ${loadavg()
      .map((v) => v.toFixed(1))
      .join(', ')} on ${cpus().length} cores. When it is above the core count, wall`,
  );
  log('times measure the queue for the CPU, not this code; the CPU time is the figure to compare.');
  log('');
  log(
    `Speed-up of 2 workers over 1: ${(timing[1].ms / timing[2].ms).toFixed(2)}× (target: the whole scan under 10 s with both cores).`,
  );
  const map = join('samples', 'map-sheet.png');
  if (existsSync(map) && !QUICK) {
    const d = await decodeImage(map);
    const noisyPlanes = d.planes.slice(0, 3).map((p, c) => {
      const g = gaussian(900 + c);
      return p.map((v) => clip(v + 10 * g()));
    });
    const t0 = performance.now();
    const c0 = process.cpuUsage();
    const res = await cleanDecoded(
      { ...d, planes: noisyPlanes, channels: 3 },
      { noise: 'auto', banding: 'auto', workers: 2 },
    );
    const cpu = process.cpuUsage(c0);
    const flat = (ps: Float32Array[]) => Float32Array.from(ps.flatMap((p) => Array.from(p)));
    const gain =
      psnr(flat(res.planes), flat(d.planes.slice(0, 3))) -
      psnr(flat(noisyPlanes), flat(d.planes.slice(0, 3)));
    log('');
    log(
      `Colour: samples/map-sheet.png (${d.width}×${d.height} RGB) with σ = 10 per channel, 2 workers: ${((performance.now() - t0) / 1000).toFixed(2)} s wall, ${((cpu.user + cpu.system) / 1000000).toFixed(2)} s CPU, gain ${gain.toFixed(2)} dB (luma + chroma).`,
    );
  }
  log('');
  mkdirSync(outDir, { recursive: true });
  writeFileSync(join(outDir, '30-clean.md'), `${lines.join('\n')}\n`);
  rmSync(tmp, { recursive: true, force: true });
}

function profile(n: number, rms: number, seed: number): Float64Array {
  const g = gaussian(seed);
  return profileFrom(
    Float64Array.from({ length: n }, () => g()),
    rms,
  );
}
/** Piecewise-constant bands of random widths 50–200 px, zero mean, the given RMS (as test/clean/helpers.ts). */
function bands(n: number, rms: number, seed: number): Float64Array {
  const u = rng(seed);
  const g = gaussian(seed + 1);
  const p = new Float64Array(n);
  for (let x = 0; x < n; ) {
    const w = Math.round(50 + 150 * u());
    const v = g();
    for (let k = 0; k < w && x < n; k++, x++) p[x] = v;
  }
  return profileFrom(p, rms);
}
function profileFrom(p: Float64Array, rms: number): Float64Array {
  const n = p.length;
  const mean = p.reduce((a, b) => a + b, 0) / n;
  let s = 0;
  for (let i = 0; i < n; i++) {
    p[i] -= mean;
    s += p[i] * p[i];
  }
  const k = rms / Math.sqrt(s / n);
  return p.map((v) => v * k);
}
function sine(n: number, rms: number, period: number): Float64Array {
  return Float64Array.from({ length: n }, (_, i) => rms * Math.SQRT2 * Math.sin((2 * Math.PI * i) / period));
}

await main();
