// AssemblyScript source of the WebAssembly SIMD kernels (compiled by scripts/build.mjs).
// All pointers are byte offsets into the imported memory; the host (wasm/runtime.ts) owns allocation.
// The matrices are row-major. A(i,p) is read at a + 4·(i·rsA + p·csA) (f32) or 8·(…) (f64), which lets
// one kernel serve both A·B (rsA = lda, csA = 1) and Aᵀ·B (rsA = 1, csA = lda). B and C are row-major
// with leading dimensions ldb and ldc.
//
// Reference for the blocking: K. Goto, R. A. van de Geijn, "Anatomy of high-performance matrix
// multiplication", ACM TOMS 34(3), 2008, doi:10.1145/1356052.1356053, §4 (register block, L1 panel of B).

/** Depth of one K block: a 4×KC strip of A (4 KiB in f32) stays in L1 while all of B's KC×n panel streams. */
const KC: i32 = 256;
/** Width of one f32 column block of B: a KC×NC panel is 256 KiB (fits L2). (f64: measured slower on the Gram shape.) */
const NC_F32: i32 = 256;

// ---------------------------------------------------------------- f32, register block 4 rows × 8 columns
@inline function kern4x8f32(kc: i32, pa: usize, rA: usize, sA: usize, pb: usize, sB: usize, pc: usize, ldc4: usize, acc: bool): void {
  let c00 = f32x4.splat(0), c01 = f32x4.splat(0);
  let c10 = f32x4.splat(0), c11 = f32x4.splat(0);
  let c20 = f32x4.splat(0), c21 = f32x4.splat(0);
  let c30 = f32x4.splat(0), c31 = f32x4.splat(0);
  for (let p = 0; p < kc; p++) {
    const b0 = v128.load(pb);
    const b1 = v128.load(pb, 16);
    let a = v128.load32_splat(pa);
    c00 = f32x4.add(c00, f32x4.mul(a, b0)); c01 = f32x4.add(c01, f32x4.mul(a, b1));
    a = v128.load32_splat(pa + rA);
    c10 = f32x4.add(c10, f32x4.mul(a, b0)); c11 = f32x4.add(c11, f32x4.mul(a, b1));
    a = v128.load32_splat(pa + 2 * rA);
    c20 = f32x4.add(c20, f32x4.mul(a, b0)); c21 = f32x4.add(c21, f32x4.mul(a, b1));
    a = v128.load32_splat(pa + 3 * rA);
    c30 = f32x4.add(c30, f32x4.mul(a, b0)); c31 = f32x4.add(c31, f32x4.mul(a, b1));
    pa += sA;
    pb += sB;
  }
  if (acc) {
    c00 = f32x4.add(c00, v128.load(pc)); c01 = f32x4.add(c01, v128.load(pc, 16)); 
    c10 = f32x4.add(c10, v128.load(pc + ldc4)); c11 = f32x4.add(c11, v128.load(pc + ldc4, 16));
    c20 = f32x4.add(c20, v128.load(pc + 2 * ldc4)); c21 = f32x4.add(c21, v128.load(pc + 2 * ldc4, 16));
    c30 = f32x4.add(c30, v128.load(pc + 3 * ldc4)); c31 = f32x4.add(c31, v128.load(pc + 3 * ldc4, 16));
  }
  v128.store(pc, c00); v128.store(pc, c01, 16);
  v128.store(pc + ldc4, c10); v128.store(pc + ldc4, c11, 16);
  v128.store(pc + 2 * ldc4, c20); v128.store(pc + 2 * ldc4, c21, 16);
  v128.store(pc + 3 * ldc4, c30); v128.store(pc + 3 * ldc4, c31, 16);
}

@inline function kern1x8f32(kc: i32, pa: usize, sA: usize, pb: usize, sB: usize, pc: usize, acc: bool): void {
  let c0 = f32x4.splat(0), c1 = f32x4.splat(0);
  for (let p = 0; p < kc; p++) {
    const a = v128.load32_splat(pa);
    c0 = f32x4.add(c0, f32x4.mul(a, v128.load(pb)));
    c1 = f32x4.add(c1, f32x4.mul(a, v128.load(pb, 16)));
    pa += sA;
    pb += sB;
  }
  if (acc) { c0 = f32x4.add(c0, v128.load(pc)); c1 = f32x4.add(c1, v128.load(pc, 16)); }
  v128.store(pc, c0); v128.store(pc, c1, 16);
}

@inline function kern4x1f32(kc: i32, pa: usize, rA: usize, sA: usize, pb: usize, sB: usize, pc: usize, ldc4: usize, acc: bool): void {
  let s0: f32 = 0, s1: f32 = 0, s2: f32 = 0, s3: f32 = 0;
  for (let p = 0; p < kc; p++) {
    const b = load<f32>(pb);
    s0 += load<f32>(pa) * b; s1 += load<f32>(pa + rA) * b;
    s2 += load<f32>(pa + 2 * rA) * b; s3 += load<f32>(pa + 3 * rA) * b;
    pa += sA;
    pb += sB;
  }
  if (acc) { s0 += load<f32>(pc); s1 += load<f32>(pc + ldc4); s2 += load<f32>(pc + 2 * ldc4); s3 += load<f32>(pc + 3 * ldc4); }
  store<f32>(pc, s0); store<f32>(pc + ldc4, s1); store<f32>(pc + 2 * ldc4, s2); store<f32>(pc + 3 * ldc4, s3);
}

