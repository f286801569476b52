/**
 * Pure-TypeScript matrix product, the fallback of the WebAssembly SIMD kernels (wasm/assembly/kernels.ts).
 *
 * References
 * - K. Goto, R. A. van de Geijn, "Anatomy of high-performance matrix multiplication", ACM Trans. Math.
 *   Softw. 34(3), article 12, 2008. doi:10.1145/1356052.1356053. §4: block K so a panel stays in cache.
 */
import type { Gemm } from './backend';

/** Depth of one K block (rows of B kept hot while a row of C is accumulated). */
const KC = 256;

/** C[m×n] (+)= A(m×k)·B[k×n]; see `Gemm` in backend.ts for the addressing. */
export const gemmTs: Gemm = (m, n, k, a, aOff, rsA, csA, b, bOff, ldb, c, cOff, ldc, accumulate) => {
  if (!accumulate) for (let i = 0; i < m; i++) c.fill(0, cOff + i * ldc, cOff + i * ldc + n);
  for (let p0 = 0; p0 < k; p0 += KC) {
    const p1 = Math.min(k, p0 + KC);
    for (let i = 0; i < m; i++) {
      const ci = cOff + i * ldc;
      const ai = aOff + i * rsA;
      let p = p0;
      // Four rows of B per pass: one store of C per four multiply-adds.
      for (; p + 3 < p1; p += 4) {
        const a0 = a[ai + p * csA];
        const a1 = a[ai + (p + 1) * csA];
        const a2 = a[ai + (p + 2) * csA];
        const a3 = a[ai + (p + 3) * csA];
        if (a0 === 0 && a1 === 0 && a2 === 0 && a3 === 0) continue;
        const b0 = bOff + p * ldb;
        const b1 = b0 + ldb;
        const b2 = b1 + ldb;
        const b3 = b2 + ldb;
        for (let j = 0; j < n; j++)
          c[ci + j] += a0 * b[b0 + j] + a1 * b[b1 + j] + a2 * b[b2 + j] + a3 * b[b3 + j];
      }
      for (; p < p1; p++) {
        const av = a[ai + p * csA];
        if (av === 0) continue;
        const bp = bOff + p * ldb;
        for (let j = 0; j < n; j++) c[ci + j] += av * b[bp + j];
      }
    }
  }
};
