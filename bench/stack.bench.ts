/**
 * Stack mode rate–distortion: joint coding of 16–64-frame series against per-frame mozjpeg (sharp),
 * per-frame Rankfold (the single-image codec), and the simple eigen-frame baseline (mean frame and the
 * two leading eigen-frames as JPEG images plus float32 coefficients), all at equal total bytes (each
 * method's total ≤ the same budget). Also compares the stack models (frame-mode SVD with and without
 * per-frame residuals, mean + residuals only, truncated HOSVD with quantised factors).
 * Writes `${RANKFOLD_BENCH_OUT ?? 'docs/bench'}/60-stack.md`.
 */
import { createHash } from 'node:crypto';
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import sharp from 'sharp';
import type { DecodedImage } from '../src-main/contract';
import { encodeInt, IntModel, RangeEncoder } from '../src-main/engine/codec/range-coder';
import { fitStack } from '../src-main/engine/codec/stack-budget';
import type { PreparedStack, StackInput } from '../src-main/engine/codec/stack-header';
import { encodePlane } from '../src-main/engine/codec/stack-plane';
import { prepareStack } from '../src-main/engine/lowrank/stack-frames';
import { compressDecoded } from '../src-main/node/services/compress';
import {
  driftingSpecimen,
  formPages,
  phantomSlices,
  type SeriesOptions,
  type SyntheticSeries,
} from './models/synthetic';
import { truncatedHosvd, tuckerFrame } from './models/tucker';
import { av1Section } from './stack-av1';

const RATES = (process.env.RANKFOLD_STACK_RATES ?? '0.1,0.25,0.5').split(',').map(Number);
const QUICK = process.env.RANKFOLD_BENCH_QUICK === '1';

interface Result {
  bytes: number;
  mean: number;
  worst: number;
  ms: number;
  note?: string;
}

const meanOf = (a: number[]) => a.reduce((x, y) => x + y, 0) / a.length;
const sum = (a: number[]) => a.reduce((x, y) => x + y, 0);

function psnr(a: ArrayLike<number>, b: ArrayLike<number>, max = 255): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += (a[i] - b[i]) ** 2;
  return s === 0 ? 99 : 10 * Math.log10((max * max) / (s / a.length));
}
const clamp8 = (v: number) => (v < 0 ? 0 : v > 255 ? 255 : Math.round(v));

async function jpeg(
  plane: ArrayLike<number>,
  w: number,
  h: number,
  quality: number,
): Promise<{ bytes: number; dec: Uint8Array }> {
  const data = Uint8Array.from(plane, clamp8);
  const buf = await sharp(data, { raw: { width: w, height: h, channels: 1 } })
    .toColourspace('b-w') // a one-channel JPEG: three channels would spend bytes on constant chroma
    .jpeg({ quality, mozjpeg: true })
    .toBuffer();
  const dec = await sharp(buf).extractChannel(0).raw().toBuffer();
  return { bytes: buf.length, dec: new Uint8Array(dec) };
}

/** Largest common quality q (1–100) whose total ≤ budget; `make(q)` returns total bytes and a result. */
async function bestQuality<T extends { bytes: number }>(
  budget: number,
  make: (q: number) => Promise<T>,
): Promise<T | undefined> {
  let lo = 1;
  let hi = 100;
  let best: T | undefined;
  while (lo <= hi) {
    const q = (lo + hi) >> 1;
    const r = await make(q);
    if (r.bytes <= budget) {
      best = r;
      lo = q + 1;
    } else hi = q - 1;
  }
  return best;
}

async function perFrameJpeg(s: SyntheticSeries, budget: number): Promise<Result> {
  const t = performance.now();
  const r = await bestQuality(budget, async (q) => {
    const parts = await Promise.all(s.frames.map((f) => jpeg(f, s.width, s.height, q)));
    return { bytes: sum(parts.map((p) => p.bytes)), q, parts };
  });
  if (!r)
    return {
      bytes: Number.NaN,
      mean: Number.NaN,
      worst: Number.NaN,
      ms: 0,
      note: 'quality 1 is over budget',
    };
  // Top up: raise single frames to q+1 while the total still fits, so JPEG uses its budget fully.
  const parts = r.parts.slice();
  let bytes = r.bytes;
  let raised = 0;
  if (r.q < 100)
    for (let j = 0; j < parts.length; j++) {
      const up = await jpeg(s.frames[j], s.width, s.height, r.q + 1);
      if (bytes - parts[j].bytes + up.bytes <= budget) {
        bytes += up.bytes - parts[j].bytes;
        parts[j] = up;
        raised++;
      }
    }
  const ps = parts.map((p, j) => psnr(s.frames[j], p.dec));
  return {
    bytes,
    mean: meanOf(ps),
    worst: Math.min(...ps),
    ms: performance.now() - t,
    note: `q${r.q} (${raised} frames at q${r.q + 1})`,
  };
}