@inline function kern1x1f32(kc: i32, pa: usize, sA: usize, pb: usize, sB: usize, pc: usize, acc: bool): void {
  let s: f32 = 0;
  for (let p = 0; p < kc; p++) { s += load<f32>(pa) * load<f32>(pb); pa += sA; pb += sB; }
  if (acc) s += load<f32>(pc);
  store<f32>(pc, s);
}

// Remainder blocks of 4 columns (f32) / 2 columns (f64): one v128 per row, so widths like l = 60 or
// 210 do not fall back to scalar columns (a scalar column costs about as much as a full 8-wide block).
@inline function kern4x4f32(kc: i32, pa: usize, rA: usize, sA: usize, pb: usize, sB: usize, pc: usize, ldc4: usize, acc: bool): void {
  let c0 = f32x4.splat(0), c1 = f32x4.splat(0), c2 = f32x4.splat(0), c3 = f32x4.splat(0);
  for (let p = 0; p < kc; p++) {
    const b0 = v128.load(pb);
    c0 = f32x4.add(c0, f32x4.mul(v128.load32_splat(pa), b0));
    c1 = f32x4.add(c1, f32x4.mul(v128.load32_splat(pa + rA), b0));
    c2 = f32x4.add(c2, f32x4.mul(v128.load32_splat(pa + 2 * rA), b0));
    c3 = f32x4.add(c3, f32x4.mul(v128.load32_splat(pa + 3 * rA), b0));
    pa += sA;
    pb += sB;
  }
  if (acc) {
    c0 = f32x4.add(c0, v128.load(pc)); c1 = f32x4.add(c1, v128.load(pc + ldc4));
    c2 = f32x4.add(c2, v128.load(pc + 2 * ldc4)); c3 = f32x4.add(c3, v128.load(pc + 3 * ldc4));
  }
  v128.store(pc, c0); v128.store(pc + ldc4, c1); v128.store(pc + 2 * ldc4, c2); v128.store(pc + 3 * ldc4, c3);
}

@inline function kern1x4f32(kc: i32, pa: usize, sA: usize, pb: usize, sB: usize, pc: usize, acc: bool): void {
  let c0 = f32x4.splat(0);
  for (let p = 0; p < kc; p++) {
    c0 = f32x4.add(c0, f32x4.mul(v128.load32_splat(pa), v128.load(pb)));
    pa += sA;
    pb += sB;
  }
  if (acc) c0 = f32x4.add(c0, v128.load(pc));
  v128.store(pc, c0);
}

@inline function kern4x2f64(kc: i32, pa: usize, rA: usize, sA: usize, pb: usize, sB: usize, pc: usize, ldc8: usize, acc: bool): void {
  let c0 = f64x2.splat(0), c1 = f64x2.splat(0), c2 = f64x2.splat(0), c3 = f64x2.splat(0);
  for (let p = 0; p < kc; p++) {
    const b0 = v128.load(pb);
    c0 = f64x2.add(c0, f64x2.mul(v128.load64_splat(pa), b0));
    c1 = f64x2.add(c1, f64x2.mul(v128.load64_splat(pa + rA), b0));
    c2 = f64x2.add(c2, f64x2.mul(v128.load64_splat(pa + 2 * rA), b0));
    c3 = f64x2.add(c3, f64x2.mul(v128.load64_splat(pa + 3 * rA), b0));
    pa += sA;
    pb += sB;
  }
  if (acc) {
    c0 = f64x2.add(c0, v128.load(pc)); c1 = f64x2.add(c1, v128.load(pc + ldc8));
    c2 = f64x2.add(c2, v128.load(pc + 2 * ldc8)); c3 = f64x2.add(c3, v128.load(pc + 3 * ldc8));
  }
  v128.store(pc, c0); v128.store(pc + ldc8, c1); v128.store(pc + 2 * ldc8, c2); v128.store(pc + 3 * ldc8, c3);
}

@inline function kern1x2f64(kc: i32, pa: usize, sA: usize, pb: usize, sB: usize, pc: usize, acc: bool): void {
  let c0 = f64x2.splat(0);
  for (let p = 0; p < kc; p++) {
    c0 = f64x2.add(c0, f64x2.mul(v128.load64_splat(pa), v128.load(pb)));
    pa += sA;
    pb += sB;
  }
  if (acc) c0 = f64x2.add(c0, v128.load(pc));
  v128.store(pc, c0);
}

