/**
 * Image metrics speed: our separable O(N) SSIM against ssim.js 3.5 ('original': MATLAB-style 2-D filter2,
 * the same settings as ours, so the same value) and against a direct 11×11 sum, measured in the same run;
 * then our SSIM and PSNR on a 12-megapixel (4000×3000) plane. Writes
 * `${RANKFOLD_BENCH_OUT ?? 'docs/bench'}/60-metrics.md`.
 *
 * Usage: `npm run bench metrics`.
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { cpus, loadavg } from 'node:os';
import { join } from 'node:path';
import { initEngine, randomizedSvd, singularValues } from '../src-main/engine/linalg';
import { psnr, ssim } from '../src-main/engine/metrics';
import { decodeImage } from '../src-main/node/image/decode';
import { topSingularValues } from '../src-main/node/services/inspect';

const require = createRequire(import.meta.url);
const ssimJs = require('ssim.js') as {
  ssim: (a: unknown, b: unknown, o: Record<string, unknown>) => { mssim: number };
};
const ssimJsVersion: string = require('ssim.js/package.json').version;

function planes(w: number, h: number) {
  const a = new Float32Array(w * h);
  const b = new Float32Array(w * h);
  let s = 12345;
  for (let y = 0; y < h; y++)
    for (let x = 0; x < w; x++) {
      s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
      const v = 128 + 60 * Math.sin(x / 23) * Math.cos(y / 31) + ((s >>> 24) % 16);
      a[y * w + x] = Math.round(v);
      b[y * w + x] = Math.min(255, Math.max(0, Math.round(v + ((s >>> 8) % 9) - 4)));
    }
  return { a, b };
}

function direct(x: Float32Array, y: Float32Array, W: number, H: number, L: number) {
  const g: number[] = [];
  for (let i = -5; i <= 5; i++) g.push(Math.exp(-(i * i) / 4.5));
  const gs = g.reduce((p, q) => p + q, 0);
  const w2 = new Float64Array(121);
  for (let i = 0; i < 11; i++) for (let j = 0; j < 11; j++) w2[i * 11 + j] = (g[i] / gs) * (g[j] / gs);
  const C1 = (0.01 * L) ** 2;
  const C2 = (0.03 * L) ** 2;
  let total = 0;
  for (let r = 5; r <= H - 6; r++)
    for (let c = 5; c <= W - 6; c++) {
      let mx = 0;
      let my = 0;
      let mxx = 0;
      let myy = 0;
      let mxy = 0;
      for (let i = 0; i < 11; i++)
        for (let j = 0; j < 11; j++) {
          const w = w2[i * 11 + j];
          const p = x[(r + i - 5) * W + c + j - 5];
          const q = y[(r + i - 5) * W + c + j - 5];
          mx += w * p;
          my += w * q;
          mxx += w * p * p;
          myy += w * q * q;
          mxy += w * p * q;
        }
      total +=
        ((2 * mx * my + C1) * (2 * (mxy - mx * my) + C2)) /
        ((mx * mx + my * my + C1) * (mxx - mx * mx + myy - my * my + C2));
    }
  return total / ((W - 10) * (H - 10));
}

function rgba(p: Float32Array) {
  const d = new Uint8ClampedArray(p.length * 4);
  for (let i = 0; i < p.length; i++) {
    d[4 * i] = d[4 * i + 1] = d[4 * i + 2] = p[i];
    d[4 * i + 3] = 255;
  }
  return d;
}

function time<T>(f: () => T, reps = 3): { ms: number; value: T } {
  let best = Number.POSITIVE_INFINITY;
  let value!: T;
  for (let r = 0; r < reps; r++) {
    const t = performance.now();
    value = f();
    best = Math.min(best, performance.now() - t);
  }
  return { ms: best, value };
}

const N = 1024;
const small = planes(N, N);
const ours = time(() => ssim(small.a, small.b, N, N, 255));
const theirs = time(
  () =>
    ssimJs.ssim(
      { width: N, height: N, data: rgba(small.a) },
      { width: N, height: N, data: rgba(small.b) },
      {
        ssim: 'original',
        downsample: false,
        windowSize: 11,
        k1: 0.01,
        k2: 0.03,
        bitDepth: 8,
      },
    ).mssim,
  1,
);
const naive = time(() => direct(small.a, small.b, N, N, 255), 1);
const big = planes(4000, 3000);
const ssimBig = time(() => ssim(big.a, big.b, 4000, 3000, 255), 2);
const psnrBig = time(() => psnr(big.a, big.b, 255), 3);

// inspect's spectrum routes on samples/ledger-page.png (1600×2100): the full spectrum (engine singularValues),
// our values-only top 512 (f64 range finder), and the engine's randomizedSvd at k = 512 (f32, with vectors).
await initEngine();
const page = await decodeImage('samples/ledger-page.png');
const pa = { rows: page.height, cols: page.width, data: page.planes[0] };
const fullS = time(() => singularValues(pa), 1);
const topS = time(() => topSingularValues(pa, 512, 32, 2), 1);
const rsvd = time(() => randomizedSvd(pa, 512, { oversample: 32, powerIters: 2, precision: 'f32' }).s, 1);
const errTop = (s: ArrayLike<number>, upTo: number) => {
  let e = 0;
  for (let i = 0; i < upTo; i++) e = Math.max(e, Math.abs(s[i] - fullS.value[i]) / fullS.value[0]);
  return e.toExponential(1);
};

const lines = [
  '## Metrics: SSIM and PSNR',
  '',
  `Written by \`npm run bench metrics\` (bench/metrics.bench.ts). ${cpus().length} × ${cpus()[0]?.model ?? 'CPU'}, Node ${process.version}, load average at start ${loadavg()[0].toFixed(2)}. Best of the repetitions.`,
  '',
  `| ${N}×${N} SSIM (11×11 Gaussian σ=1.5, valid windows) | time | ratio to ours | value |`,
  '|---|---|---|---|',
  `| ours: separable, ring of 11 rows (O(N)) | ${ours.ms.toFixed(0)} ms | 1.00 | ${ours.value.toFixed(12)} |`,
  `| ssim.js ${ssimJsVersion} 'original', no downsampling (2-D filter2) | ${theirs.ms.toFixed(0)} ms | ${(theirs.ms / ours.ms).toFixed(1)}× slower | ${theirs.value.toFixed(12)} |`,
  `| direct 11×11 sum (same formula, non-separable) | ${naive.ms.toFixed(0)} ms | ${(naive.ms / ours.ms).toFixed(1)}× slower | ${naive.value.toFixed(12)} |`,
  '',
  `12-megapixel plane (4000×3000): SSIM ${ssimBig.ms.toFixed(0)} ms (${(12 / (ssimBig.ms / 1000)).toFixed(1)} MP/s), PSNR ${psnrBig.ms.toFixed(0)} ms (${(12 / (psnrBig.ms / 1000)).toFixed(0)} MP/s).`,
  '',
  '### inspect: spectrum routes on samples/ledger-page.png (1600×2100)',
  '',
  '| route | time | ratio to full spectrum | max abs. error / σ₁, top 100 | top 512 |',
  '|---|---|---|---|---|',
  `| full spectrum (engine singularValues, Gram + QL) | ${fullS.ms.toFixed(0)} ms | 1.00 | reference | reference |`,
  `| top 512, values only, f64 range finder (inspect above 2048 px) | ${topS.ms.toFixed(0)} ms | ${(topS.ms / fullS.ms).toFixed(2)} | ${errTop(topS.value, 100)} | ${errTop(topS.value, 512)} |`,
  `| engine randomizedSvd k = 512, f32, with vectors | ${rsvd.ms.toFixed(0)} ms | ${(rsvd.ms / fullS.ms).toFixed(2)} | ${errTop(rsvd.value, 100)} | ${errTop(rsvd.value, 512)} |`,
  '',
];
const outDir = process.env.RANKFOLD_BENCH_OUT ?? 'docs/bench';
mkdirSync(outDir, { recursive: true });
writeFileSync(join(outDir, '60-metrics.md'), lines.join('\n'));
process.stdout.write(`${lines.join('\n')}\n`);
