// Whole-plane factorisation in the real CLI path: `npm run bench factor-path`. Writes section
// 11-factor-path.md (see scripts/bench.mjs). Issue #12 item 3 / target "engine in the real path":
// `compress --rank 50 --tile 0` of a 1500×2000 grey scan, `timings.factorMs` against scikit-learn's
// `randomized_svd(k=50, n_oversamples=10, n_iter=2)` on the same pixels in the same run, and the
// Frobenius error against the Eckart–Young optimum √Σ_{i>50} σᵢ² from a full LAPACK SVD (numpy.linalg.svd,
// dgesdd) of the same matrix.
//
// The image: test/fixtures/images/camera.png (512², scikit-image sample data, see its SOURCES.md) resized
// to 2000×1500 by bilinear interpolation computed here in TypeScript (pixel centres aligned, rounded to
// 8 bits), so the pixels do not depend on the libvips version. Written as a grey PNG for the CLI and as
// raw bytes for Python.
//
// Baselines: Debian python3-sklearn run by /usr/bin/python3 (installed here with apt-get when missing —
// never by npm test). Its float64 run is the target (numpy's default float for an image); float32 is
// reported beside it.
import { execFileSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { cpus, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { initEngine, type Matrix, randomizedSvd, wasmBackend } from '../src-main/engine/linalg';
import type { RandomizedSvdOptions } from '../src-main/engine/linalg/randomized-svd';
import {
  factorPlane,
  planeOversample,
  planeSvdOptions,
  setPlaneBackend,
} from '../src-main/engine/lowrank/factorise';
import { prepareFactorPath } from '../src-main/node/parallel/factor-path';
import { LinalgPool } from '../src-main/node/parallel/pool';
import { stageTable } from './factor-path-parts';
import { ensureSklearn, sklearnScript, startSklearn } from './factor-path-sklearn';
import { median, medianMs } from './timing';

const W = 2000;
const H = 1500;
const K = 50;
const RUNS = Number(process.env.RANKFOLD_FACTOR_RUNS ?? 7);
/** Highest 1-min load average at which the ratios are judged (2 cores; common practice for this bench, not a standard). */
const JUDGE_MAX_LOAD = 2;
/** "OpenBLAS 0.3.21 (Haswell, 2 threads)" from threadpoolctl's report. */
const blasLabel = (b: { api: string; version: string | null; arch: string | null; threads: number }[]) =>
  b.length
    ? b
        .map((i) => `${i.api} ${i.version ?? ''} (${i.arch ?? 'unknown kernels'}, ${i.threads} threads)`)
        .join(', ')
    : 'not reported (threadpoolctl missing)';
const out: string[] = [];
const log = (s = '') => {
  out.push(s);
  console.log(s);
};
const load = () =>
  loadavg()
    .map((x) => x.toFixed(2))
    .join(' / ');

/** camera.png resized to W×H by bilinear interpolation (pixel centres aligned), rounded to 8 bits. */
async function makeImage(): Promise<Uint8Array> {
  const { data, info } = await sharp('test/fixtures/images/camera.png')
    .greyscale()
    .raw()
    .toBuffer({ resolveWithObject: true });
  const sw = info.width;
  const sh = info.height;
  const px = new Uint8Array(W * H);
  for (let y = 0; y < H; y++) {
    const fy = ((y + 0.5) * sh) / H - 0.5;
    const y0 = Math.max(0, Math.floor(fy));
    const y1 = Math.min(sh - 1, y0 + 1);
    const wy = Math.min(1, Math.max(0, fy - y0));
    for (let x = 0; x < W; x++) {
      const fx = ((x + 0.5) * sw) / W - 0.5;
      const x0 = Math.max(0, Math.floor(fx));
      const x1 = Math.min(sw - 1, x0 + 1);
      const wx = Math.min(1, Math.max(0, fx - x0));
      const top = (1 - wx) * data[y0 * sw + x0] + wx * data[y0 * sw + x1];
      const bottom = (1 - wx) * data[y1 * sw + x0] + wx * data[y1 * sw + x1];
      px[y * W + x] = Math.round((1 - wy) * top + wy * bottom);
    }
  }
  return px;
}

interface CliReport {
  timings: { factorMs: number };
  errors: { frobenius: number; frobeniusOptimal: number };
  psnr: number;
}

function runCli(
  png: string,
  rkf: string,
  env: NodeJS.ProcessEnv = process.env,
): { r: CliReport; wallMs: number } {
  const t = performance.now();
  const json = execFileSync(
    process.execPath,
    ['bin/rankfold.mjs', 'compress', png, '-o', rkf, '--rank', String(K), '--tile', '0', '--json', '--force'],
    { encoding: 'utf8', env, stdio: ['ignore', 'pipe', 'ignore'], maxBuffer: 64 << 20 },
  );
  return { r: JSON.parse(json) as CliReport, wallMs: performance.now() - t };
}

/** ‖A − U_k·diag(s_k)·V_kᵀ‖_F in f64. */
function errorAt(px: Uint8Array, f: { s: Float64Array; U: Matrix; V: Matrix }, k: number): number {
  const r = f.s.length;
  const row = new Float64Array(W);
  let e = 0;
  for (let i = 0; i < H; i++) {
    row.fill(0);
    for (let t = 0; t < k; t++) {
      const u = f.U.data[i * r + t] * f.s[t];
      for (let j = 0; j < W; j++) row[j] += u * f.V.data[j * r + t];
    }
    for (let j = 0; j < W; j++) {
      const d = px[i * W + j] - row[j];
      e += d * d;
    }
  }
  return Math.sqrt(e);
}

const time = (fn: () => void, reps: number) => medianMs(fn, reps, false);

/** Child mode: the first call of the pre-change settings (f64, q = 4, one thread) in a fresh process. */
async function coldChild(raw: string): Promise<void> {
  const px = readFileSync(raw);
  await initEngine();
  const a: Matrix = { rows: H, cols: W, data: Float64Array.from(px) };
  const t = performance.now();
  randomizedSvd(a, K + 1, { seed: 1, powerIters: 4, precision: 'f64' });
  console.log(JSON.stringify({ coldMs: performance.now() - t }));
}

async function main(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'rankfold-factor-'));
  try {
    const px = await makeImage();
    const png = join(dir, 'camera-2000x1500.png');
    const raw = join(dir, 'camera-2000x1500.u8');
    await sharp(Buffer.from(px), { raw: { width: W, height: H, channels: 1 } })
      .toColourspace('b-w')
      .png()
      .toFile(png);
    writeFileSync(raw, px);
    writeFileSync(join(dir, 'sk.py'), sklearnScript(H, W));
    const loadBefore = load();

    log('## Whole-plane factorisation in the CLI path (issue #12 item 3)');
    log('');
    log(
      `Input: test/fixtures/images/camera.png resized to ${W}×${H} (bilinear, computed in TypeScript, 8-bit grey). ` +
        `Command: \`rankfold compress IN -o OUT.rkf --rank ${K} --tile 0 --json\`, ${RUNS} fresh processes, ` +
        '`timings.factorMs` (median). Baseline in the same run: scikit-learn `randomized_svd(k=50, n_oversamples=10, n_iter=2)` ' +
        `on the same pixels in one warmed-up Python process, one timed run right after each CLI run (median of ${RUNS}). Optimum: √Σ_{i>${K}} σᵢ² ` +
        'from `numpy.linalg.svd` (LAPACK dgesdd) of the same float64 matrix.',
    );
    log('');
    // The load gate reads the 1-min load average before the rounds (and before scikit-learn starts): read
    // during them it counts this bench's own two threads, and on 2 cores it then always exceeded the gate.
    const startLoad = loadavg()[0];
    const missing = ensureSklearn();
    const sk = missing ? null : await startSklearn(join(dir, 'sk.py'), raw, K);
    // Interleaved rounds: one fresh CLI process, then one scikit-learn run, each with the 1-min load average
    // (reported for context only).
    const cli: { r: CliReport; wallMs: number }[] = [];
    const skMs: number[] = [];
    const paired: number[] = [];
    const loads: number[] = [];
    for (let i = 0; i < RUNS; i++) {
      loads.push(loadavg()[0]);
      const c = runCli(png, join(dir, 'out.rkf'));
      cli.push(c);
      if (sk) {
        const ms = await sk.run();
        skMs.push(ms);
        paired.push(c.r.timings.factorMs / ms);
      }
    }
    const cli1: { r: CliReport; wallMs: number }[] = [];
    for (let i = 0; i < Math.min(RUNS, 3); i++)
      cli1.push(runCli(png, join(dir, 'out1.rkf'), { ...process.env, RANKFOLD_LINALG_WORKERS: '1' }));
    sk?.close();
    const sk1 = sk?.info;
    const rkf2 = readFileSync(join(dir, 'out.rkf'));
    const rkf1 = readFileSync(join(dir, 'out1.rkf'));
    const factorMs = median(cli.map((c) => c.r.timings.factorMs));
    const factorMs1 = median(cli1.map((c) => c.r.timings.factorMs));

    // In-process: the same code path (prepareFactorPath + factorPlane), for the exact error and a breakdown.
    const backend = await prepareFactorPath();
    const plane = Float32Array.from(px);
    const fp = factorPlane(plane, W, H, { tile: 0, meanRemoval: false, meanStep: 0.25, maxRank: K }).tiles[0];
    const ourErr = errorAt(px, fp, K);
    const P = planeOversample(K + 1, H);
    let energy = 0;
    for (const v of px) energy += v * v;
    /** The CLI path's settings (factorise.ts planeSvdOptions: f32, q = 2, the 1.01× check, the reuse finish). */
    const cliOptions = (
      b: NonNullable<RandomizedSvdOptions['backend']>,
      finish: 'reuse' | 'project' = 'reuse',
    ) => ({
      ...planeSvdOptions(K + 1, H, { seed: 1, energy, backend: b }),
      finish,
    });
    const check = randomizedSvd({ rows: H, cols: W, data: plane }, K + 1, cliOptions(backend));

    if (!sk1) {
      log(`**scikit-learn not available:** ${missing}. Only Rankfold's figures are shown.`);
      log('');
    }
    const skF64 = sk1 ? median(skMs) : Number.NaN;
    const opt = sk1?.optimum ?? Number.NaN;
    const ratio = factorMs / skF64;
    // On 2 cores a load above JUDGE_MAX_LOAD before the rounds (other processes) slows the two sides
    // unevenly: no ratio is judged then.
    const judged = startLoad <= JUDGE_MAX_LOAD;
    const x = (r: number) => (judged ? `${r.toFixed(2)}×` : 'not judged');
    log('| | factorisation ms (median) | ÷ scikit-learn f64 | Frobenius error ÷ optimum |');
    log('|---|---|---|---|');
    log(
      `| Rankfold CLI, \`timings.factorMs\`, ${backend.label} | ${factorMs.toFixed(1)} (runs: ${cli.map((c) => c.r.timings.factorMs.toFixed(0)).join(', ')}) | ` +
        `**${x(ratio)}**${judged ? ` (median of paired ratios ${x(median(paired))})` : ''} | ${(ourErr / opt).toFixed(4)} (CLI's own pre-quantisation figure: ${(cli[0].r.errors.frobeniusOptimal / opt).toFixed(4)}) |`,
    );
    log(
      `| Rankfold CLI, RANKFOLD_LINALG_WORKERS=1 | ${factorMs1.toFixed(1)} (runs: ${cli1.map((c) => c.r.timings.factorMs.toFixed(0)).join(', ')}) | ${x(factorMs1 / skF64)} | same factors |`,
    );
    if (sk1) {
      log(
        `| scikit-learn ${sk1.sklearn} \`randomized_svd\`, float64 (numpy ${sk1.numpy}; BLAS: ${blasLabel(sk1.blas)}), one run after each CLI run | ${skF64.toFixed(1)} (runs: ${skMs.map((x) => x.toFixed(0)).join(', ')}) | 1× | ${(sk1.f64_error / opt).toFixed(4)} |`,
      );
      log(
        `| same, float32 (median of 5 at start-up) | ${sk1.f32_ms.toFixed(1)} | ${x(sk1.f32_ms / skF64)} | ${(sk1.f32_error / opt).toFixed(4)} |`,
      );
    }
    log('');
    const met = factorMs <= skF64 && ourErr / opt <= 1.01;
    log(
      `Target (factorMs ≤ scikit-learn's, error ≤ 1.01× optimum): **${judged ? (met ? 'met' : 'not met') : `not judged (load average above ${JUDGE_MAX_LOAD} before the rounds)`}** in this run ` +
        `(judged on the 1-min load average read before the rounds, ${startLoad.toFixed(2)}, so this bench's own two threads do not count; ` +
        `at the ${RUNS} rounds, for context: ${loads.map((x) => x.toFixed(1)).join(', ')}). ` +
        `Optimum √Σ_{i>${K}}σᵢ² = ${opt.toFixed(1)} (σ_${K + 1} = ${sk1?.sigma_k1.toFixed(1)}; full SVD ${sk1?.full_svd_ms.toFixed(0)} ms). ` +
        `Rankfold's error is of its rank-${K} truncation before quantisation, in f64. The accuracy check ran ${check.powerIters} power steps ` +
        `(oversampling p = ${P}, reuse finish: 5 products with A, estimate ${check.ratioEstimate.toFixed(4)}). The .rkf files from 2 threads and 1 thread are ` +
        `${Buffer.compare(rkf1, rkf2) === 0 ? 'byte-identical' : '**different**'}. Whole CLI process, median wall: ${median(cli.map((c) => c.wallMs)).toFixed(0)} ms.`,
    );
    log('');
    log(
      'Outside `factorMs`, once per process before the timer: the kernels are compiled, the pool thread started, ' +
        "the plane's workspace reserved and touched, and three small rank-50 factorisations (320×256) run to warm " +
        'the JIT (node/parallel/factor-path.ts). Inside it: everything of the factorisation itself — the test matrix, ' +
        'every product, orthonormalisation, the accuracy check and the small SVD.',
    );
    log('');

    // Breakdown on the same pixels, in this process (medians of 5 after one call; the first row is a fresh process).
    const a64: Matrix = { rows: H, cols: W, data: Float64Array.from(px) };
    const a32: Matrix = { rows: H, cols: W, data: plane };
    const cold = JSON.parse(
      execFileSync(process.execPath, [process.argv[1]], {
        encoding: 'utf8',
        env: { ...process.env, RANKFOLD_FACTOR_CHILD: raw },
      }),
    ) as { coldMs: number };
    const wasm = wasmBackend() ?? undefined;
    const one = await LinalgPool.create({ workers: 1 });
    /** The fast path's settings: f32, q = 2, oversampling P, the 1.01× accuracy check. */
    const checked = (b: NonNullable<RandomizedSvdOptions['backend']>, finish?: 'reuse' | 'project') =>
      randomizedSvd(a32, K + 1, cliOptions(b, finish));
    const rows: [string, () => void][] = [
      [
        'f64, q = 4, one thread (the previous CLI settings), warm',
        () => randomizedSvd(a64, K + 1, { seed: 1, powerIters: 4, precision: 'f64', backend: wasm }),
      ],
      [
        'f64, q = 2, one thread',
        () => randomizedSvd(a64, K + 1, { seed: 1, powerIters: 2, precision: 'f64', backend: wasm }),
      ],
      [
        'f32, q = 2, one thread',
        () => randomizedSvd(a32, K + 1, { seed: 1, powerIters: 2, precision: 'f32', backend: wasm }),
      ],
      [
        `f32, q = 2 + accuracy check, p = ${P}, projection finish (6 products), ${backend.label}`,
        () => checked(backend, 'project'),
      ],
      [
        `f32, q = 2 + accuracy check, p = ${P}, reuse finish (5 products), pool of 1 thread`,
        () => checked(one),
      ],
      [
        `f32, q = 2 + accuracy check, p = ${P}, reuse finish, ${backend.label} (the CLI path)`,
        () => checked(backend),
      ],
      [
        `factorPlane (its energy pass + the above), ${backend.label}`,
        () => factorPlane(plane, W, H, { tile: 0, meanRemoval: false, meanStep: 0.25, maxRank: K }),
      ],
    ];
    log(
      `Breakdown, same pixels, rank ${K + 1} (the CLI asks one beyond the cap for σ_{k+1}), oversampling p = 10 unless stated (the CLI's is p = ${P}), in one process (median of 5 after a first call):`,
    );
    log('');
    log('| configuration | ms |');
    log('|---|---|');
    log(
      `| f64, q = 4, one thread, first call in a fresh process (kernels and memory cold; the previous CLI path) | ${cold.coldMs.toFixed(1)} |`,
    );
    for (const [name, fn] of rows) {
      fn();
      log(`| ${name} | ${time(fn, 5).toFixed(1)} |`);
    }
    log('');
    log(
      `Stages of the CLI path (f32, q = 2, reuse finish, l = ${K + 1 + P}), each timed on its own in one process (factor-path-parts.ts; median of 5 after a first pass):`,
    );
    for (const [label, b] of [
      [backend.label, backend],
      ['pool of 1 thread', one],
    ] as const) {
      log('');
      log(`${label}:`);
      log('');
      for (const row of stageTable(plane, H, W, K + 1, K + 1 + P, b)) log(row);
    }
    await one.close();
    setPlaneBackend(undefined);
    log('');
    log(
      `Machine: ${cpus().length} × ${cpus()[0]?.model ?? 'unknown CPU'}, Node ${process.version}. Load average (1/5/15 min) before: ${loadBefore}; after: ${load()}. ` +
        'The machine is shared; every ratio above is from this one run.',
    );
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
  const outDir = process.env.RANKFOLD_BENCH_OUT ?? 'docs/bench';
  mkdirSync(outDir, { recursive: true });
  writeFileSync(join(outDir, '11-factor-path.md'), `${out.join('\n')}\n`);
  console.error(`wrote ${join(outDir, '11-factor-path.md')}`);
  process.exit(0);
}

if (process.env.RANKFOLD_FACTOR_CHILD) await coldChild(process.env.RANKFOLD_FACTOR_CHILD);
else await main();
