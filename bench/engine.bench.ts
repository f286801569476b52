// Engine benchmark: `npm run bench engine`. Writes section 10-engine.md (see scripts/bench.mjs).
// Every speed figure is a ratio against a baseline measured in this same run (ml-matrix SVD, the TS
// fallback, one worker). Inputs have image-like decaying spectra with a KNOWN spectrum, so the
// Eckart–Young optimum ‖A − A_k‖_F = (Σ_{i>k} σᵢ²)^{1/2} is exact.
import { mkdirSync, writeFileSync } from 'node:fs';
import { cpus, loadavg } from 'node:os';
import { join } from 'node:path';
import { Worker } from 'node:worker_threads';
import { Matrix as MlMatrix, SVD as MlSVD } from 'ml-matrix';
import {
  type Backend,
  defaultBackend,
  initEngine,
  type Matrix,
  matmul,
  randomizedSvd,
  singularValues,
  tsBackend,
} from '../src-main/engine/linalg';
import { LinalgPool } from '../src-main/node/parallel/pool';
import { median, medianMs } from './timing';

const QUICK = process.env.RANKFOLD_BENCH_QUICK === '1';
const out: string[] = [];
const log = (s = '') => {
  out.push(s);
  console.log(s);
};

/** σᵢ = 1000/(1+i) + 1: a power-law decay with a noise floor, like scanned documents and photographs. */
const spectrumOf = (r: number) => Float64Array.from({ length: r }, (_, i) => 1000 / (1 + i) + 1);

/** Orthonormal DCT-II basis, m×r (row-major): exact orthonormal columns without a QR. */
function dctBasis(m: number, r: number): Float32Array {
  const B = new Float32Array(m * r);
  for (let t = 0; t < r; t++) {
    const sc = t === 0 ? Math.sqrt(1 / m) : Math.sqrt(2 / m);
    for (let i = 0; i < m; i++) B[i * r + t] = sc * Math.cos((Math.PI * (i + 0.5) * t) / m);
  }
  return B;
}

/** A = U·diag(σ)·Vᵀ (f32, as scans are stored) with DCT bases and a random sign flip per row/column. */
function makeInput(m: number, n: number): { A: Matrix; sigma: Float64Array } {
  const r = Math.min(m, n);
  const sigma = spectrumOf(r);
  const U = dctBasis(m, r);
  const V = dctBasis(n, r);
  let x = 12345;
  const sign = () => {
    x = (x * 1103515245 + 12345) % 2147483648;
    return x < 1073741824 ? 1 : -1;
  };
  for (let i = 0; i < m; i++) {
    const s = sign();
    for (let t = 0; t < r; t++) U[i * r + t] *= s * sigma[t];
  }
  for (let j = 0; j < n; j++) {
    const s = sign();
    for (let t = 0; t < r; t++) V[j * r + t] *= s;
  }
  const Vt = new Float32Array(r * n);
  for (let j = 0; j < n; j++) for (let t = 0; t < r; t++) Vt[t * n + j] = V[j * r + t];
  const A = matmul({ rows: m, cols: r, data: U }, { rows: r, cols: n, data: Vt });
  return { A, sigma };
}

const time = medianMs;

/**
 * Speed-up of a 2-thread LinalgPool (caller + 1 worker) over a 1-thread one, measured by ALTERNATING
 * single runs (1, 2, 2, 1, 1, 2, …) so both see the same machine load; each ratio is the median of the
 * per-pair ratios. Product sizes are those randomizedSvd uses on an m×n plane at k = 50, p = 10
 * (l = 60): A·Ω (m×n times n×l) and Aᵀ·Q (n×m times m×l).
 */
/**
 * Parallel headroom of the machine right now: the same pure-compute loop on 1 thread, then on the
 * calling thread and one worker at once (alternating, median of paired ratios). 2.00 on an idle
 * 2-core machine; less when other processes take CPU. The product speed-up cannot exceed it.
 */
async function headroom(pairs: number): Promise<number> {
  const spin = `(n) => { let x = 0; for (let i = 0; i < n; i++) x += i * 1e-9; return x; }`;
  const work = new Function(`return ${spin}`)() as (n: number) => number;
  const w = new Worker(
    `const { parentPort } = require('node:worker_threads'); const f = ${spin}; parentPort.on('message', (n) => parentPort.postMessage(f(n)));`,
    { eval: true },
  );
  try {
    const N = 4e7;
    const both = async () => {
      const done = new Promise((r) => w.once('message', r));
      w.postMessage(N);
      work(N);
      await done;
    };
    await both();
    const r: number[] = [];
    for (let i = 0; i < pairs; i++) {
      let t = performance.now();
      work(N);
      const single = performance.now() - t;
      t = performance.now();
      await both();
      r.push((2 * single) / (performance.now() - t));
    }
    return median(r);
  } finally {
    await w.terminate();
  }
}

