// AssemblyScript source of the patch-group denoiser's WebAssembly kernels (compiled by scripts/build.mjs).
// All pointers are byte offsets into the imported memory; the host (clean/wasm/runtime.ts) owns allocation.
//
// Every kernel performs the same IEEE f64 operations in the same order as the TypeScript it replaces
// (block-matching.ts `matchGroup`, wiener-groups.ts `GroupWiener.estimate`), so the results are
// bit-identical: SIMD lanes only ever hold independent quantities (two candidates, or two patches of a
// group), never parts of one sum. No fused multiply-add is used (WebAssembly SIMD has none without relaxed SIMD).

// ---------------------------------------------------------------- block matching

/** Max-heap order on (distance, candidate order), as block-matching.ts heapLess. */
@inline function heapLess(d: usize, idx: usize, a: i32, b: i32): bool {
  const da = load<f64>(d + (<usize>a << 3));
  const db = load<f64>(d + (<usize>b << 3));
  return da < db || (da == db && load<i32>(idx + (<usize>a << 2)) < load<i32>(idx + (<usize>b << 2)));
}

@inline function heapSwap(d: usize, idx: usize, a: i32, b: i32): void {
  const pa = d + (<usize>a << 3), pb = d + (<usize>b << 3);
  const t = load<f64>(pa);
  store<f64>(pa, load<f64>(pb));
  store<f64>(pb, t);
  const qa = idx + (<usize>a << 2), qb = idx + (<usize>b << 2);
  const u = load<i32>(qa);
  store<i32>(qa, load<i32>(qb));
  store<i32>(qb, u);
}

function heapPush(d: usize, idx: usize, n: i32, v: f64, o: i32): void {
  let i = n;
  store<f64>(d + (<usize>i << 3), v);
  store<i32>(idx + (<usize>i << 2), o);
  while (i > 0) {
    const parent = (i - 1) >> 1;
    if (!heapLess(d, idx, parent, i)) break;
    heapSwap(d, idx, i, parent);
    i = parent;
  }
}

function heapReplaceTop(d: usize, idx: usize, n: i32, v: f64, o: i32): void {
  store<f64>(d, v);
  store<i32>(idx, o);
  let i = 0;
  for (;;) {
    const l = 2 * i + 1;
    const r = l + 1;
    let big = i;
    if (l < n && heapLess(d, idx, big, l)) big = l;
    if (r < n && heapLess(d, idx, big, r)) big = r;
    if (big == i) break;
    heapSwap(d, idx, i, big);
    i = big;
  }
}

/** Offer candidate o with distance s (a partial sum when it stopped early) to the heap; returns the new count. */
@inline function offer(d: usize, idx: usize, count: i32, K: i32, s: f64, o: i32): i32 {
  const bound = count == K ? load<f64>(d) : Infinity;
  if (s >= bound) return count;
  if (count < K) {
    heapPush(d, idx, count, s, o);
    return count + 1;
  }
  heapReplaceTop(d, idx, K, s, o);
  return count;
}

/**
 * The K nearest candidates to the reference patch at (y, x) by (SSD on the f64 `guide`, candidate order):
 * block-matching.ts `matchGroup` with the same result. Candidates are taken four at a time in the fixed
 * order, their sums computed side by side (lane = candidate, each lane summing rows, then columns, as the
 * TypeScript does) until every one of the four has reached the K-th best distance known before the four
 * (a bound at least the one the TypeScript uses for each), then offered to the heap one by one in order.
 * For finite pixels the sums only grow, so a sum stopped at or above that bound is rejected exactly as
 * the TypeScript rejects it. `ref`: scratch of p·p f64. Returns the count; the heap holds the candidates.
 */