/** Mean frame + two leading eigen-frames as JPEG images, float32 coefficients refitted on the decoded images. */
async function eigenJpegBaseline(s: SyntheticSeries, prep: PreparedStack, budget: number): Promise<Result> {
  const t = performance.now();
  const n = s.width * s.height;
  const N = s.frames.length;
  const mean = prep.svd[0].mean;
  const P = [prep.eigen[0].get(0), prep.eigen[0].get(1)];
  const scales = P.map((p) => 127 / Math.max(1e-9, ...Array.from(p, Math.abs)));
  const r = await bestQuality(budget, async (q) => {
    const jm = await jpeg(mean, s.width, s.height, q);
    const je = await Promise.all(
      P.map((p, i) =>
        jpeg(
          Array.from(p, (v) => 128 + v * scales[i]),
          s.width,
          s.height,
          q,
        ),
      ),
    );
    const mh = jm.dec;
    const Ph = je.map((e, i) => Float64Array.from(e.dec, (v) => (v - 128) / scales[i]));
    const ps: number[] = [];
    for (let j = 0; j < N; j++) {
      // Least squares for 2 coefficients on the decoded eigen-frames.
      const F = s.frames[j];
      const g = [0, 0, 0];
      const b = [0, 0];
      for (let p = 0; p < n; p++) {
        const y = F[p] - mh[p];
        g[0] += Ph[0][p] ** 2;
        g[1] += Ph[0][p] * Ph[1][p];
        g[2] += Ph[1][p] ** 2;
        b[0] += Ph[0][p] * y;
        b[1] += Ph[1][p] * y;
      }
      const det = g[0] * g[2] - g[1] * g[1] || 1;
      const c0 = Math.fround((g[2] * b[0] - g[1] * b[1]) / det);
      const c1 = Math.fround((g[0] * b[1] - g[1] * b[0]) / det);
      const rec = new Float64Array(n);
      for (let p = 0; p < n; p++) rec[p] = clamp8(mh[p] + c0 * Ph[0][p] + c1 * Ph[1][p]);
      ps.push(psnr(F, rec));
    }
    const bytes = jm.bytes + sum(je.map((e) => e.bytes)) + N * 2 * 4 + 2 * 4;
    return { bytes, q, ps };
  });
  if (!r)
    return {
      bytes: Number.NaN,
      mean: Number.NaN,
      worst: Number.NaN,
      ms: 0,
      note: 'quality 1 is over budget',
    };
  return {
    bytes: r.bytes,
    mean: meanOf(r.ps),
    worst: Math.min(...r.ps),
    ms: performance.now() - t,
    note: `q${r.q}`,
  };
}

async function perFrameRankfold(s: SyntheticSeries, budget: number): Promise<Result> {
  const t = performance.now();
  const per = Math.floor(budget / s.frames.length);
  let bytes = 0;
  const ps: number[] = [];
  try {
    for (const [j, f] of s.frames.entries()) {
      const img: DecodedImage = {
        file: `frame-${j}`,
        width: s.width,
        height: s.height,
        channels: 1,
        bitDepth: 8,
        colour: 'gray',
        hasAlpha: false,
        planes: [f],
        meta: { format: 'png' },
        inputBytes: 0,
        rawBytes: s.width * s.height,
        sourceSha256: createHash('sha256').update(Uint8Array.from(f)).digest('hex'),
      };
      const r = await compressDecoded(img, { budget: { kind: 'bytes', bytes: per }, tile: 'auto' });
      bytes += r.bytes.length;
      ps.push(r.report.psnr);
    }
  } catch (err) {
    return {
      bytes: Number.NaN,
      mean: Number.NaN,
      worst: Number.NaN,
      ms: 0,
      note: (err as Error).message.slice(0, 80),
    };
  }
  return {
    bytes,
    mean: meanOf(ps),
    worst: Math.min(...ps),
    ms: performance.now() - t,
    note: `${per} B/frame`,
  };
}