/** C[m×n] (+)= A(m×k)·B[k×n] in f32. `accumulate` 0 overwrites C, 1 adds to it. */
export function gemmF32(m: i32, n: i32, k: i32, a: usize, rsA: i32, csA: i32, b: usize, ldb: i32, c: usize, ldc: i32, accumulate: i32): void {
  const rA = <usize>rsA << 2, sA = <usize>csA << 2, sB = <usize>ldb << 2, ldc4 = <usize>ldc << 2;
  if (k <= 0) {
    if (!accumulate) for (let i = 0; i < m; i++) memory.fill(c + <usize>i * ldc4, 0, <usize>n << 2);
    return;
  }
  const m4 = m & ~3;
  for (let p0 = 0; p0 < k; p0 += KC) {
    const kc = min(KC, k - p0);
    const acc = accumulate != 0 || p0 > 0;
    const aP = a + (<usize>p0) * sA;
    const bP = b + (<usize>p0) * sB;
    // Column blocks of NC_F32: the KC×NC panel of B (≤ 256 KiB) stays in L2 while every row strip passes.
    for (let j0 = 0; j0 < n; j0 += NC_F32) {
      const j1 = min(n, j0 + NC_F32);
      const n8 = j0 + ((j1 - j0) & ~7);
      let i = 0;
      for (; i < m4; i += 4) {
        const pa = aP + <usize>i * rA;
        const pc = c + <usize>i * ldc4;
        let j = j0;
        for (; j < n8; j += 8) kern4x8f32(kc, pa, rA, sA, bP + (<usize>j << 2), sB, pc + (<usize>j << 2), ldc4, acc);
        if (j + 4 <= j1) { kern4x4f32(kc, pa, rA, sA, bP + (<usize>j << 2), sB, pc + (<usize>j << 2), ldc4, acc); j += 4; }
        for (; j < j1; j++) kern4x1f32(kc, pa, rA, sA, bP + (<usize>j << 2), sB, pc + (<usize>j << 2), ldc4, acc);
      }
      for (; i < m; i++) {
        const pa = aP + <usize>i * rA;
        const pc = c + <usize>i * ldc4;
        let j = j0;
        for (; j < n8; j += 8) kern1x8f32(kc, pa, sA, bP + (<usize>j << 2), sB, pc + (<usize>j << 2), acc);
        if (j + 4 <= j1) { kern1x4f32(kc, pa, sA, bP + (<usize>j << 2), sB, pc + (<usize>j << 2), acc); j += 4; }
        for (; j < j1; j++) kern1x1f32(kc, pa, sA, bP + (<usize>j << 2), sB, pc + (<usize>j << 2), acc);
      }
    }
  }
}

// ---------------------------------------------------------------- f64, register block 4 rows × 4 columns
@inline function kern4x4f64(kc: i32, pa: usize, rA: usize, sA: usize, pb: usize, sB: usize, pc: usize, ldc8: usize, acc: bool): void {
  let c00 = f64x2.splat(0), c01 = f64x2.splat(0);
  let c10 = f64x2.splat(0), c11 = f64x2.splat(0);
  let c20 = f64x2.splat(0), c21 = f64x2.splat(0);
  let c30 = f64x2.splat(0), c31 = f64x2.splat(0);
  for (let p = 0; p < kc; p++) {
    const b0 = v128.load(pb);
    const b1 = v128.load(pb, 16);
    let a = v128.load64_splat(pa);
    c00 = f64x2.add(c00, f64x2.mul(a, b0)); c01 = f64x2.add(c01, f64x2.mul(a, b1));
    a = v128.load64_splat(pa + rA);
    c10 = f64x2.add(c10, f64x2.mul(a, b0)); c11 = f64x2.add(c11, f64x2.mul(a, b1));
    a = v128.load64_splat(pa + 2 * rA);
    c20 = f64x2.add(c20, f64x2.mul(a, b0)); c21 = f64x2.add(c21, f64x2.mul(a, b1));
    a = v128.load64_splat(pa + 3 * rA);
    c30 = f64x2.add(c30, f64x2.mul(a, b0)); c31 = f64x2.add(c31, f64x2.mul(a, b1));
    pa += sA;
    pb += sB;
  }
  if (acc) {
    c00 = f64x2.add(c00, v128.load(pc)); c01 = f64x2.add(c01, v128.load(pc, 16));
    c10 = f64x2.add(c10, v128.load(pc + ldc8)); c11 = f64x2.add(c11, v128.load(pc + ldc8, 16));
    c20 = f64x2.add(c20, v128.load(pc + 2 * ldc8)); c21 = f64x2.add(c21, v128.load(pc + 2 * ldc8, 16));
    c30 = f64x2.add(c30, v128.load(pc + 3 * ldc8)); c31 = f64x2.add(c31, v128.load(pc + 3 * ldc8, 16));
  }
  v128.store(pc, c00); v128.store(pc, c01, 16);
  v128.store(pc + ldc8, c10); v128.store(pc + ldc8, c11, 16);
  v128.store(pc + 2 * ldc8, c20); v128.store(pc + 2 * ldc8, c21, 16);
  v128.store(pc + 3 * ldc8, c30); v128.store(pc + 3 * ldc8, c31, 16);
}

@inline function kern1x4f64(kc: i32, pa: usize, sA: usize, pb: usize, sB: usize, pc: usize, acc: bool): void {
  let c0 = f64x2.splat(0), c1 = f64x2.splat(0);
  for (let p = 0; p < kc; p++) {
    const a = v128.load64_splat(pa);
    c0 = f64x2.add(c0, f64x2.mul(a, v128.load(pb)));
    c1 = f64x2.add(c1, f64x2.mul(a, v128.load(pb, 16)));
    pa += sA;
    pb += sB;
  }
  if (acc) { c0 = f64x2.add(c0, v128.load(pc)); c1 = f64x2.add(c1, v128.load(pc, 16)); }
  v128.store(pc, c0); v128.store(pc, c1, 16);
}

