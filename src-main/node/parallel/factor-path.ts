/**
 * Process set-up for the whole-plane factorisation fast path (`compress --tile 0`, `--rank` with
 * `--tile auto`, the app): the WebAssembly kernels compiled once per process and warmed up before any
 * timed factorisation, and — on the main thread of a machine with at least 2 cores — the shared
 * thread pool registered as the whole-plane backend (engine/lowrank/factorise.ts `setPlaneBackend`).
 *
 * Warm-up: V8 first runs WebAssembly and JS in baseline tiers and optimises functions once they are
 * hot (common practice knowledge of V8's tiering, not measured per tier here); a first rank-50
 * factorisation of a 1500×2000 plane measured ≈ 2× slower than the second in the same process. A few
 * small factorisations at start-up take that cost outside `timings.factorMs`.
 *
 * Not in batch worker threads (isMainThread false): those already run one job per core, and a pool each
 * would oversubscribe the cores. A worker thread that is the only heavy job of its moment (the app's scan
 * session, src-main/node/workers/scan-session.ts) opts in with `allowFactorPool` at its start.
 * RANKFOLD_LINALG_WORKERS=1 keeps the factorisation on one thread
 * (results are bit-identical either way: the pool splits products by rows in multiples of the
 * kernels' register block).
 */
import { availableParallelism } from 'node:os';
import { isMainThread } from 'node:worker_threads';
import { type Backend, defaultBackend, initEngine, Rng } from '../../engine/linalg';
import { reserveOutputs } from '../../engine/linalg/output-arrays';
import { randomizedSvdBytes } from '../../engine/linalg/randomized-svd';
import { factorPlane, planeOversample, setPlaneBackend } from '../../engine/lowrank/factorise';
import { sharedLinalgPool } from './pool';

/** Warm-up factorisations: enough calls on a plane big enough that every product is split over the threads. */
const WARM_ROUNDS = 3;
const WARM_ROWS = 320;
const WARM_COLS = 256;
const WARM_RANK = 50;
const WARM_SEED = 12;

let ready: Promise<Backend> | null = null;
let poolInWorker = false;

/** Let this worker thread start the pool too (call at the thread's start, before `prepareFactorPath`). */
export function allowFactorPool(): void {
  poolInWorker = true;
}

/** Threads for whole-plane factorisations: RANKFOLD_LINALG_WORKERS (1…16), else 2 when there are ≥ 2 cores. */
function planeThreads(): number {
  const env = Number(process.env.RANKFOLD_LINALG_WORKERS);
  if (Number.isInteger(env) && env >= 1 && env <= 16) return env;
  return availableParallelism() >= 2 ? 2 : 1;
}

/** The plane about to be factorised, so its workspace can be reserved before the timer starts. */
export interface PlaneHint {
  rows: number;
  cols: number;
  /** Largest rank wanted (the factorisation asks one more). Default 64. */
  rank?: number;
}

/**
 * Compile the kernels, start the pool where it helps, register it for whole planes and warm both up
 * (once per process), then reserve memory for `hint`'s plane: its workspace, and touched arrays for its
 * U and V (engine/linalg/output-arrays.ts). Resolves to the backend whole planes use.
 */
export async function prepareFactorPath(hint?: PlaneHint): Promise<Backend> {
  ready ??= (async () => {
    await initEngine();
    let backend: Backend = defaultBackend();
    let pooled = false;
    const threads = planeThreads();
    if ((isMainThread || poolInWorker) && threads > 1)
      try {
        backend = await sharedLinalgPool({ workers: threads });
        pooled = true;
      } catch {
        // No worker file (unbuilt tree) or no SharedArrayBuffer: one thread gives the same results.
      }
    setPlaneBackend(pooled ? backend : undefined);
    await warmUp(backend);
    return backend;
  })();
  const backend = await ready;
  if (hint && Math.min(hint.rows, hint.cols) >= 2) {
    const r = Math.min(hint.rows, hint.cols);
    const k = Math.min(r, (hint.rank ?? 64) + 1);
    const l = k + planeOversample(k, r);
    backend.reserve?.(randomizedSvdBytes(hint.rows, hint.cols, k, l, 1, true));
    // U (rows×k) and V (cols×k), touched now rather than page by page inside the factorisation.
    reserveOutputs([hint.rows * k, hint.cols * k]);
  }
  return backend;
}

/**
 * A few whole-plane factorisations through factorPlane itself (rank 50, so the randomized f32 path with
 * its check, on `backend`): the same kernels and JS as a scan's. The plane has an image-like spectrum —
 * smooth shading plus seeded noise, so σ₅₁/σ₁ ≈ 4e-3 (numpy) — because a nearly low-rank plane sends the small
 * SVD down its refinement branch (range-projection.ts) and leaves the branch scans take cold.
 */
async function warmUp(backend: Backend): Promise<void> {
  const plane = new Float32Array(WARM_ROWS * WARM_COLS);
  const rng = new Rng(WARM_SEED);
  for (let i = 0; i < WARM_ROWS; i++)
    for (let j = 0; j < WARM_COLS; j++)
      plane[i * WARM_COLS + j] = 128 + 60 * Math.sin(0.05 * i * (1 + (j % 7))) + 24 * rng.uniform();
  for (let r = 0; r < WARM_ROUNDS; r++) {
    // Between rounds the thread answers its messages (a scan session's first job posts its progress).
    await new Promise((resolve) => setImmediate(resolve));
    factorPlane(plane, WARM_COLS, WARM_ROWS, {
      tile: 0,
      meanRemoval: false,
      meanStep: 1,
      maxRank: WARM_RANK,
      seed: r + 1,
      backend,
    });
  }
}
