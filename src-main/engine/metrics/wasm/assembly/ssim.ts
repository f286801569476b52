// AssemblyScript source of the SSIM kernel (compiled by scripts/build.mjs): the horizontal 11-tap filtering
// of a row into the ring of filtered rows, and the vertical filtering plus SSIM map of one window row, of
// ../../ssim.ts (SsimStream.filterRow / windowRow). All pointers are byte offsets into the imported memory;
// the host (../runtime.ts) owns allocation.
//
// Each output goes through the same IEEE f64 operations in the same order as the TypeScript: f64x2 lanes
// carry two neighbouring window columns, and the per-row sum of the SSIM map adds lane 0 then lane 1 in
// column order. No fused multiply-add (relaxed SIMD is not enabled), so the results are bit-identical.
//
// Reference: Z. Wang, A. C. Bovik, H. R. Sheikh, E. P. Simoncelli, "Image quality assessment: from error
// visibility to structural similarity", IEEE Trans. Image Process. 13(4):600–612, 2004 (SSIM, eq. 13).

@inline function at(p: usize, i: i32): usize {
  return p + (<usize>i << 3);
}

/**
 * Products of one row pair's columns c0 … c1 − 1 into tmp (5 arrays of width: x, y, x², y², xy). With `f32in`
 * the rows hold f32 samples, each widened to f64 exactly (as a Float32Array element read in JavaScript is).
 */
function rowProducts(a: usize, b: usize, c0: i32, c1: i32, width: i32, tmp: usize, f32in: bool): void {
  const rx = tmp;
  const ry = at(tmp, width);
  const rxx = at(tmp, 2 * width);
  const ryy = at(tmp, 3 * width);
  const rxy = at(tmp, 4 * width);
  let i = c0;
  if (f32in) {
    for (; i + 1 < c1; i += 2) {
      const p = f64x2.promote_low_f32x4(v128.load64_zero(a + (<usize>i << 2)));
      const q = f64x2.promote_low_f32x4(v128.load64_zero(b + (<usize>i << 2)));
      v128.store(at(rx, i), p);
      v128.store(at(ry, i), q);
      v128.store(at(rxx, i), f64x2.mul(p, p));
      v128.store(at(ryy, i), f64x2.mul(q, q));
      v128.store(at(rxy, i), f64x2.mul(p, q));
    }
  } else {
    for (; i + 1 < c1; i += 2) {
      const p = v128.load(at(a, i));
      const q = v128.load(at(b, i));
      v128.store(at(rx, i), p);
      v128.store(at(ry, i), q);
      v128.store(at(rxx, i), f64x2.mul(p, p));
      v128.store(at(ryy, i), f64x2.mul(q, q));
      v128.store(at(rxy, i), f64x2.mul(p, q));
    }
  }
  if (i < c1) {
    const p: f64 = f32in ? <f64>load<f32>(a + (<usize>i << 2)) : load<f64>(at(a, i));
    const q: f64 = f32in ? <f64>load<f32>(b + (<usize>i << 2)) : load<f64>(at(b, i));
    store<f64>(at(rx, i), p);
    store<f64>(at(ry, i), q);
    store<f64>(at(rxx, i), p * p);
    store<f64>(at(ryy, i), q * q);
    store<f64>(at(rxy, i), p * q);
  }
}

/**
 * The 11-tap pass of the products in tmp (./rowProducts) into the ring row at `ring`, any radius R: window
 * columns j0 … j1 − 1 (j0 even).
 */