export async function parallelSection(A: Matrix, m: number, n: number, reps: number): Promise<string[]> {
  const l = 60;
  const one = await LinalgPool.create({ workers: 1 });
  const two = await LinalgPool.create({ workers: 2 });
  const lines: string[] = [];
  try {
    const setup = (pool: LinalgPool) => {
      const ws = pool.workspace(4 * (m * n + 2 * Math.max(m, n) * l) + 1024);
      const a = ws.f32(m * n);
      for (let i = 0; i < a.length; i++) a[i] = Math.sin(i * 0.37);
      const x = ws.f32(Math.max(m, n) * l);
      for (let i = 0; i < x.length; i++) x[i] = Math.cos(i * 0.11);
      const c = ws.f32(Math.max(m, n) * l);
      return {
        ws,
        ax: () => ws.gemm(m, l, n, a, 0, n, 1, x, 0, l, c, 0, l, false),
        atq: () => ws.gemm(n, l, m, a, 0, 1, n, x, 0, l, c, 0, l, false),
        sum: () => c.reduce((s, v) => s + v, 0),
      };
    };
    const s1 = setup(one);
    const s2 = setup(two);
    /** Alternating timings of f on pools 1 and 2: median ms of each and median per-pair ratio t1/t2. */
    const alternate = (f1: () => void, f2: () => void, count: number) => {
      f1();
      f2();
      const t1: number[] = [];
      const t2: number[] = [];
      const r: number[] = [];
      for (let i = 0; i < count; i++) {
        const order = i % 2 === 0 ? [0, 1] : [1, 0];
        const t = [0, 0];
        for (const o of order) {
          const s = performance.now();
          (o === 0 ? f1 : f2)();
          t[o] = performance.now() - s;
        }
        t1.push(t[0]);
        t2.push(t[1]);
        r.push(t[0] / t[1]);
      }
      return { ms1: median(t1), ms2: median(t2), ratio: median(r) };
    };
    const flops = 2 * m * n * l;
    const roomBefore = await headroom(reps);
    const pax = alternate(s1.ax, s2.ax, 4 * reps);
    const patq = alternate(s1.atq, s2.atq, 4 * reps);
    s1.ax();
    s2.ax();
    const identical = s1.sum() === s2.sum();
    s1.ws.release();
    s2.ws.release();
    const svd = alternate(
      () => randomizedSvd(A, 50, { seed: 1, backend: one }),
      () => randomizedSvd(A, 50, { seed: 1, backend: two }),
      reps,
    );
    // Measured before and after the timings; the lower one caps what this run could show.
    const room = Math.min(roomBefore, await headroom(reps));
    const gf = (ms: number) => (flops / ms / 1e6).toFixed(1);
    lines.push(
      `Threads (src-main/node/parallel: calling thread + worker_threads over one shared WebAssembly.Memory), f32, alternating runs, load average ${loadavg()[0].toFixed(2)} at the start of this section:`,
      '',
      '| | 1 thread | 2 threads (caller + 1 worker) | speed-up (median of paired ratios) |',
      '|---|---|---|---|',
      `| product A·Ω, ${m}×${n} times ${n}×${l} (GFLOP/s) | ${gf(pax.ms1)} | ${gf(pax.ms2)} | ${pax.ratio.toFixed(2)}× |`,
      `| product Aᵀ·Q, ${n}×${m} times ${m}×${l} (GFLOP/s) | ${gf(patq.ms1)} | ${gf(patq.ms2)} | ${patq.ratio.toFixed(2)}× |`,
      `| randomizedSvd k = 50, ${A.rows}×${A.cols} (ms) | ${svd.ms1.toFixed(1)} | ${svd.ms2.toFixed(1)} | ${svd.ratio.toFixed(2)}× |`,
      `| machine headroom: pure-compute loop, 2 threads vs 1 (lower of before/after; ceiling for the rows above) | | | ${room.toFixed(2)}× |`,
      '',
      `**Target** 2 workers ≥ 1.7× one worker on the product kernel: A·Ω ${pax.ratio.toFixed(2)}×, Aᵀ·Q ${patq.ratio.toFixed(2)}× → ${Math.min(pax.ratio, patq.ratio) >= 1.7 ? 'met' : 'NOT met on this run'}. Results bit-identical between 1 and 2 threads: ${identical ? 'yes' : 'NO'}.`,
      room < 1.8
        ? `Other processes held CPU during this section (headroom ${room.toFixed(2)}× of an ideal 2.00×), so the speed-ups above are capped by the machine, not the pool; re-run on an idle machine.`
        : 'The machine was idle enough for a fair 2-thread figure (headroom ≥ 1.8×).',
      'The randomized SVD gains less: its QR, small SVD (Gram eigen-decomposition or Jacobi) and copies run on the calling thread.',
    );
  } finally {
    await one.close();
    await two.close();
  }
  return lines;
}