@inline function kern4x1f64(kc: i32, pa: usize, rA: usize, sA: usize, pb: usize, sB: usize, pc: usize, ldc8: usize, acc: bool): void {
  let s0: f64 = 0, s1: f64 = 0, s2: f64 = 0, s3: f64 = 0;
  for (let p = 0; p < kc; p++) {
    const b = load<f64>(pb);
    s0 += load<f64>(pa) * b; s1 += load<f64>(pa + rA) * b;
    s2 += load<f64>(pa + 2 * rA) * b; s3 += load<f64>(pa + 3 * rA) * b;
    pa += sA;
    pb += sB;
  }
  if (acc) { s0 += load<f64>(pc); s1 += load<f64>(pc + ldc8); s2 += load<f64>(pc + 2 * ldc8); s3 += load<f64>(pc + 3 * ldc8); }
  store<f64>(pc, s0); store<f64>(pc + ldc8, s1); store<f64>(pc + 2 * ldc8, s2); store<f64>(pc + 3 * ldc8, s3);
}

@inline function kern1x1f64(kc: i32, pa: usize, sA: usize, pb: usize, sB: usize, pc: usize, acc: bool): void {
  let s: f64 = 0;
  for (let p = 0; p < kc; p++) { s += load<f64>(pa) * load<f64>(pb); pa += sA; pb += sB; }
  if (acc) s += load<f64>(pc);
  store<f64>(pc, s);
}

/** C[m×n] (+)= A(m×k)·B[k×n] in f64. `accumulate` 0 overwrites C, 1 adds to it. */
export function gemmF64(m: i32, n: i32, k: i32, a: usize, rsA: i32, csA: i32, b: usize, ldb: i32, c: usize, ldc: i32, accumulate: i32): void {
  const rA = <usize>rsA << 3, sA = <usize>csA << 3, sB = <usize>ldb << 3, ldc8 = <usize>ldc << 3;
  if (k <= 0) {
    if (!accumulate) for (let i = 0; i < m; i++) memory.fill(c + <usize>i * ldc8, 0, <usize>n << 3);
    return;
  }
  const n4 = n & ~3, m4 = m & ~3;
  for (let p0 = 0; p0 < k; p0 += KC) {
    const kc = min(KC, k - p0);
    const acc = accumulate != 0 || p0 > 0;
    const aP = a + (<usize>p0) * sA;
    const bP = b + (<usize>p0) * sB;
    let i = 0;
    for (; i < m4; i += 4) {
      const pa = aP + <usize>i * rA;
      const pc = c + <usize>i * ldc8;
      let j = 0;
      for (; j < n4; j += 4) kern4x4f64(kc, pa, rA, sA, bP + (<usize>j << 3), sB, pc + (<usize>j << 3), ldc8, acc);
      if (j + 2 <= n) { kern4x2f64(kc, pa, rA, sA, bP + (<usize>j << 3), sB, pc + (<usize>j << 3), ldc8, acc); j += 2; }
      for (; j < n; j++) kern4x1f64(kc, pa, rA, sA, bP + (<usize>j << 3), sB, pc + (<usize>j << 3), ldc8, acc);
    }
    for (; i < m; i++) {
      const pa = aP + <usize>i * rA;
      const pc = c + <usize>i * ldc8;
      let j = 0;
      for (; j < n4; j += 4) kern1x4f64(kc, pa, sA, bP + (<usize>j << 3), sB, pc + (<usize>j << 3), acc);
      if (j + 2 <= n) { kern1x2f64(kc, pa, sA, bP + (<usize>j << 3), sB, pc + (<usize>j << 3), acc); j += 2; }
      for (; j < n; j++) kern1x1f64(kc, pa, sA, bP + (<usize>j << 3), sB, pc + (<usize>j << 3), acc);
    }
  }
}

// ---------------------------------------------------------------- one-sided Jacobi (Hestenes), f64x2
// Reference: J. Demmel, K. Veselić, SIAM J. Matrix Anal. Appl. 13(4), 1992, doi:10.1137/0613074, §4.
// Columns of the working matrix are contiguous: column j at w + 8·j·rows. Rotations are accumulated
// into the rows of vt (n×n, Vᵀ) when vt ≠ 0. Pairs whose smaller column has squared norm ≤ floor2 are
// left alone (that column is negligible: below ε‖A‖_F). Returns the number of sweeps used (maxSweeps + 1 if not converged).

@inline function hsum(v: v128): f64 {
  return f64x2.extract_lane(v, 0) + f64x2.extract_lane(v, 1);
}

function rotate(px: usize, qx: usize, len: i32, c: f64, s: f64): void {
  const cv = f64x2.splat(c), sv = f64x2.splat(s);
  const len2 = len & ~1;
  let i = 0;
  for (; i < len2; i += 2) {
    const o = <usize>i << 3;
    const x = v128.load(px + o), y = v128.load(qx + o);
    v128.store(px + o, f64x2.sub(f64x2.mul(cv, x), f64x2.mul(sv, y)));
    v128.store(qx + o, f64x2.add(f64x2.mul(sv, x), f64x2.mul(cv, y)));
  }
  if (i < len) {
    const o = <usize>i << 3;
    const x = load<f64>(px + o), y = load<f64>(qx + o);
    store<f64>(px + o, c * x - s * y);
    store<f64>(qx + o, s * x + c * y);
  }
}