export function matchGroupF64(
  guide: usize, width: i32, height: i32, p: i32, K: i32, offsets: usize, nOff: i32,
  y: i32, x: i32, heapD: usize, heapI: usize, ref: usize,
): i32 {
  const refBase = y * width + x;
  for (let i = 0; i < p; i++)
    for (let j = 0; j < p; j++)
      store<f64>(ref + (<usize>(i * p + j) << 3), load<f64>(guide + (<usize>(refBase + i * width + j) << 3)));
  const row8 = <usize>width << 3;
  let count = 0;
  let o = 0;
  const lastY = height - p, lastX = width - p;
  while (o < nOff) {
    // The next four valid candidates (repeating the last one when fewer remain).
    let o0 = -1, o1 = -1, o2 = -1, o3 = -1, found = 0;
    while (o < nOff && found < 4) {
      const cy = y + load<i32>(offsets + (<usize>o << 3));
      const cx = x + load<i32>(offsets + (<usize>o << 3), 4);
      if (cy >= 0 && cx >= 0 && cy <= lastY && cx <= lastX) {
        if (found == 0) o0 = o;
        else if (found == 1) o1 = o;
        else if (found == 2) o2 = o;
        else o3 = o;
        found++;
      }
      o++;
    }
    if (found == 0) break;
    if (found < 2) o1 = o0;
    if (found < 3) o2 = o1;
    if (found < 4) o3 = o2;
    const base0 = guide + (<usize>((y + load<i32>(offsets + (<usize>o0 << 3))) * width + x + load<i32>(offsets + (<usize>o0 << 3), 4)) << 3);
    const base1 = guide + (<usize>((y + load<i32>(offsets + (<usize>o1 << 3))) * width + x + load<i32>(offsets + (<usize>o1 << 3), 4)) << 3);
    const base2 = guide + (<usize>((y + load<i32>(offsets + (<usize>o2 << 3))) * width + x + load<i32>(offsets + (<usize>o2 << 3), 4)) << 3);
    const base3 = guide + (<usize>((y + load<i32>(offsets + (<usize>o3 << 3))) * width + x + load<i32>(offsets + (<usize>o3 << 3), 4)) << 3);
    const bound = f64x2.splat(count == K ? load<f64>(heapD) : Infinity);
    let s01 = f64x2.splat(0);
    let s23 = f64x2.splat(0);
    for (let i = 0; i < p; i++) {
      // Stop once all four sums have reached the bound (they only grow).
      if (!v128.any_true(v128.or(f64x2.lt(s01, bound), f64x2.lt(s23, bound)))) break;
      const rowOff = <usize>i * row8;
      const rr = ref + (<usize>(i * p) << 3);
      for (let j = 0; j < p; j++) {
        const jo = rowOff + (<usize>j << 3);
        const r = v128.load64_splat(rr + (<usize>j << 3));
        const c01 = v128.load64_lane(base1 + jo, v128.load64_splat(base0 + jo), 1);
        const c23 = v128.load64_lane(base3 + jo, v128.load64_splat(base2 + jo), 1);
        const t01 = f64x2.sub(r, c01);
        const t23 = f64x2.sub(r, c23);
        s01 = f64x2.add(s01, f64x2.mul(t01, t01));
        s23 = f64x2.add(s23, f64x2.mul(t23, t23));
      }
    }
    count = offer(heapD, heapI, count, K, f64x2.extract_lane(s01, 0), o0);
    if (found > 1) count = offer(heapD, heapI, count, K, f64x2.extract_lane(s01, 1), o1);
    if (found > 2) count = offer(heapD, heapI, count, K, f64x2.extract_lane(s23, 0), o2);
    if (found > 3) count = offer(heapD, heapI, count, K, f64x2.extract_lane(s23, 1), o3);
  }
  return count;
}

/**
 * `matchGroupF64` for a guide of small integers (|value| ≤ 1023, patches up to 8×8), stored as i16 rows:
 * each patch row is one i16x8 (lanes beyond p masked to 0), squared differences summed in i32 by
 * i32x4.dot_i16x8_s. The TypeScript's f64 sum of such squares is exact at every step (integers far below
 * 2⁵³) and so is this one (at most 64·2047² < 2³¹), so both are the same integer in any order; whole sums
 * are offered to the heap in the fixed order, which decides exactly as the TypeScript's early stop does.
 * `ref`: scratch of 16·p bytes.
 */