function stackResult(prep: PreparedStack, budget: number, residuals: boolean, rank?: number): Result {
  const t = performance.now();
  try {
    const f =
      rank === undefined
        ? fitStack(prep, { maxBytes: budget, residuals })
        : fitStack(prep, { maxBytes: budget, residuals, rank });
    const k = f.encoded.header.ranks[0];
    const res = f.encoded.header.frameTable.filter((x) => x.residual[0]).length;
    return {
      bytes: f.encoded.bytes.length,
      mean: meanOf(f.psnr),
      worst: Math.min(...f.psnr),
      ms: performance.now() - t,
      note: `k=${k}, ${res} residuals, Δ=${f.encoded.header.step.toFixed(2)}`,
    };
  } catch (err) {
    return {
      bytes: Number.NaN,
      mean: Number.NaN,
      worst: Number.NaN,
      ms: 0,
      note: (err as Error).message.slice(0, 60),
    };
  }
}

/**
 * Truncated HOSVD (De Lathauwer et al. 2000) of the mean-removed tensor with quantised factors: mean
 * frame by the plane coder, U₁, U₂, U₃ as 12-bit fixed point (2 bytes each), the core by a uniform step
 * and adaptive Elias-gamma range coding. Best over a grid of ranks and steps within the budget.
 */
function tuckerResult(s: SyntheticSeries, prep: PreparedStack, budget: number): Result {
  const t = performance.now();
  const { width: w, height: h } = s;
  const N = s.frames.length;
  const n = w * h;
  const mean = encodePlane(prep.svd[0].mean, w, h, 1);
  const centred = s.frames.map((f) => Float64Array.from(f, (v, p) => v - mean.decoded[p]));
  const full = truncatedHosvd(centred, h, w, [h, w, N]);
  let best: Result = {
    bytes: Number.NaN,
    mean: Number.NaN,
    worst: Number.NaN,
    ms: 0,
    note: 'no grid point fits',
  };
  const rs = [8, 16, 24, 32, 48, 64].filter((r) => r <= Math.min(h, w));
  const r3s = [2, 4, 8, 16, N].filter((r) => r <= N);
  for (const r of rs)
    for (const r3 of r3s) {
      const factorBytes = 2 * (h * r + w * r + N * r3);
      if (mean.bytes.length + factorBytes >= budget) continue;
      const sub = truncateTucker(full, [r, r, r3], centred);
      for (const step of [0.5, 1, 2, 4, 8, 16, 32]) {
        const q = Int32Array.from(sub.core, (v) => Math.round(v / step));
        const enc = new RangeEncoder();
        const m = new IntModel(1);
        for (const v of q) encodeInt(enc, m, v, 0, 0);
        const bytes = mean.bytes.length + factorBytes + enc.finish().length + 64;
        if (bytes > budget) continue;
        const qt = {
          ...sub,
          core: Float64Array.from(q, (v) => v * step),
          U1: fix12(sub.U1),
          U2: fix12(sub.U2),
          U3: fix12(sub.U3),
        };
        const ps = s.frames.map((f, j) => {
          const rec = tuckerFrame(qt, j);
          for (let p = 0; p < n; p++) rec[p] = clamp8(rec[p] + mean.decoded[p]);
          return psnr(f, rec);
        });
        if (!(meanOf(ps) <= best.mean))
          best = {
            bytes,
            mean: meanOf(ps),
            worst: Math.min(...ps),
            ms: 0,
            note: `ranks ${r}×${r}×${r3}, Δ=${step}`,
          };
        break;
      }
    }
  best.ms = performance.now() - t;
  return best;
}

const fix12 = (a: Float64Array) => Float64Array.from(a, (v) => Math.round(v * 2048) / 2048);