@inline function dotF64(px: usize, qx: usize, len: i32): f64 {
  const len2 = len & ~1;
  let gv = f64x2.splat(0);
  let i = 0;
  for (; i < len2; i += 2) {
    const o = <usize>i << 3;
    gv = f64x2.add(gv, f64x2.mul(v128.load(px + o), v128.load(qx + o)));
  }
  let g = hsum(gv);
  if (i < len) {
    const o = <usize>i << 3;
    g += load<f64>(px + o) * load<f64>(qx + o);
  }
  return g;
}

/**
 * Column norms² are recomputed at the start of every sweep and updated after each rotation with
 * Rutishauser's formulas α' = α − tγ, β' = β + tγ, so a pair costs one dot product, not three
 * (as in LAPACK dgesvj). `norms` is scratch for n f64.
 */
export function jacobiF64(w: usize, rows: i32, n: i32, vt: usize, tol: f64, maxSweeps: i32, floor2: f64, norms: usize): i32 {
  const colBytes = <usize>rows << 3;
  for (let sweep = 1; sweep <= maxSweeps; sweep++) {
    for (let j = 0; j < n; j++) {
      const px = w + <usize>j * colBytes;
      store<f64>(norms + (<usize>j << 3), dotF64(px, px, rows));
    }
    let rotated = false;
    for (let p = 0; p < n - 1; p++) {
      const px = w + <usize>p * colBytes;
      for (let q = p + 1; q < n; q++) {
        const qx = w + <usize>q * colBytes;
        const alpha = load<f64>(norms + (<usize>p << 3));
        const beta = load<f64>(norms + (<usize>q << 3));
        if (min(alpha, beta) <= floor2) continue;
        const gamma = dotF64(px, qx, rows);
        if (gamma == 0 || abs(gamma) <= tol * sqrt(alpha * beta)) continue;
        rotated = true;
        const zeta = (beta - alpha) / (2 * gamma);
        const t = (zeta >= 0 ? 1.0 : -1.0) / (abs(zeta) + sqrt(1 + zeta * zeta));
        const c = 1 / sqrt(1 + t * t);
        const s = c * t;
        rotate(px, qx, rows, c, s);
        if (vt != 0) rotate(vt + <usize>p * (<usize>n << 3), vt + <usize>q * (<usize>n << 3), n, c, s);
        let a2 = alpha - t * gamma;
        let b2 = beta + t * gamma;
        // Cancellation guard: recompute a norm that the update made tiny or negative.
        if (a2 <= 0.5 * alpha * 1e-8) a2 = dotF64(px, px, rows);
        if (b2 <= 0.5 * beta * 1e-8) b2 = dotF64(qx, qx, rows);
        store<f64>(norms + (<usize>p << 3), a2);
        store<f64>(norms + (<usize>q << 3), b2);
      }
    }
    if (!rotated) return sweep;
  }
  return maxSweeps + 1;
}

// ---------------------------------------------------------------- Householder tridiagonalisation, f64x2
// Reference: G. H. Golub, C. F. Van Loan, Matrix Computations, 4th ed., 2013, Algorithm 8.3.1 (from memory).
// S (n×n, row-major) holds the LOWER triangle of a symmetric matrix and is overwritten. d (n) and e (n−1)
// receive the tridiagonal matrix. v, p, v2, p2 are scratch vectors of n f64. Same arithmetic as
// symmetric-eigen.ts `tridiagonalize` (the TypeScript fallback), but one pass over the trailing triangle
// per step: the rank-2 update of step k is fused with the product S₂₂·v of step k+1 (after updating
// column k+1 first, which defines the next reflector). Halves the memory traffic of this memory-bound loop.

/** Reflector for column k (rows k+1…n−1): v (unscaled form), e[k]; returns β = 2/vᵀv, 0 for none (then v = 0). */
function houseCol(s: usize, n: i32, k: i32, v: usize, e: usize): f64 {
  const rowBytes = <usize>n << 3;
  const ck = <usize>k << 3;
  const k1 = k + 1;
  let scale: f64 = 0;
  for (let j = k1; j < n; j++) scale = max(scale, abs(load<f64>(s + <usize>j * rowBytes + ck)));
  if (scale == 0) {
    store<f64>(e + ck, 0);
    for (let j = k1; j < n; j++) store<f64>(v + (<usize>j << 3), 0);
    return 0;
  }
  let norm2: f64 = 0;
  for (let j = k1; j < n; j++) {
    const x = load<f64>(s + <usize>j * rowBytes + ck) / scale;
    store<f64>(v + (<usize>j << 3), x);
    norm2 += x * x;
  }
  const norm = sqrt(norm2);
  const v0 = load<f64>(v + (<usize>k1 << 3));
  const alpha = v0 >= 0 ? -norm : norm;
  store<f64>(e + ck, alpha * scale);
  store<f64>(v + (<usize>k1 << 3), v0 - alpha);
  let vv: f64 = 0;
  for (let j = k1; j < n; j++) {
    const x = load<f64>(v + (<usize>j << 3));
    vv += x * x;
  }
  if (vv == 0) {
    for (let j = k1; j < n; j++) store<f64>(v + (<usize>j << 3), 0);
    return 0;
  }
  return 2 / vv;
}