export function matchGroupI16(
  guide: usize, width: i32, height: i32, p: i32, K: i32, offsets: usize, nOff: i32,
  y: i32, x: i32, heapD: usize, heapI: usize, ref: usize,
): i32 {
  const row2 = <usize>width << 1;
  const mask = i16x8.lt_s(i16x8(0, 1, 2, 3, 4, 5, 6, 7), i16x8.splat(<i16>p));
  let rb = guide + (<usize>(y * width + x) << 1);
  for (let i = 0; i < p; i++) {
    v128.store(ref + (<usize>i << 4), v128.and(v128.load(rb), mask));
    rb += row2;
  }
  const lastY = height - p, lastX = width - p;
  let count = 0;
  for (let o = 0; o < nOff; o++) {
    const cy = y + load<i32>(offsets + (<usize>o << 3));
    const cx = x + load<i32>(offsets + (<usize>o << 3), 4);
    if (cy < 0 || cx < 0 || cy > lastY || cx > lastX) continue;
    let cb = guide + (<usize>(cy * width + cx) << 1);
    let acc = i32x4.splat(0);
    for (let i = 0; i < p; i++) {
      const d = i16x8.sub(v128.load(ref + (<usize>i << 4)), v128.and(v128.load(cb), mask));
      acc = i32x4.add(acc, i32x4.dot_i16x8_s(d, d));
      cb += row2;
    }
    const s = i32x4.extract_lane(acc, 0) + i32x4.extract_lane(acc, 1) + i32x4.extract_lane(acc, 2) + i32x4.extract_lane(acc, 3);
    count = offer(heapD, heapI, count, K, <f64>s, o);
  }
  return count;
}

// ---------------------------------------------------------------- Wiener pass: separable 3-D transform

/** In place, orthonormal multi-level Haar of the n values at x (wiener-groups.ts `haar`, same operations). */
function haar(x: usize, n: i32, inverse: bool, h: usize): void {
  const r: f64 = Math.SQRT1_2;
  if (!inverse)
    for (let len = n; len > 1; len >>= 1) {
      const half = len >> 1;
      for (let k = 0; k < half; k++) {
        const a = load<f64>(x + (<usize>(2 * k) << 3));
        const b = load<f64>(x + (<usize>(2 * k + 1) << 3));
        store<f64>(h + (<usize>k << 3), (a + b) * r);
        store<f64>(h + (<usize>(half + k) << 3), (a - b) * r);
      }
      memory.copy(x, h, <usize>len << 3);
    }
  else
    for (let len = 2; len <= n; len <<= 1) {
      const half = len >> 1;
      for (let k = 0; k < half; k++) {
        const a = load<f64>(x + (<usize>k << 3));
        const d = load<f64>(x + (<usize>(half + k) << 3));
        store<f64>(h + (<usize>(2 * k) << 3), (a + d) * r);
        store<f64>(h + (<usize>(2 * k + 1) << 3), (a - d) * r);
      }
      memory.copy(x, h, <usize>len << 3);
    }
}

/**
 * dst = the order-p transform C (or Cᵀ when inverse) along patch rows (byRows) or patch columns of every
 * patch in src (layout (a·p + b)·n + k): wiener-groups.ts `alongPatch`, two patches k per f64x2 (n even),
 * eight patches per pass when n is a multiple of 8 (four independent sums share each coefficient load).
 */
function alongPatch(src: usize, dst: usize, C: usize, p: i32, n: i32, inverse: bool, byRows: bool): void {
  const cs = <usize>(byRows ? p * n : n) << 3;
  const cStep: usize = (inverse ? <usize>p : 1) << 3;
  const n8 = n & ~7;
  for (let a = 0; a < p; a++)
    for (let b = 0; b < p; b++) {
      const f = byRows ? a : b;
      const c0 = C + (<usize>(inverse ? f : f * p) << 3);
      const base = src + (<usize>(byRows ? b * n : a * p * n) << 3);
      const out = dst + (<usize>((a * p + b) * n) << 3);
      let k = 0;
      for (; k < n8; k += 8) {
        let s0 = f64x2.splat(0), s1 = f64x2.splat(0), s2 = f64x2.splat(0), s3 = f64x2.splat(0);
        let q = base + (<usize>k << 3);
        let cp = c0;
        for (let c = 0; c < p; c++) {
          const coef = v128.load64_splat(cp);
          s0 = f64x2.add(s0, f64x2.mul(coef, v128.load(q)));
          s1 = f64x2.add(s1, f64x2.mul(coef, v128.load(q, 16)));
          s2 = f64x2.add(s2, f64x2.mul(coef, v128.load(q, 32)));
          s3 = f64x2.add(s3, f64x2.mul(coef, v128.load(q, 48)));
          q += cs;
          cp += cStep;
        }
        const o = out + (<usize>k << 3);
        v128.store(o, s0);
        v128.store(o, s1, 16);
        v128.store(o, s2, 32);
        v128.store(o, s3, 48);
      }
      for (; k < n; k += 2) {
        let s = f64x2.splat(0);
        let q = base + (<usize>k << 3);
        let cp = c0;
        for (let c = 0; c < p; c++) {
          s = f64x2.add(s, f64x2.mul(v128.load64_splat(cp), v128.load(q)));
          q += cs;
          cp += cStep;
        }
        v128.store(out + (<usize>k << 3), s);
      }
    }
}