function filterRow(width: i32, wv: i32, R: i32, g: usize, ring: usize, tmp: usize, j0: i32, j1: i32): void {
  const rx = tmp;
  const ry = at(tmp, width);
  const rxx = at(tmp, 2 * width);
  const ryy = at(tmp, 3 * width);
  const rxy = at(tmp, 4 * width);
  const gc = load<f64>(at(g, R));
  const gcv = f64x2.splat(gc);
  let j = j0;
  for (; j + 1 < j1; j += 2) {
    const c = j + R;
    let sx = f64x2.mul(gcv, v128.load(at(rx, c)));
    let sy = f64x2.mul(gcv, v128.load(at(ry, c)));
    let sxx = f64x2.mul(gcv, v128.load(at(rxx, c)));
    let syy = f64x2.mul(gcv, v128.load(at(ryy, c)));
    let sxy = f64x2.mul(gcv, v128.load(at(rxy, c)));
    for (let t = 0; t < R; t++) {
      const w = v128.load64_splat(at(g, t));
      const lo = j + t;
      const hi = j + 2 * R - t;
      sx = f64x2.add(sx, f64x2.mul(w, f64x2.add(v128.load(at(rx, lo)), v128.load(at(rx, hi)))));
      sy = f64x2.add(sy, f64x2.mul(w, f64x2.add(v128.load(at(ry, lo)), v128.load(at(ry, hi)))));
      sxx = f64x2.add(sxx, f64x2.mul(w, f64x2.add(v128.load(at(rxx, lo)), v128.load(at(rxx, hi)))));
      syy = f64x2.add(syy, f64x2.mul(w, f64x2.add(v128.load(at(ryy, lo)), v128.load(at(ryy, hi)))));
      sxy = f64x2.add(sxy, f64x2.mul(w, f64x2.add(v128.load(at(rxy, lo)), v128.load(at(rxy, hi)))));
    }
    v128.store(at(ring, j), sx);
    v128.store(at(ring, wv + j), sy);
    v128.store(at(ring, 2 * wv + j), sxx);
    v128.store(at(ring, 3 * wv + j), syy);
    v128.store(at(ring, 4 * wv + j), sxy);
  }
  if (j < j1) filterTail(width, wv, R, g, ring, tmp, j);
}

/** filterRow's scalar pass for the one column j left after the lane pairs (an odd wv). */
function filterTail(width: i32, wv: i32, R: i32, g: usize, ring: usize, tmp: usize, j: i32): void {
  const rx = tmp;
  const ry = at(tmp, width);
  const rxx = at(tmp, 2 * width);
  const ryy = at(tmp, 3 * width);
  const rxy = at(tmp, 4 * width);
  const gc = load<f64>(at(g, R));
  {
    const c = j + R;
    let sx = gc * load<f64>(at(rx, c));
    let sy = gc * load<f64>(at(ry, c));
    let sxx = gc * load<f64>(at(rxx, c));
    let syy = gc * load<f64>(at(ryy, c));
    let sxy = gc * load<f64>(at(rxy, c));
    for (let t = 0; t < R; t++) {
      const w = load<f64>(at(g, t));
      const lo = j + t;
      const hi = j + 2 * R - t;
      sx += w * (load<f64>(at(rx, lo)) + load<f64>(at(rx, hi)));
      sy += w * (load<f64>(at(ry, lo)) + load<f64>(at(ry, hi)));
      sxx += w * (load<f64>(at(rxx, lo)) + load<f64>(at(rxx, hi)));
      syy += w * (load<f64>(at(ryy, lo)) + load<f64>(at(ryy, hi)));
      sxy += w * (load<f64>(at(rxy, lo)) + load<f64>(at(rxy, hi)));
    }
    store<f64>(at(ring, j), sx);
    store<f64>(at(ring, wv + j), sy);
    store<f64>(at(ring, 2 * wv + j), sxx);
    store<f64>(at(ring, 3 * wv + j), syy);
    store<f64>(at(ring, 4 * wv + j), sxy);
  }
}

/** SSIM of one window centre from the five vertical sums (two lanes at once). */
@inline function ratio(ux: v128, uy: v128, uxx: v128, uyy: v128, uxy: v128, c1: v128, c2: v128): v128 {
  const two = f64x2.splat(2);
  const vx = f64x2.sub(uxx, f64x2.mul(ux, ux));
  const vy = f64x2.sub(uyy, f64x2.mul(uy, uy));
  const vxy = f64x2.sub(uxy, f64x2.mul(ux, uy));
  const num = f64x2.mul(f64x2.add(f64x2.mul(f64x2.mul(two, ux), uy), c1), f64x2.add(f64x2.mul(two, vxy), c2));
  const den = f64x2.mul(
    f64x2.add(f64x2.add(f64x2.mul(ux, ux), f64x2.mul(uy, uy)), c1),
    f64x2.add(f64x2.add(vx, vy), c2),
  );
  return f64x2.div(num, den);
}