/** p[j0…n) = β·S₂₂·v with S₂₂ the lower-stored block from j0 (dot into p[j], axpy into p[j0…j)). */
function symvLower(s: usize, n: i32, j0: i32, v: usize, p: usize, beta: f64): void {
  const rowBytes = <usize>n << 3;
  for (let j = j0; j < n; j++) store<f64>(p + (<usize>j << 3), 0);
  for (let j = j0; j < n; j++) {
    const row = s + <usize>j * rowBytes;
    const vj = load<f64>(v + (<usize>j << 3));
    const vjv = f64x2.splat(vj);
    let dotv = f64x2.splat(0);
    let i = j0;
    for (; i + 1 < j; i += 2) {
      const o = <usize>i << 3;
      const a = v128.load(row + o);
      dotv = f64x2.add(dotv, f64x2.mul(a, v128.load(v + o)));
      v128.store(p + o, f64x2.add(v128.load(p + o), f64x2.mul(a, vjv)));
    }
    let dot = hsum(dotv);
    for (; i < j; i++) {
      const o = <usize>i << 3;
      const a = load<f64>(row + o);
      dot += a * load<f64>(v + o);
      store<f64>(p + o, load<f64>(p + o) + a * vj);
    }
    const oj = <usize>j << 3;
    store<f64>(p + oj, load<f64>(p + oj) + dot + load<f64>(row + oj) * vj);
  }
  for (let j = j0; j < n; j++) store<f64>(p + (<usize>j << 3), load<f64>(p + (<usize>j << 3)) * beta);
}

export function tridiagF64(s: usize, n: i32, d: usize, e: usize, v: usize, p: usize, v2: usize, p2: usize): void {
  tridiagImpl(s, n, d, e, v, p, v2, p2, 0);
}

/** houseCol, then (when betas ≠ 0) the reflector kept in column k below the diagonal and β in betas[k]. */
function houseKeep(s: usize, n: i32, k: i32, v: usize, e: usize, betas: usize): f64 {
  const beta = houseCol(s, n, k, v, e);
  if (betas != 0) {
    const rowBytes = <usize>n << 3;
    const ck = <usize>k << 3;
    for (let j = k + 1; j < n; j++) store<f64>(s + <usize>j * rowBytes + ck, load<f64>(v + (<usize>j << 3)));
    store<f64>(betas + ck, beta);
  }
  return beta;
}

function tridiagImpl(s: usize, n: i32, d: usize, e: usize, v: usize, p: usize, v2: usize, p2: usize, betas: usize): void {
  const rowBytes = <usize>n << 3;
  if (n > 2) {
    store<f64>(d, load<f64>(s));
    let beta = houseKeep(s, n, 0, v, e, betas);
    symvLower(s, n, 1, v, p, beta);
    let cv = v, cp = p, nv = v2, np = p2;
    for (let k = 0; k < n - 2; k++) {
      const k1 = k + 1;
      // w = p − (β/2)(pᵀv)·v, stored over p.
      let pv: f64 = 0;
      for (let j = k1; j < n; j++) pv += load<f64>(cp + (<usize>j << 3)) * load<f64>(cv + (<usize>j << 3));
      const h = 0.5 * beta * pv;
      for (let j = k1; j < n; j++) {
        const o = <usize>j << 3;
        store<f64>(cp + o, load<f64>(cp + o) - h * load<f64>(cv + o));
      }
      if (k + 1 < n - 2) {
        // Column k+1 first (rows k+1…n−1): it defines the next reflector.
        const c1 = <usize>k1 << 3;
        const vk1 = load<f64>(cv + c1);
        const wk1 = load<f64>(cp + c1);
        for (let j = k1; j < n; j++) {
          const at = s + <usize>j * rowBytes + c1;
          store<f64>(at, load<f64>(at) - (load<f64>(cv + (<usize>j << 3)) * wk1 + load<f64>(cp + (<usize>j << 3)) * vk1));
        }
        store<f64>(d + c1, load<f64>(s + <usize>k1 * rowBytes + c1));
        const nbeta = houseKeep(s, n, k1, nv, e, betas);
        // Fused pass over rows k+2…n−1: rank-2 update of step k, then S₂₂·v of step k+1 on the new values.
        const k2 = k + 2;
        for (let j = k2; j < n; j++) store<f64>(np + (<usize>j << 3), 0);
        for (let j = k2; j < n; j++) {
          const row = s + <usize>j * rowBytes;
          const oj = <usize>j << 3;
          const vj = load<f64>(cv + oj);
          const wj = load<f64>(cp + oj);
          const nvj = load<f64>(nv + oj);
          const vjv = f64x2.splat(vj), wjv = f64x2.splat(wj), nvjv = f64x2.splat(nvj);
          let dotv = f64x2.splat(0);
          let i = k2;
          for (; i + 1 < j; i += 2) {
            const o = <usize>i << 3;
            const upd = f64x2.add(f64x2.mul(vjv, v128.load(cp + o)), f64x2.mul(wjv, v128.load(cv + o)));
            const a = f64x2.sub(v128.load(row + o), upd);
            v128.store(row + o, a);
            dotv = f64x2.add(dotv, f64x2.mul(a, v128.load(nv + o)));
            v128.store(np + o, f64x2.add(v128.load(np + o), f64x2.mul(a, nvjv)));
          }
          let dot = hsum(dotv);
          for (; i < j; i++) {
            const o = <usize>i << 3;
            const a = load<f64>(row + o) - (vj * load<f64>(cp + o) + wj * load<f64>(cv + o));
            store<f64>(row + o, a);
            dot += a * load<f64>(nv + o);
            store<f64>(np + o, load<f64>(np + o) + a * nvj);
          }
          const a = load<f64>(row + oj) - 2 * vj * wj;
          store<f64>(row + oj, a);
          store<f64>(np + oj, load<f64>(np + oj) + dot + a * nvj);
        }
        for (let j = k2; j < n; j++) store<f64>(np + (<usize>j << 3), load<f64>(np + (<usize>j << 3)) * nbeta);
        const tv = cv;
        cv = nv;
        nv = tv;
        const tp = cp;
        cp = np;
        np = tp;
        beta = nbeta;
      } else {
        // Last reflector: plain rank-2 update of the trailing 2×2 block.
        for (let j = k1; j < n; j++) {
          const row = s + <usize>j * rowBytes;
          const vj = load<f64>(cv + (<usize>j << 3));
          const wj = load<f64>(cp + (<usize>j << 3));
          for (let i = k1; i <= j; i++) {
            const o = <usize>i << 3;
            store<f64>(row + o, load<f64>(row + o) - (vj * load<f64>(cp + o) + wj * load<f64>(cv + o)));
          }
        }
      }
    }
  }
  if (n >= 2) {
    store<f64>(d + (<usize>(n - 2) << 3), load<f64>(s + <usize>(n - 2) * rowBytes + (<usize>(n - 2) << 3)));
    store<f64>(e + (<usize>(n - 2) << 3), load<f64>(s + <usize>(n - 1) * rowBytes + (<usize>(n - 2) << 3)));
  }
  if (n >= 1) store<f64>(d + (<usize>(n - 1) << 3), load<f64>(s + <usize>(n - 1) * rowBytes + (<usize>(n - 1) << 3)));
}