function truncateTucker(
  full: ReturnType<typeof truncatedHosvd>,
  ranks: [number, number, number],
  T: Float64Array[],
) {
  const [h, w, N] = [full.height, full.width, full.frames];
  const [r1, r2, r3] = ranks;
  const take = (U: Float64Array, rows: number, cols: number, r: number) => {
    const out = new Float64Array(rows * r);
    for (let i = 0; i < rows; i++) for (let k = 0; k < r; k++) out[i * r + k] = U[i * cols + k];
    return out;
  };
  const U1 = take(full.U1, h, full.ranks[0], r1);
  const U2 = take(full.U2, w, full.ranks[1], r2);
  const U3 = take(full.U3, N, full.ranks[2], r3);
  const core = new Float64Array(r1 * r2 * r3);
  T.forEach((F, j) => {
    // A = U1ᵀ F U2 (r1×r2)
    const FU2 = new Float64Array(h * r2);
    for (let y = 0; y < h; y++)
      for (let x = 0; x < w; x++) {
        const v = F[y * w + x];
        for (let b = 0; b < r2; b++) FU2[y * r2 + b] += v * U2[x * r2 + b];
      }
    const A = new Float64Array(r1 * r2);
    for (let y = 0; y < h; y++)
      for (let a = 0; a < r1; a++)
        for (let b = 0; b < r2; b++) A[a * r2 + b] += U1[y * r1 + a] * FU2[y * r2 + b];
    for (let k = 0; k < r3; k++) {
      const u = U3[j * r3 + k];
      for (let p = 0; p < r1 * r2; p++) core[k * r1 * r2 + p] += u * A[p];
    }
  });
  return { ...full, ranks: ranks as [number, number, number], U1, U2, U3, core };
}

const f2 = (x: number) => (Number.isFinite(x) ? x.toFixed(2) : 'n/a');
const d2 = (x: number) => (Number.isFinite(x) ? `${x >= 0 ? '+' : ''}${x.toFixed(2)}` : 'n/a');

/** A series and its noise-free twin (same seed and scene), for the noise-floor column. */
function withClean(make: (o: SeriesOptions) => SyntheticSeries, o: SeriesOptions) {
  return { s: make(o), clean: make({ ...o, clean: true }) };
}