/** ‖A − U diag(s) Vᵀ‖_F computed explicitly in f64 on the product kernel. */
function frobError(A: Matrix, res: { s: Float64Array; U: Matrix; V: Matrix }): number {
  const { rows: m, cols: n } = A;
  const k = res.s.length;
  const US = new Float64Array(m * k);
  for (let i = 0; i < m; i++) for (let t = 0; t < k; t++) US[i * k + t] = res.U.data[i * k + t] * res.s[t];
  const Vt = new Float64Array(k * n);
  for (let j = 0; j < n; j++) for (let t = 0; t < k; t++) Vt[t * n + j] = res.V.data[j * k + t];
  const R = matmul({ rows: m, cols: k, data: US }, { rows: k, cols: n, data: Vt }, 'f64');
  let e = 0;
  for (let i = 0; i < m * n; i++) {
    const d = A.data[i] - R.data[i];
    e += d * d;
  }
  return Math.sqrt(e);
}

const optimum = (sigma: Float64Array, k: number) =>
  Math.sqrt(sigma.subarray(k).reduce((s, v) => s + v * v, 0));

/** GFLOP/s of C = A·X (m×n·n×w) on one backend, arrays resident in its workspace. */
function gemmRate(
  backend: Backend,
  m: number,
  n: number,
  w: number,
  f32: boolean,
  trans: boolean,
  reps: number,
): number {
  const bytes = (f32 ? 4 : 8) * (m * n + 2 * Math.max(m, n) * w) + 1024;
  const ws = backend.workspace(bytes);
  try {
    const alloc = (len: number) => (f32 ? ws.f32(len) : ws.f64(len));
    const A = alloc(m * n);
    for (let i = 0; i < A.length; i++) A[i] = Math.sin(i * 0.37);
    const X = alloc(Math.max(n, m) * w);
    for (let i = 0; i < X.length; i++) X[i] = Math.cos(i * 0.11);
    const C = alloc(Math.max(n, m) * w);
    const ms = trans
      ? time(() => ws.gemm(n, w, m, A, 0, 1, n, X, 0, w, C, 0, w, false), reps)
      : time(() => ws.gemm(m, w, n, A, 0, n, 1, X, 0, w, C, 0, w, false), reps);
    return (2 * m * n * w) / ms / 1e6;
  } finally {
    ws.release();
  }
}