/**
 * Symmetric eigen-decomposition with vectors (symmetric-eigen.ts `symmetricEigen`, same steps):
 * Householder tridiagonalisation keeping the reflectors, Et = Qᵀ accumulated by right products
 * Et ← Et·H_k (rows contiguous), then implicit QL (tql2) rotating rows i, i+1 of Et.
 * On return d holds the eigenvalues (unsorted) and row i of Et the eigenvector of d[i].
 * Returns 0, or -1 when a QL iteration did not converge. betas: n f64 scratch.
 */
export function symEigenF64(s: usize, n: i32, d: usize, e: usize, et: usize, v: usize, p: usize, v2: usize, p2: usize, betas: usize, maxIter: i32): i32 {
  const rowBytes = <usize>n << 3;
  for (let k = 0; k < n; k++) store<f64>(betas + (<usize>k << 3), 0);
  tridiagImpl(s, n, d, e, v, p, v2, p2, betas);
  // Et = I, then Et ← Et·H_k for k = n−3 … 0 (only rows/columns k+1… change).
  for (let i = 0; i < n; i++) {
    const row = et + <usize>i * rowBytes;
    for (let j = 0; j < n; j++) store<f64>(row + (<usize>j << 3), i == j ? 1.0 : 0.0);
  }
  for (let k = n - 3; k >= 0; k--) {
    const beta = load<f64>(betas + (<usize>k << 3));
    if (beta == 0) continue;
    const k1 = k + 1;
    const ck = <usize>k << 3;
    for (let j = k1; j < n; j++) store<f64>(v + (<usize>j << 3), load<f64>(s + <usize>j * rowBytes + ck));
    for (let r = k1; r < n; r++) {
      const row = et + <usize>r * rowBytes;
      let tv = f64x2.splat(0);
      let j = k1;
      for (; j + 1 < n; j += 2) {
        const o = <usize>j << 3;
        tv = f64x2.add(tv, f64x2.mul(v128.load(row + o), v128.load(v + o)));
      }
      let t = hsum(tv);
      for (; j < n; j++) t += load<f64>(row + (<usize>j << 3)) * load<f64>(v + (<usize>j << 3));
      t *= beta;
      if (t == 0) continue;
      const tt = f64x2.splat(t);
      j = k1;
      for (; j + 1 < n; j += 2) {
        const o = <usize>j << 3;
        v128.store(row + o, f64x2.sub(v128.load(row + o), f64x2.mul(tt, v128.load(v + o))));
      }
      for (; j < n; j++) {
        const o = <usize>j << 3;
        store<f64>(row + o, load<f64>(row + o) - t * load<f64>(v + o));
      }
    }
  }
  // tql2 (Bowdler, Martin, Reinsch, Wilkinson 1968) with the deflation tests of tridiagonalEigenvalues.
  const E = p; // n f64: sub-diagonal shifted down by one slot, E[n-1] = 0
  for (let i = 0; i < n - 1; i++) store<f64>(E + (<usize>i << 3), load<f64>(e + (<usize>i << 3)));
  if (n > 0) store<f64>(E + (<usize>(n - 1) << 3), 0);
  const EPS: f64 = 2.220446049250313e-16;
  let normT: f64 = 0;
  for (let i = 0; i < n; i++) {
    let t = abs(load<f64>(d + (<usize>i << 3))) + abs(load<f64>(E + (<usize>i << 3)));
    if (i > 0) t += abs(load<f64>(E + (<usize>(i - 1) << 3)));
    normT = max(normT, t);
  }
  const absTol = EPS * normT;
  for (let l = 0; l < n; l++) {
    let iter = 0;
    let m = l;
    do {
      for (m = l; m < n - 1; m++) {
        const dd = abs(load<f64>(d + (<usize>m << 3))) + abs(load<f64>(d + (<usize>(m + 1) << 3)));
        const em = abs(load<f64>(E + (<usize>m << 3)));
        if (em <= EPS * dd || em <= absTol) break;
      }
      if (m != l) {
        if (iter++ == maxIter) return -1;
        const dl = load<f64>(d + (<usize>l << 3));
        const el = load<f64>(E + (<usize>l << 3));
        let g = (load<f64>(d + (<usize>(l + 1) << 3)) - dl) / (2 * el);
        let r = hypot(g, 1);
        g = load<f64>(d + (<usize>m << 3)) - dl + el / (g + (g >= 0 ? abs(r) : -abs(r)));
        let sn: f64 = 1, c: f64 = 1, pp: f64 = 0;
        let early = false;
        for (let i = m - 1; i >= l; i--) {
          const ei = load<f64>(E + (<usize>i << 3));
          const f = sn * ei;
          const b = c * ei;
          r = hypot(f, g);
          store<f64>(E + (<usize>(i + 1) << 3), r);
          if (r == 0) {
            const o = <usize>(i + 1) << 3;
            store<f64>(d + o, load<f64>(d + o) - pp);
            store<f64>(E + (<usize>m << 3), 0);
            early = true;
            break;
          }
          sn = f / r;
          c = g / r;
          g = load<f64>(d + (<usize>(i + 1) << 3)) - pp;
          r = (load<f64>(d + (<usize>i << 3)) - g) * sn + 2 * c * b;
          pp = sn * r;
          store<f64>(d + (<usize>(i + 1) << 3), g + pp);
          g = c * r - b;
          const ri = et + <usize>i * rowBytes;
          const rj = ri + rowBytes;
          const cv = f64x2.splat(c), sv = f64x2.splat(sn);
          let q = 0;
          for (; q + 1 < n; q += 2) {
            const o = <usize>q << 3;
            const x = v128.load(ri + o);
            const y = v128.load(rj + o);
            v128.store(rj + o, f64x2.add(f64x2.mul(sv, x), f64x2.mul(cv, y)));
            v128.store(ri + o, f64x2.sub(f64x2.mul(cv, x), f64x2.mul(sv, y)));
          }
          for (; q < n; q++) {
            const o = <usize>q << 3;
            const x = load<f64>(ri + o);
            const y = load<f64>(rj + o);
            store<f64>(rj + o, sn * x + c * y);
            store<f64>(ri + o, c * x - sn * y);
          }
        }
        if (early) continue;
        store<f64>(d + (<usize>l << 3), load<f64>(d + (<usize>l << 3)) - pp);
        store<f64>(E + (<usize>l << 3), g);
        store<f64>(E + (<usize>m << 3), 0);
      }
    } while (m != l);
  }
  return 0;
}

