// The scikit-learn side of the factor-path bench (factor-path.bench.ts): Debian python3-sklearn run by
// /usr/bin/python3 as a server in its own process, and its BLAS as threadpoolctl reports it, so the
// comparison says what it is against (e.g. OpenBLAS with its Haswell kernels on 2 threads).
import { spawn, spawnSync } from 'node:child_process';
import { createInterface } from 'node:readline';

/**
 * scikit-learn as a server: it loads the pixels, reports versions, the LAPACK optimum and float32 figures, runs
 * one untimed warm-up, then answers each line of stdin (a seed) with one timed float64 randomized_svd — so its
 * runs interleave with the CLI runs and both see the same machine load.
 */
export function sklearnScript(h: number, w: number): string {
  return `
import json, sys, time
import numpy as np, scipy, sklearn
from sklearn.utils.extmath import randomized_svd
raw, k = sys.argv[1], int(sys.argv[2])
a = np.fromfile(raw, dtype=np.uint8).reshape(${h}, ${w})
res = {"numpy": np.__version__, "scipy": scipy.__version__, "sklearn": sklearn.__version__, "blas": []}
try:
    from threadpoolctl import threadpool_info
    res["blas"] = [{"api": i.get("internal_api"), "version": i.get("version"), "arch": i.get("architecture"), "threads": i.get("num_threads")} for i in threadpool_info() if i.get("user_api") == "blas"]
except Exception:
    pass
A = a.astype(np.float64)
t = time.perf_counter(); s = np.linalg.svd(A, compute_uv=False); res["full_svd_ms"] = (time.perf_counter() - t) * 1e3
res["optimum"] = float(np.sqrt(np.sum(s[k:] ** 2)))
res["sigma_k1"] = float(s[k])
def err(U, S, Vt):
    return float(np.linalg.norm(A - (U.astype(np.float64) * S.astype(np.float64)) @ Vt.astype(np.float64)))
U, S, Vt = randomized_svd(A, k, n_oversamples=10, n_iter=2, random_state=0)
res["f64_error"] = err(U, S, Vt)
X = a.astype(np.float32)
randomized_svd(X, k, n_oversamples=10, n_iter=2, random_state=0)
ts = []
for r in range(5):
    t = time.perf_counter(); U, S, Vt = randomized_svd(X, k, n_oversamples=10, n_iter=2, random_state=r); ts.append((time.perf_counter() - t) * 1e3)
res["f32_ms"] = sorted(ts)[2]
res["f32_error"] = err(U, S, Vt)
print(json.dumps(res), flush=True)
for line in sys.stdin:
    t = time.perf_counter(); randomized_svd(A, k, n_oversamples=10, n_iter=2, random_state=int(line)); ms = (time.perf_counter() - t) * 1e3
    print(json.dumps({"ms": ms}), flush=True)
`;
}

interface SkInfo {
  numpy: string;
  scipy: string;
  sklearn: string;
  optimum: number;
  sigma_k1: number;
  full_svd_ms: number;
  f64_error: number;
  f32_ms: number;
  f32_error: number;
  /** BLAS libraries numpy loaded (threadpoolctl), e.g. OpenBLAS 0.3.21, Haswell kernels, 2 threads. */
  blas: { api: string; version: string | null; arch: string | null; threads: number }[];
}

/** The scikit-learn server (see PY): its start-up figures, and one timed float64 run per call of `run`. */
export async function startSklearn(script: string, raw: string, k: number) {
  const child = spawn('/usr/bin/python3', [script, raw, String(k)], {
    stdio: ['pipe', 'pipe', 'inherit'],
    env: { ...process.env, PYTHONHASHSEED: '0' },
  });
  const lines = createInterface({ input: child.stdout })[Symbol.asyncIterator]();
  const next = async () => {
    const r = await lines.next();
    if (r.done) throw new Error('scikit-learn server stopped');
    return JSON.parse(r.value);
  };
  const info = (await next()) as SkInfo;
  let seed = 0;
  return {
    info,
    run: async (): Promise<number> => {
      child.stdin.write(`${++seed}\n`);
      return ((await next()) as { ms: number }).ms;
    },
    close: () => child.stdin.end(),
  };
}

/** Install Debian python3-sklearn with apt-get when /usr/bin/python3 cannot import it (bench only). */
export function ensureSklearn(): string | undefined {
  const has = () => spawnSync('/usr/bin/python3', ['-c', 'import sklearn, scipy']).status === 0;
  if (has()) return undefined;
  console.error('python3-sklearn missing: apt-get install python3-sklearn');
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
  const lock = ['-o', 'DPkg::Lock::Timeout=300'];
  spawnSync('apt-get', [...lock, 'update', '-qq'], { env, stdio: 'inherit' });
  const r = spawnSync('apt-get', [...lock, 'install', '-y', '-qq', 'python3-sklearn'], {
    env,
    stdio: 'inherit',
  });
  return has() ? undefined : `python3-sklearn could not be installed (apt-get exit ${r.status})`;
}