async function main() {
  const { wasm } = await initEngine();
  const cpu = cpus()[0]?.model ?? 'unknown CPU';
  log('## Engine (linear algebra)');
  log('');
  log(
    `Machine: ${cpus().length} × ${cpu}, Node ${process.version}; WebAssembly SIMD ${wasm ? 'on' : 'OFF (TS fallback)'}.`,
  );
  log(
    `Load average when the run started: ${loadavg()
      .map((x) => x.toFixed(1))
      .join(', ')} (above ~0.5 the figures below are pessimistic).`,
  );
  log(
    'Inputs: A = U·diag(σ)·Vᵀ stored in f32, σᵢ = 1000/(1+i) + 1 (power-law decay plus a noise floor), U, V orthonormal',
  );
  log('(DCT-II bases with random signs), so the Eckart–Young optimum is known exactly. Times are medians.');
  log(
    'Defaults: oversample p = 10, q = 2 power iterations (3 when k+p > min(m,n)/8), f32 storage, single thread unless stated.',
  );
  log('');

  // ---- 1. ml-matrix baseline (full SVD), measured at 512², extrapolated as m·n·min(m,n).
  const shapes: [number, number][] = QUICK
    ? [[512, 512]]
    : [
        [512, 512],
        [1024, 1024],
        [1500, 2000],
      ];
  const inputs = new Map<string, { A: Matrix; sigma: Float64Array }>();
  for (const [m, n] of shapes) inputs.set(`${m}×${n}`, makeInput(m, n));
  const base = inputs.get('512×512')!;
  const rows = Array.from({ length: 512 }, (_, i) =>
    Array.from(base.A.data.subarray(i * 512, (i + 1) * 512)),
  );
  const t0 = performance.now();
  new MlSVD(new MlMatrix(rows), { autoTranspose: true });
  const ml512 = performance.now() - t0;
  const mlTime = (m: number, n: number) => ml512 * ((m * n * Math.min(m, n)) / 512 ** 3);
  log(
    `ml-matrix 6.x \`new SVD\` (full SVD) on 512×512: ${(ml512 / 1000).toFixed(1)} s measured; larger sizes`,
  );
  log('extrapolated by m·n·min(m,n) (ml-matrix would take minutes there, so it is not run).');
  log('');

  // ---- 2. Randomized SVD: time, ratio to ml-matrix, Frobenius error ÷ optimum.
  log('| input | k | ours (ms) | ml-matrix (s) | speed-up vs ml-matrix | ‖A−A_k‖_F ÷ optimum |');
  log('|---|---|---|---|---|---|');
  let target: { ms: number; ratio: number } | null = null;
  let target200: number | null = null;
  for (const [m, n] of shapes) {
    const { A, sigma } = inputs.get(`${m}×${n}`)!;
    // k = 512 on the largest shape: the top-512 path of `rankfold inspect` (l = 522, Gram small core).
    for (const k of m === 1500 ? [10, 50, 200, 512] : [10, 50, 200]) {
      let res = randomizedSvd(A, k, { seed: 1 });
      const reps = k >= 200 || m * n > 2e6 ? 3 : 5;
      const ms = time(() => {
        res = randomizedSvd(A, k, { seed: 1 });
      }, reps);
      const ratio = frobError(A, res) / optimum(sigma, k);
      const ml = mlTime(m, n);
      const est = m === 512 ? '' : ' (extrap.)';
      log(
        `| ${m}×${n} | ${k} | ${ms.toFixed(1)} | ${(ml / 1000).toFixed(1)}${est} | ${(ml / ms).toFixed(0)}× | ${ratio.toFixed(4)} |`,
      );
      if (m === 1500 && k === 50) target = { ms, ratio };
      if (m === 1500 && k === 200) target200 = ms;
    }
  }
  log('');
  if (target)
    log(
      `**Target** rank-50 of 1500×2000 in ≤ 150 ms with error ≤ 1.01× optimum: ${target.ms.toFixed(0)} ms, ${target.ratio.toFixed(4)}× → ${target.ms <= 150 && target.ratio <= 1.01 ? 'met' : 'NOT met on this run'}.`,
    );
  if (target200 !== null)
    log(
      `**Target** rank-200 of 1500×2000 well under a second: ${target200.toFixed(0)} ms → ${target200 < 1000 ? 'met' : 'NOT met on this run'}.`,
    );
  log('');

  // ---- 3. Power iteration vs block Krylov at comparable cost (1500×2000 or the largest input, k = 50).
  const big = inputs.get(QUICK ? '512×512' : '1500×2000')!;
  const k = 50;
  log(`Power iteration vs block Krylov (Musco & Musco 2015), ${big.A.rows}×${big.A.cols}, k = ${k}, p = 10.`);
  log(
    'Passes over A: power q → 2q+2; Krylov q → 2q+2 as well, but its last pass and its small SVD are (q+1)× wider.',
  );
  log('');
  log('| method | q | ms | error ÷ optimum |');
  log('|---|---|---|---|');
  const cmp: { name: string; ms: number; ratio: number }[] = [];
  for (const [method, q] of [
    ['power', 1],
    ['power', 2],
    ['power', 3],
    ['power', 4],
    ['power', 5],
    ['power', 6],
    ['krylov', 1],
    ['krylov', 2],
  ] as const) {
    let res = randomizedSvd(big.A, k, { method, powerIters: q, seed: 1 });
    const ms = time(() => {
      res = randomizedSvd(big.A, k, { method, powerIters: q, seed: 1 });
    }, 3);
    const ratio = frobError(big.A, res) / optimum(big.sigma, k);
    cmp.push({ name: `${method} q=${q}`, ms, ratio });
    log(`| ${method} | ${q} | ${ms.toFixed(1)} | ${ratio.toFixed(5)} |`);
  }
  log('');
  // Verdict at equal cost: for each Krylov run, the most accurate power run that took no longer.
  for (const kr of cmp.filter((c) => c.name.startsWith('krylov'))) {
    const rivals = cmp.filter((c) => c.name.startsWith('power') && c.ms <= kr.ms);
    const best = rivals.sort((a, b) => a.ratio - b.ratio)[0];
    log(
      best
        ? `- ${kr.name} (${kr.ms.toFixed(0)} ms, ${kr.ratio.toFixed(5)}) vs the most accurate power run that took no longer, ${best.name} (${best.ms.toFixed(0)} ms, ${best.ratio.toFixed(5)}): ${kr.ratio < best.ratio ? 'Krylov wins at equal cost' : 'power iteration wins at equal cost'}.`
        : `- ${kr.name} (${kr.ms.toFixed(0)} ms): faster than every power run listed.`,
    );
  }
  log('');

  // ---- 4. Product kernel GFLOP/s (single thread) and the TS fallback as baseline.
  const [gm, gn, gw] = QUICK ? [512, 512, 64] : [1500, 2000, 64];
  const wasmB = defaultBackend();
  log(`Product kernel, ${gm}×${gn} times ${gn}×${gw} (A·X) and Aᵀ·Y, GFLOP/s (one thread):`);
  log('');
  log('| kernel | A·X | Aᵀ·Y | ratio to TS fallback (A·X) |');
  log('|---|---|---|---|');
  const ts32 = gemmRate(tsBackend, gm, gn, gw, true, false, 2);
  const ts64 = gemmRate(tsBackend, gm, gn, gw, false, false, 2);
  const w32 = gemmRate(wasmB, gm, gn, gw, true, false, 7);
  const w32t = gemmRate(wasmB, gm, gn, gw, true, true, 7);
  const w64 = gemmRate(wasmB, gm, gn, gw, false, false, 7);
  const w64t = gemmRate(wasmB, gm, gn, gw, false, true, 7);
  log(`| WebAssembly SIMD f32x4 | ${w32.toFixed(1)} | ${w32t.toFixed(1)} | ${(w32 / ts32).toFixed(1)}× |`);
  log(`| WebAssembly SIMD f64x2 | ${w64.toFixed(1)} | ${w64t.toFixed(1)} | ${(w64 / ts64).toFixed(1)}× |`);
  log(`| TypeScript fallback f32 / f64 | ${ts32.toFixed(2)} / ${ts64.toFixed(2)} | — | 1× |`);
  log('');

  // ---- 5. Workers: 1 vs 2 on the product kernel and on the whole randomized SVD.
  for (const line of await parallelSection(big.A, gm, gn, QUICK ? 5 : 9)) log(line);
  log('');

  // ---- 6. Full spectrum (singularValues).
  log(
    'Full spectrum `singularValues` (all σ; f64 Gram and Householder tridiagonalisation on WebAssembly, QL in TS; 2048² is a cold single run):',
  );
  log('');
  log('| input | ms |');
  log('|---|---|');
  for (const N of QUICK ? [512] : [512, 1024, 2048]) {
    const A = N === 512 ? base.A : makeInput(N, N).A;
    const ms = N >= 2048 ? time(() => singularValues(A), 1, false) : time(() => singularValues(A), 1);
    log(`| ${N}×${N} | ${ms.toFixed(0)} |`);
  }
  log('');
  log(
    'Load note: figures come from whatever else ran on the machine at the time; re-run on a quiet machine for release numbers.',
  );

  const dir = process.env.RANKFOLD_BENCH_OUT ?? 'docs/bench';
  mkdirSync(dir, { recursive: true });
  writeFileSync(join(dir, '10-engine.md'), `${out.join('\n')}\n`);
  console.error(`wrote ${join(dir, '10-engine.md')}`);
}

if (process.env.RANKFOLD_BENCH_FOCUS === 'parallel') {
  // Only the threads section, printed and not written (node dist/bench/engine.bench.js with this set).
  await initEngine();
  const [m, n] = QUICK ? [512, 512] : [1500, 2000];
  for (const line of await parallelSection(makeInput(m, n).A, m, n, QUICK ? 5 : 9)) console.log(line);
} else await main();