async function main() {
  const series: Array<{ name: string; label: string; s: SyntheticSeries; clean?: SyntheticSeries }> = [
    {
      name: 'Fenwick Lab time-lapse (textured specimen, 0.5 px drift, fade, noise σ=1.5), 24 × 192×160',
      label: 'time-lapse, 24 frames, 0.5 px drift',
      ...withClean(driftingSpecimen, {
        width: 192,
        height: 160,
        frames: 24,
        seed: 1,
        noise: 1.5,
        texture: 40,
        drift: 0.5,
      }),
    },
    {
      name: 'Fenwick Lab time-lapse (textured, 2 px drift, noise σ=1), 64 × 128×128',
      label: 'time-lapse, 64 frames, 2 px drift',
      ...withClean(driftingSpecimen, {
        width: 128,
        height: 128,
        frames: 64,
        seed: 7,
        noise: 1,
        texture: 30,
        drift: 2,
      }),
    },
    {
      name: 'Smooth 3-D phantom, 32 slices of 160×160',
      label: '3-D phantom, 32 slices',
      ...withClean(phantomSlices, { width: 160, height: 160, frames: 32 }),
    },
    {
      name: 'Harrowgate return forms, 16 pages of 160×200 (different handwriting)',
      label: 'forms, 16 pages',
      s: formPages({ width: 160, height: 200, frames: 16 }),
    },
  ];
  if (QUICK) series.splice(1, 3);
  const lines: string[] = [
    '## Stack mode (series of related frames)',
    '',
    'Written by `bench/stack.bench.ts`. All methods get the same total byte budget for the whole series',
    '(bpp counted over all frames) and each stays at or under it. PSNR in dB on 8-bit samples, mean and',
    'worst over the frames. Baselines measured in the same run: per-frame mozjpeg via sharp (one common',
    'quality, the highest that fits), per-frame Rankfold (the single-image codec, budget split evenly),',
    'and the eigen-frame baseline (mean frame + two leading eigen-frames as mozjpeg images + float32',
    'coefficients refitted on the decoded images). Series are synthetic and seeded (bench/models/synthetic.ts).',
    '',
  ];
  const intro = lines.length;
  const summary: string[] = [
    '| series | bpp | stack mean / worst | Δ vs per-frame JPEG | Δ vs eigen-JPEG baseline | Δ vs per-frame Rankfold | noise floor |',
    '|---|---|---|---|---|---|---|',
  ];
  for (const { name, label, s, clean } of series) {
    // Noise floor: the noise-free, unrounded series against the stored frames. A coder that rebuilt the
    // clean scene exactly and spent nothing on sensor noise scores this; above it, bytes code the noise.
    const floor = clean ? meanOf(s.frames.map((f, j) => psnr(clean.frames[j], f))) : Number.NaN;
    const input: StackInput = {
      width: s.width,
      height: s.height,
      bitDepth: 8,
      channels: 1,
      frames: s.frames.map((p, j) => ({
        planes: [p],
        name: `frame-${String(j + 1).padStart(3, '0')}.png`,
        sourceSha256: '0'.repeat(64),
      })),
    };
    const t0 = performance.now();
    const prep = prepareStack(input);
    const prepMs = performance.now() - t0;
    const sig = prep.svd[0].sigma;
    const tot = sum(Array.from(sig, (v) => v * v));
    let acc = 0;
    let k99 = sig.length;
    for (let i = 0; i < sig.length; i++) {
      acc += sig[i] * sig[i];
      if (acc >= 0.99 * tot) {
        k99 = i + 1;
        break;
      }
    }
    lines.push(`### ${name}`, '');
    lines.push(
      `Frame-mode spectrum after mean removal: σ₁…σ₆ = ${Array.from(sig.slice(0, 6), (v) => v.toFixed(0)).join(', ')}; ${k99} eigen-frames carry 99% of the variation. Mean + Gram SVD + eigen-frames: ${prepMs.toFixed(0)} ms.` +
        (clean
          ? ` Noise floor (the noise-free scene against the stored, noisy and rounded frames): ${f2(floor)} dB mean PSNR.`
          : ''),
      '',
      '| bpp | method | bytes | PSNR mean | PSNR worst | setting | ms |',
      '|---|---|---|---|---|---|---|',
    );
    for (const bpp of RATES) {
      const budget = Math.floor((bpp * s.width * s.height * s.frames.length) / 8);
      const rows: Array<[string, Result]> = [];
      const stack = stackResult(prep, budget, true);
      rows.push(['**Rankfold stack (default)**', stack]);
      if (!QUICK) {
        rows.push(['stack: frame-SVD only, no residuals', stackResult(prep, budget, false)]);
        rows.push(['stack: mean + per-frame residuals (k=0)', stackResult(prep, budget, true, 0)]);
        rows.push(['truncated HOSVD, quantised factors', tuckerResult(s, prep, budget)]);
      }
      const jp = await perFrameJpeg(s, budget);
      rows.push(['per-frame mozjpeg (sharp)', jp]);
      const ej = await eigenJpegBaseline(s, prep, budget);
      rows.push(['mean + 2 eigen-frames as JPEG + float coefficients', ej]);
      const rf = QUICK ? undefined : await perFrameRankfold(s, budget);
      if (rf) rows.push(['per-frame Rankfold (single-image codec)', rf]);
      for (const [label, r] of rows)
        lines.push(
          `| ${bpp} | ${label} | ${Number.isFinite(r.bytes) ? r.bytes : 'n/a'} | ${f2(r.mean)} | ${f2(r.worst)} | ${r.note ?? ''} | ${r.ms.toFixed(0)} |`,
        );
      summary.push(
        `| ${label} | ${bpp} | ${f2(stack.mean)} / ${f2(stack.worst)} | ${d2(stack.mean - jp.mean)} | ${d2(stack.mean - ej.mean)} | ${rf ? d2(stack.mean - rf.mean) : 'n/a'} | ${clean ? f2(floor) : 'n/a'} |`,
      );
      console.error(
        `stack bench: ${name} @ ${bpp} bpp: stack ${f2(stack.mean)} dB, JPEG ${f2(jp.mean)}, eigen-JPEG ${f2(ej.mean)}, per-frame Rankfold ${rf ? f2(rf.mean) : 'n/a'}`,
      );
    }
    lines.push('');
  }
  const av1 = process.env.RANKFOLD_STACK_AV1 === '0' ? [] : await av1Section();
  const text = [
    ...lines.slice(0, intro),
    ...av1,
    '### Summary (mean-frame PSNR differences, dB; positive = stack mode better)',
    '',
    '"Noise floor" is the mean PSNR of the noise-free scene against the stored (noisy, rounded) frames: a coder',
    'that rebuilt the clean scene exactly and spent nothing on sensor noise would score that; any figure above',
    'it is bought by coding the noise itself (forms pages: no clean version, n/a).',
    '',
    ...summary,
    '',
    ...lines.slice(intro),
  ].join('\n');
  const outDir = process.env.RANKFOLD_BENCH_OUT ?? 'docs/bench';
  mkdirSync(outDir, { recursive: true });
  writeFileSync(join(outDir, '60-stack.md'), `${text}\n`);
  console.error(`stack bench: wrote ${join(outDir, '60-stack.md')}`);
}

main().catch((err) => {
  console.error(err);
  process.exitCode = 1;
});
