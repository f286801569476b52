// The Gram-matrix SVD (engine/linalg/gram-svd.ts) against the one-sided Jacobi SVD, and its own properties.
import { describe, expect, it } from 'vitest';
import { initEngine, jacobiSvd, Rng, setWasmDisabled } from '../../src-main/engine/linalg';
import { gramSvdColumns } from '../../src-main/engine/linalg/gram-svd';

const EPS = 2.220446049250313e-16;

/** An m×n matrix with singular values 10^(−j·decay) (j = 0…), from a seeded Gaussian: Q₁·diag·Q₂ᵀ. */
function graded(m: number, n: number, decay: number, seed: number): Float64Array {
  const rng = new Rng(seed);
  const a = new Float64Array(m * n);
  const k = Math.min(m, n);
  // A sum of k rank-one terms with random (not orthogonal) vectors still has a spread-out spectrum.
  for (let j = 0; j < k; j++) {
    const x = Float64Array.from({ length: m }, () => rng.normal());
    const y = Float64Array.from({ length: n }, () => rng.normal());
    const w = 10 ** (-j * decay);
    for (let r = 0; r < m; r++) for (let c = 0; c < n; c++) a[r * n + c] += w * x[r] * y[c];
  }
  return a;
}

describe('gramSvdColumns', () => {
  it.each([
    [64, 64],
    [32, 32],
    [40, 17],
    [17, 40],
  ])('%i×%i: σ as Jacobi within k·ε·σ₁²/σᵢ, U and V orthonormal where σ counts, A rebuilt', (m, n) => {
    const data = graded(m, n, 0.08, m * 100 + n);
    const k = Math.min(m, n);
    const { s, u, v } = gramSvdColumns({ rows: m, cols: n, data });
    const ref = jacobiSvd({ rows: m, cols: n, data });
    expect(s.length).toBe(k);
    for (let i = 1; i < k; i++) expect(s[i]).toBeLessThanOrEqual(s[i - 1]);
    // Weyl on G = AᵀA: |λ̂ − σ²| ≲ c·k·ε·σ₁², so |σ̂ − σ| ≲ c·k·ε·σ₁²/σ (GVL §8.1, from memory; c = 4 here).
    for (let i = 0; i < k; i++)
      expect(Math.abs(s[i] - ref.s[i])).toBeLessThanOrEqual(
        (4 * k * EPS * ref.s[0] ** 2) / ref.s[i] + 1e-300,
      );
    const dot = (x: Float64Array, i: number, j: number, len: number) => {
      let d = 0;
      for (let r = 0; r < len; r++) d += x[i * len + r] * x[j * len + r];
      return d;
    };
    // Components above 1e-4·σ₁ (more than half of them; the weights fall to 10^(−0.08·(k−1)), 1e-5 at k = 64).
    const kept = Array.from(s).filter((x) => x >= 1e-4 * s[0]).length;
    expect(kept).toBeGreaterThan(k / 2);
    for (let i = 0; i < kept; i++)
      for (let j = 0; j <= i; j++) {
        expect(Math.abs(dot(u, i, j, m) - (i === j ? 1 : 0))).toBeLessThan(1e-8);
        expect(Math.abs(dot(v, i, j, n) - (i === j ? 1 : 0))).toBeLessThan(1e-10);
      }
    // Σ σᵢ uᵢ vᵢᵀ over all triplets rebuilds A to rounding of its largest entries.
    let err = 0;
    let norm = 0;
    for (let r = 0; r < m; r++)
      for (let c = 0; c < n; c++) {
        let x = 0;
        for (let i = 0; i < k; i++) x += s[i] * u[i * m + r] * v[i * n + c];
        err = Math.max(err, Math.abs(x - data[r * n + c]));
        norm = Math.max(norm, Math.abs(data[r * n + c]));
      }
    expect(err).toBeLessThan(1e-10 * norm);
  });

  it('gives σ = 0 and a zero U column for a rank-deficient matrix', () => {
    // 6×4 of rank 2: columns 2 and 3 repeat columns 0 and 1.
    const data = new Float64Array(24);
    for (let r = 0; r < 6; r++) {
      data[r * 4] = r + 1;
      data[r * 4 + 1] = Math.cos(r);
      data[r * 4 + 2] = r + 1;
      data[r * 4 + 3] = Math.cos(r);
    }
    const { s, u } = gramSvdColumns({ rows: 6, cols: 4, data });
    const ref = jacobiSvd({ rows: 6, cols: 4, data });
    expect(s[0]).toBeCloseTo(ref.s[0], 12);
    expect(s[1]).toBeCloseTo(ref.s[1], 12);
    // The null space: A·w is rounding noise, far below σ₂.
    for (const i of [2, 3]) {
      expect(s[i]).toBeLessThan(1e-12 * s[0]);
      const col = u.subarray(i * 6, i * 6 + 6);
      if (s[i] === 0) expect(Array.from(col).every((x) => x === 0)).toBe(true);
    }
  });

  it('gives the same triplets to rounding without WebAssembly (TypeScript eigen-solver and products)', async () => {
    await initEngine();
    const data = graded(48, 40, 0.05, 7);
    const fast = gramSvdColumns({ rows: 48, cols: 40, data });
    setWasmDisabled(true);
    try {
      const slow = gramSvdColumns({ rows: 48, cols: 40, data });
      for (let i = 0; i < 40; i++) {
        expect(Math.abs(slow.s[i] - fast.s[i])).toBeLessThanOrEqual(
          (4 * 40 * EPS * fast.s[0] ** 2) / fast.s[i],
        );
        // Same vector up to sign, where σ is well separated from rounding (the first ten here).
        if (i < 10) {
          let d = 0;
          for (let c = 0; c < 40; c++) d += slow.v[i * 40 + c] * fast.v[i * 40 + c];
          expect(Math.abs(Math.abs(d) - 1)).toBeLessThan(1e-9);
        }
      }
    } finally {
      setWasmDisabled(false);
    }
  });

  it.each([
    [24, 24],
    [30, 11],
    [11, 30],
  ])('%i×%i written into given arrays (left dirty, with a zero column) gives the same values', (m, n) => {
    const data = graded(m, n, 0.3, m + n);
    // A rank-deficient copy: its last σ is 0 up to rounding, or 0 exactly, and U's column then is zeroed.
    const low = data.map((x, i) => (i % n === 0 ? 0 : x));
    for (const a of [data, low]) {
      const want = gramSvdColumns({ rows: m, cols: n, data: a });
      const k = Math.min(m, n);
      const into = {
        s: new Float64Array(k + 3).fill(7),
        u: new Float64Array(k * m + 5).fill(7),
        v: new Float64Array(k * n).fill(7),
      };
      const got = gramSvdColumns({ rows: m, cols: n, data: a }, into);
      expect(Array.from(got.s)).toEqual(Array.from(want.s));
      expect(Array.from(got.u)).toEqual(Array.from(want.u));
      expect(Array.from(got.v)).toEqual(Array.from(want.v));
      expect(got.u.buffer).toBe(into.u.buffer);
    }
  });
});