/**
 * `rowSum` plus, in column order, the SSIM of the window centres j0 … j1 − 1 (j0 even) of the row whose window
 * ends at ring row y (see SsimStream.windowRow, which adds them to 0 from column 0).
 */
function windowRow(ring: usize, stride: i32, wv: i32, R: i32, side: i32, g: usize, offs: usize, y: i32, C1: f64, C2: f64, j0: i32, j1: i32, rowSum: f64): f64 {
  const base = y - side + 1;
  const oc = at(ring, ((base + R) % side) * stride);
  for (let t = 0; t < R; t++) {
    store<i32>(offs + (<usize>(2 * t) << 2), ((base + t) % side) * stride);
    store<i32>(offs + (<usize>(2 * t + 1) << 2), ((base + 2 * R - t) % side) * stride);
  }
  const gcv = v128.load64_splat(at(g, R));
  const c1 = f64x2.splat(C1);
  const c2 = f64x2.splat(C2);
  let j = j0;
  for (; j < j1; j += 2) {
    // The last odd column runs in lane 0 with lane 1 reading one sample past the row's block (still inside
    // the ring's memory); only lane 0 is added then.
    let ux = f64x2.mul(gcv, v128.load(at(oc, j)));
    let uy = f64x2.mul(gcv, v128.load(at(oc, wv + j)));
    let uxx = f64x2.mul(gcv, v128.load(at(oc, 2 * wv + j)));
    let uyy = f64x2.mul(gcv, v128.load(at(oc, 3 * wv + j)));
    let uxy = f64x2.mul(gcv, v128.load(at(oc, 4 * wv + j)));
    for (let t = 0; t < R; t++) {
      const w = v128.load64_splat(at(g, t));
      const lo = at(ring, load<i32>(offs + (<usize>(2 * t) << 2)) + j);
      const hi = at(ring, load<i32>(offs + (<usize>(2 * t + 1) << 2)) + j);
      ux = f64x2.add(ux, f64x2.mul(w, f64x2.add(v128.load(lo), v128.load(hi))));
      uy = f64x2.add(uy, f64x2.mul(w, f64x2.add(v128.load(at(lo, wv)), v128.load(at(hi, wv)))));
      uxx = f64x2.add(uxx, f64x2.mul(w, f64x2.add(v128.load(at(lo, 2 * wv)), v128.load(at(hi, 2 * wv)))));
      uyy = f64x2.add(uyy, f64x2.mul(w, f64x2.add(v128.load(at(lo, 3 * wv)), v128.load(at(hi, 3 * wv)))));
      uxy = f64x2.add(uxy, f64x2.mul(w, f64x2.add(v128.load(at(lo, 4 * wv)), v128.load(at(hi, 4 * wv)))));
    }
    const r = ratio(ux, uy, uxx, uyy, uxy, c1, c2);
    rowSum += f64x2.extract_lane(r, 0);
    if (j + 1 < j1) rowSum += f64x2.extract_lane(r, 1);
  }
  return rowSum;
}

/** gc·x[c] + Σ_t w_t·(x[j + t] + x[j + 10 − t]), t = 0…4, in that order: one 11-tap output pair (R = 5). */
@inline function tap5(x: usize, j: i32, gcv: v128, w0: v128, w1: v128, w2: v128, w3: v128, w4: v128): v128 {
  const p = at(x, j);
  let s = f64x2.mul(gcv, v128.load(p, 40));
  s = f64x2.add(s, f64x2.mul(w0, f64x2.add(v128.load(p), v128.load(p, 80))));
  s = f64x2.add(s, f64x2.mul(w1, f64x2.add(v128.load(p, 8), v128.load(p, 72))));
  s = f64x2.add(s, f64x2.mul(w2, f64x2.add(v128.load(p, 16), v128.load(p, 64))));
  s = f64x2.add(s, f64x2.mul(w3, f64x2.add(v128.load(p, 24), v128.load(p, 56))));
  return f64x2.add(s, f64x2.mul(w4, f64x2.add(v128.load(p, 32), v128.load(p, 48))));
}