/** In place 3-D transform of X (m × n, n a power of two ≥ 2): Haar along the group, then the patch DCT. */
function transform3(X: usize, p: i32, n: i32, inverse: bool, Cp: usize, t: usize, h: usize): void {
  const m = p * p;
  for (let i = 0; i < m; i++) haar(X + (<usize>(i * n) << 3), n, inverse, h);
  // The TypeScript copies X to t before the patch rows and t back to X after the columns: same values.
  alongPatch(X, t, Cp, p, n, inverse, true);
  alongPatch(t, X, Cp, p, n, inverse, false);
}

/**
 * Wiener estimate of one group (wiener-groups.ts `GroupWiener.estimate` for n a power of two ≥ 2):
 * transforms yn and yb in place, writes the estimate to out and returns Σw².
 */
export function wienerGroupF64(
  yn: usize, yb: usize, out: usize, p: i32, n: i32, s2: f64, Cp: usize, t: usize, h: usize,
): f64 {
  transform3(yn, p, n, false, Cp, t, h);
  transform3(yb, p, n, false, Cp, t, h);
  const total = p * p * n;
  let w2: f64 = 0;
  for (let q = 0; q < total; q++) {
    const o = <usize>q << 3;
    const b = load<f64>(yb + o);
    const b2 = b * b;
    const w = b2 / (b2 + s2);
    w2 += w * w;
    store<f64>(out + o, w * load<f64>(yn + o));
  }
  transform3(out, p, n, true, Cp, t, h);
  return w2;
}

/**
 * wiener-groups.ts `GroupWiener.estimate` with a noise spectrum (correlated noise; n a power of two ≥ 2): the
 * noise variance of coefficient (q, k) is s2·spec[q] (s2·average[q] for the group average, k = 0), and Σw²·d is
 * returned. Same operations, same order.
 */
export function wienerGroupSpectrumF64(
  yn: usize, yb: usize, out: usize, p: i32, n: i32, s2: f64, Cp: usize, t: usize, h: usize, spec: usize,
  average: usize,
): f64 {
  transform3(yn, p, n, false, Cp, t, h);
  transform3(yb, p, n, false, Cp, t, h);
  const m = p * p;
  let w2: f64 = 0;
  for (let i = 0; i < m; i++) {
    const dk = load<f64>(spec + (<usize>i << 3));
    for (let k = 0; k < n; k++) {
      const d = k == 0 ? load<f64>(average + (<usize>i << 3)) : dk;
      const o = <usize>(i * n + k) << 3;
      const b = load<f64>(yb + o);
      const b2 = b * b;
      const w = b2 / (b2 + s2 * d);
      w2 += w * w * dk;
      store<f64>(out + o, w * load<f64>(yn + o));
    }
  }
  transform3(out, p, n, true, Cp, t, h);
  return w2;
}

// ---------------------------------------------------------------- whitening of patch groups

/**
 * whiten-patches.ts `PatchWhitener` in place on X (m = p² rows × n patches, n even): forward, the 2-D DCT of
 * every patch (patch rows, then patch columns) and row q times scale[q]; inverse, row q times scale[q] and then
 * the transposed 2-D DCT. t: scratch of m·n f64. Same operations, same order as the TypeScript.
 */
export function whitenF64(X: usize, p: i32, n: i32, Cp: usize, scale: usize, t: usize, inverse: bool): void {
  const m = p * p;
  if (inverse) scaleRows(X, m, n, scale);
  alongPatch(X, t, Cp, p, n, inverse, true);
  alongPatch(t, X, Cp, p, n, inverse, false);
  if (!inverse) scaleRows(X, m, n, scale);
}

/** X[q·n + k] *= scale[q], two patches per f64x2 (n even). */
function scaleRows(X: usize, m: i32, n: i32, scale: usize): void {
  for (let q = 0; q < m; q++) {
    const s = v128.load64_splat(scale + (<usize>q << 3));
    let x = X + (<usize>(q * n) << 3);
    for (let k = 0; k < n; k += 2) {
      v128.store(x, f64x2.mul(v128.load(x), s));
      x += 16;
    }
  }
}