@inline function hypot(a: f64, b: f64): f64 {
  const x = abs(a), y = abs(b);
  const big = max(x, y);
  if (big == 0) return 0;
  const sm = min(x, y) / big;
  return big * sqrt(1 + sm * sm);
}

/**
 * Lower Cholesky factor of (sym(G) + shift·I) into l (row-major), the same operations in the same
 * order as cholesky.ts `choleskyUpper` (bit-identical results). Returns 1, or 0 on a pivot ≤ floor (breakdown).
 */
export function cholLowerF64(g: usize, n: i32, shift: f64, floor: f64, l: usize): i32 {
  const rowBytes = <usize>n << 3;
  memory.fill(l, 0, <usize>n * rowBytes);
  for (let i = 0; i < n; i++) {
    const ri = <usize>i * rowBytes;
    for (let j = 0; j <= i; j++) {
      const rj = <usize>j * rowBytes;
      let sum = 0.5 * (load<f64>(g + ri + (<usize>j << 3)) + load<f64>(g + rj + (<usize>i << 3))) + (i == j ? shift : 0);
      for (let p = 0; p < j; p++) sum -= load<f64>(l + ri + (<usize>p << 3)) * load<f64>(l + rj + (<usize>p << 3));
      if (i == j) {
        if (!(sum > floor)) return 0;
        store<f64>(l + ri + (<usize>i << 3), sqrt(sum));
      } else store<f64>(l + ri + (<usize>j << 3), sum / load<f64>(l + rj + (<usize>j << 3)));
    }
  }
  return 1;
}

/** Inverse of the upper-triangular R (row-major), same operations and order as qr.ts `invertUpper`. */
export function invUpperF64(r: usize, n: i32, out: usize): void {
  const rowBytes = <usize>n << 3;
  memory.fill(out, 0, <usize>n * rowBytes);
  for (let i = n - 1; i >= 0; i--) {
    const ri = <usize>i * rowBytes;
    store<f64>(out + ri + (<usize>i << 3), 1);
    for (let p = i + 1; p < n; p++) {
      const c = load<f64>(r + ri + (<usize>p << 3));
      if (c == 0) continue;
      const rp = <usize>p * rowBytes;
      for (let j = p; j < n; j++) {
        const o = <usize>j << 3;
        store<f64>(out + ri + o, load<f64>(out + ri + o) - c * load<f64>(out + rp + o));
      }
    }
    const inv = 1 / load<f64>(r + ri + (<usize>i << 3));
    for (let j = i; j < n; j++) {
      const o = ri + (<usize>j << 3);
      store<f64>(out + o, load<f64>(out + o) * inv);
    }
  }
}