/**
 * filterRow for R = 5 (the 11×11 default) with the taps unrolled and held in registers: the same operations
 * in the same order, so the same bits. An odd last column goes through filterRow's scalar tail.
 */
function filterRow5(width: i32, wv: i32, g: usize, ring: usize, tmp: usize, j0: i32, j1: i32): void {
  const rx = tmp;
  const ry = at(tmp, width);
  const rxx = at(tmp, 2 * width);
  const ryy = at(tmp, 3 * width);
  const rxy = at(tmp, 4 * width);
  const gcv = v128.load64_splat(at(g, 5));
  const w0 = v128.load64_splat(g);
  const w1 = v128.load64_splat(at(g, 1));
  const w2 = v128.load64_splat(at(g, 2));
  const w3 = v128.load64_splat(at(g, 3));
  const w4 = v128.load64_splat(at(g, 4));
  let j = j0;
  for (; j + 1 < j1; j += 2) {
    v128.store(at(ring, j), tap5(rx, j, gcv, w0, w1, w2, w3, w4));
    v128.store(at(ring, wv + j), tap5(ry, j, gcv, w0, w1, w2, w3, w4));
    v128.store(at(ring, 2 * wv + j), tap5(rxx, j, gcv, w0, w1, w2, w3, w4));
    v128.store(at(ring, 3 * wv + j), tap5(ryy, j, gcv, w0, w1, w2, w3, w4));
    v128.store(at(ring, 4 * wv + j), tap5(rxy, j, gcv, w0, w1, w2, w3, w4));
  }
  if (j < j1) filterTail(width, wv, 5, g, ring, tmp, j);
}

/**
 * Window columns per strip (even): ssimRows works through the rows strip by strip, so the ring's part that a
 * window row reads (2R + 1 rows of five arrays) stays in the cache from row to row instead of being read again
 * from memory for every row (the whole ring is 5·(2R + 1)·width f64, larger than the cache on wide scans).
 */
const STRIP: i32 = 128;

/**
 * Filter `rows` row pairs (a, b: f64, or f32 when f32in; row stride width) as ring rows y0 … y0 + rows − 1; for every y ≥ firstWin,
 * the window row ending at y is summed: into sums[y − y0] when sums ≠ 0, else added to `total` in row
 * order. Returns the new total. ring: side·5·wv f64 plus one spare f64; tmp: 5·width f64; g: 2R+1 taps;
 * offs: 2R i32; acc: rows f64 (each row's sum as the strips add to it, in column order: the same sum).
 */
export function ssimRows(
  a: usize, b: usize, width: i32, rows: i32, y0: i32, firstWin: i32,
  R: i32, g: usize, ring: usize, tmp: usize, offs: usize, C1: f64, C2: f64, total: f64, sums: usize, f32in: bool,
  acc: usize,
): f64 {
  const side = 2 * R + 1;
  const wv = width - 2 * R;
  const stride = 5 * wv;
  for (let i = 0; i < rows; i++) store<f64>(at(acc, i), 0);
  for (let j0 = 0; j0 < wv; j0 += STRIP) {
    const j1 = j0 + STRIP < wv ? j0 + STRIP : wv;
    const c1 = j1 + 2 * R;
    for (let i = 0; i < rows; i++) {
      const y = y0 + i;
      const o = <usize>i * <usize>width;
      const ro = at(ring, (y % side) * stride);
      if (f32in) rowProducts(a + (o << 2), b + (o << 2), j0, c1, width, tmp, true);
      else rowProducts(at(a, <i32>o), at(b, <i32>o), j0, c1, width, tmp, false);
      if (R == 5) filterRow5(width, wv, g, ro, tmp, j0, j1);
      else filterRow(width, wv, R, g, ro, tmp, j0, j1);
      if (y >= firstWin) store<f64>(at(acc, i), windowRow(ring, stride, wv, R, side, g, offs, y, C1, C2, j0, j1, load<f64>(at(acc, i))));
    }
  }
  for (let i = 0; i < rows; i++) {
    if (y0 + i < firstWin) continue;
    const r = load<f64>(at(acc, i));
    if (sums) store<f64>(at(sums, i), r);
    else total += r;
  }
  return total;
}
