// AssemblyScript source of the codec's numeric kernels (compiled by scripts/build.mjs): the CDF 9/7 lifting,
// forward and inverse, over a whole plane in Mallat layout, and the plane coder's dead-zone quantiser and
// reconstruction. All pointers are byte offsets into the imported memory; the host (../runtime.ts) owns
// allocation.
//
// Every sample goes through the same IEEE f64 operations in the same order as the TypeScript reference
// (../../wavelet-transform.ts, ../../wavelet-plane.ts), so results are bit-identical: f64x2 lanes carry two
// rows (row pass) or two columns (column pass) through the scalar arithmetic, and WebAssembly has no fused
// multiply-add outside relaxed SIMD, which is not enabled. The lifting coefficients come from the host
// (`coef`: α, β, γ, δ, ζ as f64), so they are the very doubles the TypeScript uses.
//
// References: Daubechies & Sweldens, "Factoring wavelet transforms into lifting steps", J. Fourier Anal.
// Appl. 4(3), 1998, §7 (the 9/7 lifting steps); Mallat, IEEE TPAMI 11(7), 1989 (the 2-D layout).

/** Columns per strip of the column pass (the TypeScript's STRIP; any width gives the same bits). */
const STRIP: i32 = 32;

// ------------------------------------------------------------------ one lifting step on f64x2 pairs
// b[i] += c·(a[i] + a[min(i+1, na−1)]) (predict) and a[i] += c·(b[max(i−1, 0)] + b[min(i, nb−1)]) (update),
// on arrays of v128 (two independent signals, one per lane).

@inline function liftHighV(a: usize, na: i32, b: usize, nb: i32, c: v128): void {
  const last = na - 1;
  for (let i = 0; i < nb; i++) {
    const j = i + 1 < last ? i + 1 : last;
    const pb = b + (<usize>i << 4);
    const s = f64x2.add(v128.load(a + (<usize>i << 4)), v128.load(a + (<usize>j << 4)));
    v128.store(pb, f64x2.add(v128.load(pb), f64x2.mul(c, s)));
  }
}

@inline function liftLowV(a: usize, na: i32, b: usize, nb: i32, c: v128): void {
  const last = nb - 1;
  if (na > 0) {
    const s = f64x2.add(v128.load(b), v128.load(b + (<usize>(0 < last ? 0 : last) << 4)));
    v128.store(a, f64x2.add(v128.load(a), f64x2.mul(c, s)));
  }
  for (let i = 1; i < na; i++) {
    const j = i < last ? i : last;
    const pa = a + (<usize>i << 4);
    const s = f64x2.add(v128.load(b + (<usize>(i - 1) << 4)), v128.load(b + (<usize>j << 4)));
    v128.store(pa, f64x2.add(v128.load(pa), f64x2.mul(c, s)));
  }
}

@inline function pair(a: f64, b: f64): v128 {
  return f64x2.replace_lane(f64x2.splat(a), 1, b);
}

// ------------------------------------------------------------------ row pass, two rows at a time
// r0 and r1 are the two rows (r1 = r0 for a lone last row: both lanes then compute the same values, and
// every read happens before the first write). tmp holds n v128: nL lows then nH highs.

function fwdRows(r0: usize, r1: usize, n: i32, tmp: usize, k: usize): void {
  if (n < 2) return;
  const nL = (n + 1) >> 1;
  const nH = n >> 1;
  const L = tmp;
  const H = tmp + (<usize>nL << 4);
  for (let i = 0; i < nH; i++) {
    const a = v128.load(r0 + (<usize>i << 4));
    const b = v128.load(r1 + (<usize>i << 4));
    v128.store(L + (<usize>i << 4), v128.shuffle<f64>(a, b, 0, 2));
    v128.store(H + (<usize>i << 4), v128.shuffle<f64>(a, b, 1, 3));
  }
  if (n & 1) v128.store(L + (<usize>(nL - 1) << 4), pair(load<f64>(r0 + (<usize>(n - 1) << 3)), load<f64>(r1 + (<usize>(n - 1) << 3))));
  liftHighV(L, nL, H, nH, v128.load64_splat(k));
  liftLowV(L, nL, H, nH, v128.load64_splat(k + 8));
  liftHighV(L, nL, H, nH, v128.load64_splat(k + 16));
  liftLowV(L, nL, H, nH, v128.load64_splat(k + 24));
  const z = v128.load64_splat(k + 32);
  storeRows(r0, r1, 0, L, nL, z, true);
  storeRows(r0, r1, nL, H, nH, z, false);
}

/** x0[at+i], x1[at+i] = lanes of src[i] / z (div) or src[i] · z, i < m. */
@inline function storeRows(r0: usize, r1: usize, at: i32, src: usize, m: i32, z: v128, div: bool): void {
  let i = 0;
  const o0 = r0 + (<usize>at << 3);
  const o1 = r1 + (<usize>at << 3);
  for (; i + 1 < m; i += 2) {
    const p = src + (<usize>i << 4);
    const u = div ? f64x2.div(v128.load(p), z) : f64x2.mul(v128.load(p), z);
    const v = div ? f64x2.div(v128.load(p, 16), z) : f64x2.mul(v128.load(p, 16), z);
    v128.store(o0 + (<usize>i << 3), v128.shuffle<f64>(u, v, 0, 2));
    v128.store(o1 + (<usize>i << 3), v128.shuffle<f64>(u, v, 1, 3));
  }
  if (i < m) {
    const p = src + (<usize>i << 4);
    const u = div ? f64x2.div(v128.load(p), z) : f64x2.mul(v128.load(p), z);
    store<f64>(o0 + (<usize>i << 3), f64x2.extract_lane(u, 0));
    store<f64>(o1 + (<usize>i << 3), f64x2.extract_lane(u, 1));
  }
}

/** dst[i] = lanes (x0[at+i], x1[at+i]) · z (mul) or / z, i < m. */
@inline function loadRows(r0: usize, r1: usize, at: i32, dst: usize, m: i32, z: v128, mul: bool): void {
  let i = 0;
  const o0 = r0 + (<usize>at << 3);
  const o1 = r1 + (<usize>at << 3);
  for (; i + 1 < m; i += 2) {
    const a = v128.load(o0 + (<usize>i << 3));
    const b = v128.load(o1 + (<usize>i << 3));
    const u = v128.shuffle<f64>(a, b, 0, 2);
    const v = v128.shuffle<f64>(a, b, 1, 3);
    const p = dst + (<usize>i << 4);
    v128.store(p, mul ? f64x2.mul(u, z) : f64x2.div(u, z));
    v128.store(p, mul ? f64x2.mul(v, z) : f64x2.div(v, z), 16);
  }
  if (i < m) {
    const u = pair(load<f64>(o0 + (<usize>i << 3)), load<f64>(o1 + (<usize>i << 3)));
    v128.store(dst + (<usize>i << 4), mul ? f64x2.mul(u, z) : f64x2.div(u, z));
  }
}

function invRows(r0: usize, r1: usize, n: i32, tmp: usize, k: usize): void {
  if (n < 2) return;
  const nL = (n + 1) >> 1;
  const nH = n >> 1;
  const L = tmp;
  const H = tmp + (<usize>nL << 4);
  const z = v128.load64_splat(k + 32);
  loadRows(r0, r1, 0, L, nL, z, true);
  loadRows(r0, r1, nL, H, nH, z, false);
  liftLowV(L, nL, H, nH, f64x2.neg(v128.load64_splat(k + 24)));
  liftHighV(L, nL, H, nH, f64x2.neg(v128.load64_splat(k + 16)));
  liftLowV(L, nL, H, nH, f64x2.neg(v128.load64_splat(k + 8)));
  liftHighV(L, nL, H, nH, f64x2.neg(v128.load64_splat(k)));
  for (let i = 0; i < nH; i++) {
    const l = v128.load(L + (<usize>i << 4));
    const h = v128.load(H + (<usize>i << 4));
    v128.store(r0 + (<usize>i << 4), v128.shuffle<f64>(l, h, 0, 2));
    v128.store(r1 + (<usize>i << 4), v128.shuffle<f64>(l, h, 1, 3));
  }
  if (n & 1) {
    const l = v128.load(L + (<usize>(nL - 1) << 4));
    store<f64>(r0 + (<usize>(n - 1) << 3), f64x2.extract_lane(l, 0));
    store<f64>(r1 + (<usize>(n - 1) << 3), f64x2.extract_lane(l, 1));
  }
}

// ------------------------------------------------------------------ column pass, in strips
// A strip of h rows × sw columns is lifted in buf (row i of the strip buffer holds sw samples), lows then
// highs, with the neighbour row index clamped: per sample the arithmetic of the 1-D lifting on the column.

function liftStrip(buf: usize, nL: i32, nH: i32, sw: i32, c: f64, high: bool): void {
  const n = high ? nH : nL;
  const cv = f64x2.splat(c);
  const rs = <usize>sw << 3;
  for (let i = 0; i < n; i++) {
    const row = buf + <usize>(high ? nL + i : i) * rs;
    const a = buf + <usize>(high ? i : nL + (i > 0 ? i - 1 : 0)) * rs;
    const b = buf + <usize>(high ? (i + 1 < nL ? i + 1 : nL - 1) : nL + (i < nH ? i : nH - 1)) * rs;
    let k = 0;
    for (; k + 1 < sw; k += 2) {
      const o = <usize>k << 3;
      const s = f64x2.add(v128.load(a + o), v128.load(b + o));
      v128.store(row + o, f64x2.add(v128.load(row + o), f64x2.mul(cv, s)));
    }
    if (k < sw) {
      const o = <usize>k << 3;
      store<f64>(row + o, load<f64>(row + o) + c * (load<f64>(a + o) + load<f64>(b + o)));
    }
  }
}

/** dst[k] = src[k] / z (div) or src[k] · z for k < sw. */
@inline function scaleRow(dst: usize, src: usize, sw: i32, z: f64, div: bool): void {
  const zv = f64x2.splat(z);
  let k = 0;
  for (; k + 1 < sw; k += 2) {
    const o = <usize>k << 3;
    const v = v128.load(src + o);
    v128.store(dst + o, div ? f64x2.div(v, zv) : f64x2.mul(v, zv));
  }
  if (k < sw) {
    const o = <usize>k << 3;
    store<f64>(dst + o, div ? load<f64>(src + o) / z : load<f64>(src + o) * z);
  }
}

/** Column pass over the strips starting at columns c0, c0 + STRIP, … below c1 (c0 a multiple of STRIP). */
function fwdCols(x: usize, width: i32, w: i32, h: i32, c0: i32, c1: i32, buf: usize, k: usize): void {
  if (h < 2) return;
  const nL = (h + 1) >> 1;
  const nH = h >> 1;
  const z = load<f64>(k + 32);
  for (let k0 = c0; k0 < min(w, c1); k0 += STRIP) {
    const sw = min(STRIP, w - k0);
    const rs = <usize>sw << 3;
    for (let i = 0; i < h; i++) {
      const d = <usize>(i & 1 ? nL + (i >> 1) : i >> 1) * rs;
      memory.copy(buf + d, x + ((<usize>i * <usize>width + <usize>k0) << 3), rs);
    }
    liftStrip(buf, nL, nH, sw, load<f64>(k), true);
    liftStrip(buf, nL, nH, sw, load<f64>(k + 8), false);
    liftStrip(buf, nL, nH, sw, load<f64>(k + 16), true);
    liftStrip(buf, nL, nH, sw, load<f64>(k + 24), false);
    for (let i = 0; i < h; i++) {
      const o = x + ((<usize>i * <usize>width + <usize>k0) << 3);
      scaleRow(o, buf + <usize>i * rs, sw, z, i < nL);
    }
  }
}

/** Inverse column pass over the strips of {@link fwdCols}. */
function invCols(x: usize, width: i32, w: i32, h: i32, c0: i32, c1: i32, buf: usize, k: usize): void {
  if (h < 2) return;
  const nL = (h + 1) >> 1;
  const nH = h >> 1;
  const z = load<f64>(k + 32);
  for (let k0 = c0; k0 < min(w, c1); k0 += STRIP) {
    const sw = min(STRIP, w - k0);
    const rs = <usize>sw << 3;
    for (let i = 0; i < h; i++) {
      const o = x + ((<usize>i * <usize>width + <usize>k0) << 3);
      scaleRow(buf + <usize>i * rs, o, sw, z, i >= nL);
    }
    liftStrip(buf, nL, nH, sw, -load<f64>(k + 24), false);
    liftStrip(buf, nL, nH, sw, -load<f64>(k + 16), true);
    liftStrip(buf, nL, nH, sw, -load<f64>(k + 8), false);
    liftStrip(buf, nL, nH, sw, -load<f64>(k), true);
    for (let i = 0; i < h; i++) {
      const s = <usize>(i & 1 ? nL + (i >> 1) : i >> 1) * rs;
      memory.copy(x + ((<usize>i * <usize>width + <usize>k0) << 3), buf + s, rs);
    }
  }
}

// ------------------------------------------------------------------ the 2-D transforms
// One level's passes over a part of the plane, for two threads sharing the memory (../arena-split.ts): rows
// y0 … y1 − 1 (y0 even; the row pairs are those of the whole pass, since a lone row is only the last), or the
// column strips from c0 (a multiple of STRIP) below c1. Each sample gets the operations of the whole pass.

/** Forward row pass of rows y0 … y1 − 1 of the w-wide level at x (row stride `width`); tmp: 16·w bytes. */
export function forwardRows(x: usize, width: i32, w: i32, y0: i32, y1: i32, tmp: usize, k: usize): void {
  const rs = <usize>width << 3;
  let y = y0;
  for (; y + 1 < y1; y += 2) fwdRows(x + <usize>y * rs, x + <usize>(y + 1) * rs, w, tmp, k);
  if (y < y1) fwdRows(x + <usize>y * rs, x + <usize>y * rs, w, tmp, k);
}

/** Inverse row pass of rows y0 … y1 − 1, as {@link forwardRows}. */
export function inverseRows(x: usize, width: i32, w: i32, y0: i32, y1: i32, tmp: usize, k: usize): void {
  const rs = <usize>width << 3;
  let y = y0;
  for (; y + 1 < y1; y += 2) invRows(x + <usize>y * rs, x + <usize>(y + 1) * rs, w, tmp, k);
  if (y < y1) invRows(x + <usize>y * rs, x + <usize>y * rs, w, tmp, k);
}

/** Forward column pass of the w×h level's strips from column c0 below c1; buf: 8·STRIP·h bytes. */
export function forwardCols(x: usize, width: i32, w: i32, h: i32, c0: i32, c1: i32, buf: usize, k: usize): void {
  fwdCols(x, width, w, h, c0, c1, buf, k);
}

/** Inverse column pass of the strips from column c0 below c1, as {@link forwardCols}. */
export function inverseCols(x: usize, width: i32, w: i32, h: i32, c0: i32, c1: i32, buf: usize, k: usize): void {
  invCols(x, width, w, h, c0, c1, buf, k);
}


/**
 * In-place forward 9/7 transform of the width×height plane at x, `levels` levels. tmp: 16·max(width, height)
 * bytes; buf: 8·STRIP·height bytes; k: α, β, γ, δ, ζ (f64).
 */
export function forward97(x: usize, width: i32, height: i32, levels: i32, tmp: usize, buf: usize, k: usize): void {
  let w = width;
  let h = height;
  for (let l = 0; l < levels; l++) {
    forwardRows(x, width, w, 0, h, tmp, k);
    fwdCols(x, width, w, h, 0, w, buf, k);
    w = (w + 1) >> 1;
    h = (h + 1) >> 1;
  }
}

/** In-place inverse of {@link forward97}; same scratch sizes. */
export function inverse97(x: usize, width: i32, height: i32, levels: i32, tmp: usize, buf: usize, k: usize): void {
  for (let l = levels - 1; l >= 0; l--) {
    let w = width;
    let h = height;
    for (let i = 0; i < l; i++) {
      w = (w + 1) >> 1;
      h = (h + 1) >> 1;
    }
    invCols(x, width, w, h, 0, w, buf, k);
    inverseRows(x, width, w, 0, h, tmp, k);
  }
}

// ------------------------------------------------------------------ quantiser, reconstruction, error
// Bands: `geo` holds per band x0, y0, w, h (i32); `par` holds per band step Δ, rounding offset ρ (or the
// reconstruction offsets d1, d2), zero threshold (f64, 4 per band).

/**
 * ECMAScript ToInt32 of an integral f64 (what storing it into an Int32Array does): the value modulo 2^32 in
 * [−2^31, 2^31), 0 for ±∞ and NaN. Only steps far below the coder's safe range reach the slow branch.
 */
@inline function toInt32(v: f64): i32 {
  if (abs<f64>(v) < 2147483648.0) return <i32>v;
  if (!isFinite<f64>(v)) return 0;
  const r = v - floor<f64>(v / 4294967296.0) * 4294967296.0;
  return <i32><i64>r;
}

/** q entries per chunk of the non-zero map (4 KiB of i32: the host copies out only chunks holding non-zeros). */
const CHUNK_BITS = 10;
const CHUNK: i32 = 1 << CHUNK_BITS;

/**
 * q as i16 (the arena's narrow q, ../arena.ts) holds |q| ≤ NARROW_MAX; a narrow quantisation that meets a larger
 * one stops and returns NARROW_OVERFLOW (more than any count of non-zeros), and the host quantises again as i32.
 */
const NARROW_MAX: i32 = 32767;
const NARROW_OVERFLOW: i32 = 1 << 30;

/**
 * Dead-zone quantisation q = sign(c)·⌊|c|/Δ + ρ⌋ of every coefficient of bands b0 … b1 − 1 (zeros written too);
 * |c| ≤ the band's zero threshold is 0 without dividing, as in the TypeScript. Sets flags[j] (u8) to 1 when q
 * entries j·CHUNK … (j+1)·CHUNK − 1 receive a non-zero (never clears one: the caller zeroes the flags first, so
 * two threads quantising other bands may set flags at once). With `out` ≠ 0, also coder 2's bin statistics of
 * each band b at out + 32·b, as {@link binStats} computes them from the stored q (same terms, same order).
 * With q = 0, nothing but those statistics is stored (no q, no flags: the error at a step without q, {@link
 * errorsAt}). Returns the number of non-zero q. Q: q's element type, i32 or i16 (then NARROW_OVERFLOW as soon as
 * a |q| passes NARROW_MAX).
 */
function quantiseBands<Q>(
  x: usize,
  q: usize,
  width: i32,
  b0: i32,
  b1: i32,
  geo: usize,
  par: usize,
  flags: usize,
  out: usize,
): i32 {
  let nonZero = 0;
  for (let bi = b0; bi < b1; bi++) {
    const g = geo + (<usize>bi << 4);
    const p = par + (<usize>bi << 5);
    const x0 = load<i32>(g);
    const y0 = load<i32>(g, 4);
    const bw = load<i32>(g, 8);
    const bh = load<i32>(g, 12);
    const d = load<f64>(p);
    const rho = load<f64>(p, 8);
    const zero = load<f64>(p, 16);
    let n1: f64 = 0;
    let n2: f64 = 0;
    let s1: f64 = 0;
    let s2: f64 = 0;
    const zv = f64x2.splat(zero);
    for (let y = 0; y < bh; y++) {
      const row = <usize>(y0 + y) * <usize>width + <usize>x0;
      let i: usize = 0;
      for (; i < <usize>bw; i++) {
        // Four coefficients at a time while all four are within the zero threshold (most of a band at the
        // steps of a rate search): four zeros stored and nothing else (the comparison is false for NaN, as
        // the scalar one is). The group that has one above it goes through the scalar steps, in raster order.
        if ((i & 3) == 0) {
          for (; i + 4 <= <usize>bw; i += 4) {
            const p0 = x + ((row + i) << 3);
            const a0 = f64x2.gt(f64x2.abs(v128.load(p0)), zv);
            const a1 = f64x2.gt(f64x2.abs(v128.load(p0, 16)), zv);
            if (v128.any_true(v128.or(a0, a1))) break;
            if (q != 0) {
              if (sizeof<Q>() == 2) store<u64>(q + ((row + i) << 1), 0);
              else v128.store(q + ((row + i) << 2), i32x4.splat(0));
            }
          }
          if (i >= <usize>bw) break;
        }
        const c = load<f64>(x + ((row + i) << 3));
        const ac = abs<f64>(c);
        let v: i32 = 0;
        if (ac > zero) {
          const u = ac / d;
          const m = floor<f64>(u + rho);
          if (m != 0) {
            v = toInt32(c < 0 ? -m : m);
            if (sizeof<Q>() == 2 && (v > NARROW_MAX || v < -NARROW_MAX)) return NARROW_OVERFLOW;
            nonZero++;
            if (q != 0) store<u8>(flags + ((row + i) >> CHUNK_BITS), 1);
            // binStats' terms: |q| as stored, and |c|/Δ − |q| into the class of |q| (none for a stored 0).
            if (out != 0 && v != 0) {
              const a: f64 = v < 0 ? -<f64>v : <f64>v;
              const r = u - a;
              if (a == 1) {
                n1++;
                s1 += r;
              } else {
                n2++;
                s2 += r;
              }
            }
          }
        }
        if (q != 0) store<Q>(q + ((row + i) << alignof<Q>()), v);
      }
    }
    if (out != 0) {
      const o = out + (<usize>bi << 5);
      store<f64>(o, n1);
      store<f64>(o, n2, 8);
      store<f64>(o, s1, 16);
      store<f64>(o, s2, 24);
    }
  }
  return nonZero;
}

/**
 * Dead-zone quantisation of every band (see quantiseBands) with the flags of the n q entries zeroed first.
 * Returns the number of non-zero q.
 */
export function quantise(x: usize, q: usize, width: i32, nb: i32, geo: usize, par: usize, flags: usize, n: i32): i32 {
  memory.fill(flags, 0, <usize>((n + CHUNK - 1) >> CHUNK_BITS));
  return quantiseBands<i32>(x, q, width, 0, nb, geo, par, flags, 0);
}

/**
 * Bands b0 … b1 − 1 quantised (flags zeroed beforehand by the caller) and their bin statistics written at
 * out + 32·b: one piece of a quantisation split by whole bands (../../arena-split.ts). Returns the non-zeros.
 */
export function quantiseStats(
  x: usize,
  q: usize,
  width: i32,
  b0: i32,
  b1: i32,
  geo: usize,
  par: usize,
  flags: usize,
  out: usize,
): i32 {
  return quantiseBands<i32>(x, q, width, b0, b1, geo, par, flags, out);
}

/** {@link quantiseStats} into an i16 q: NARROW_OVERFLOW (and q unfinished) when a |q| passes NARROW_MAX. */
export function quantiseStats16(x: usize, q: usize, width: i32, b0: i32, b1: i32, geo: usize, par: usize, flags: usize, out: usize): i32 {
  return quantiseBands<i16>(x, q, width, b0, b1, geo, par, flags, out);
}

/** (v ± δ)·Δ with δ = d1 for |v| = 1 and d2 for |v| ≥ 2 (v ≠ 0), the TypeScript's `rebuilt`. */
@inline function rebuilt(v: f64, step: f64, d1: f64, d2: f64): f64 {
  return (v < 0 ? v - (v == -1 ? d1 : d2) : v + (v == 1 ? d1 : d2)) * step;
}

/** x = rebuilt(q) for q ≠ 0, else 0, over every band (par: Δ, d1, d2 per band). */
export function dequantise(q: usize, x: usize, width: i32, nb: i32, geo: usize, par: usize): void {
  for (let bi = 0; bi < nb; bi++) {
    const g = geo + (<usize>bi << 4);
    const p = par + (<usize>bi << 5);
    const x0 = load<i32>(g);
    const y0 = load<i32>(g, 4);
    const bw = load<i32>(g, 8);
    const bh = load<i32>(g, 12);
    const step = load<f64>(p);
    const d1 = load<f64>(p, 8);
    const d2 = load<f64>(p, 16);
    for (let y = 0; y < bh; y++) {
      const row = <usize>(y0 + y) * <usize>width + <usize>x0;
      for (let i: usize = 0; i < <usize>bw; i++) {
        const v = load<i32>(q + ((row + i) << 2));
        store<f64>(x + ((row + i) << 3), v != 0 ? rebuilt(<f64>v, step, d1, d2) : 0);
      }
    }
  }
}

/**
 * {@link dequantise} of the raster positions i0 … i1 − 1 in raster order, so that q may lie in the upper half of
 * x's region (q = x + 4n, the arena's layout): element i reads q[i] before writing x[i], and x[i]'s bytes end at
 * or below q[i + 1]'s, so a call from i0 = 0 to n reads every q before anything writes over it (a split
 * dequantisation orders its pieces so that none writes over q another has yet to read: ../../arena-split.ts).
 * Each row is done band by band from left to right (the bands partition the plane; a pixel outside every band
 * is left as it is, as dequantise leaves it). Same values, bit for bit.
 */
export function dequantiseInPlace(q: usize, x: usize, width: i32, nb: i32, geo: usize, par: usize, i0: i32, i1: i32): void {
  dequantiseRange<i32>(q, x, width, nb, geo, par, i0, i1);
}

/** {@link dequantiseInPlace} of an i16 q (q = x + 6n in the arena: the same order keeps every read before its overwrite). */
export function dequantiseInPlace16(q: usize, x: usize, width: i32, nb: i32, geo: usize, par: usize, i0: i32, i1: i32): void {
  dequantiseRange<i16>(q, x, width, nb, geo, par, i0, i1);
}

function dequantiseRange<Q>(q: usize, x: usize, width: i32, nb: i32, geo: usize, par: usize, i0: i32, i1: i32): void {
  if (i1 <= i0) return;
  for (let y = i0 / width; y <= (i1 - 1) / width; y++) {
    // This row's columns within [i0, i1).
    const lo = max<i32>(0, i0 - y * width);
    const hi = min<i32>(width, i1 - y * width);
    let from = 0;
    for (;;) {
      // The band of this row that starts leftmost at or after `from`.
      let best = -1;
      let bx = width;
      for (let bi = 0; bi < nb; bi++) {
        const g = geo + (<usize>bi << 4);
        const x0 = load<i32>(g);
        const y0 = load<i32>(g, 4);
        if (y < y0 || y >= y0 + load<i32>(g, 12) || x0 < from || x0 >= bx || load<i32>(g, 8) <= 0) continue;
        best = bi;
        bx = x0;
      }
      if (best < 0 || bx >= hi) break;
      const g = geo + (<usize>best << 4);
      const p = par + (<usize>best << 5);
      const bw = load<i32>(g, 8);
      const step = load<f64>(p);
      const d1 = load<f64>(p, 8);
      const d2 = load<f64>(p, 16);
      const row = <usize>y * <usize>width;
      const c1 = <usize>min<i32>(bx + bw, hi);
      for (let i = <usize>max<i32>(bx, lo); i < c1; i++) {
        const v = <i32>load<Q>(q + ((row + i) << alignof<Q>()));
        store<f64>(x + ((row + i) << 3), v != 0 ? rebuilt(<f64>v, step, d1, d2) : 0);
      }
      from = bx + bw;
    }
  }
}

/**
 * The non-zeros of the n q values in the chunks flagged at `flags` (as {@link quantise} sets them), in raster
 * order: positions to `at`, values to `v` (i32 each); returns how many. The host keeps a result's q this way
 * before the region is reused.
 */
export function compactNonZero(q: usize, flags: usize, n: i32, at: usize, v: usize): i32 {
  return compactQ<i32>(q, flags, n, at, v);
}

/** {@link compactNonZero} of an i16 q (the values listed as i32). */
export function compactNonZero16(q: usize, flags: usize, n: i32, at: usize, v: usize): i32 {
  return compactQ<i16>(q, flags, n, at, v);
}

function compactQ<Q>(q: usize, flags: usize, n: i32, at: usize, v: usize): i32 {
  let k = 0;
  const chunks = (n + CHUNK - 1) >> CHUNK_BITS;
  for (let j = 0; j < chunks; j++) {
    if (load<u8>(flags + <usize>j) == 0) continue;
    const end = min<i32>(n, (j + 1) << CHUNK_BITS);
    for (let i = j << CHUNK_BITS; i < end; i++) {
      const x = <i32>load<Q>(q + (<usize>i << alignof<Q>()));
      if (x != 0) {
        store<i32>(at + (<usize>k << 2), i);
        store<i32>(v + (<usize>k << 2), x);
        k++;
      }
    }
  }
  return k;
}

// ------------------------------------------------------------------ resident planes (../arena.ts)

/**
 * dst[i] = f64(src[i]) for the n f32 at src, exact. src may be dst + 4n (the f32 staged in the upper half of
 * the f64 region): each step reads its four f32 before writing, and writes end at or below the first unread
 * f32, so the widening runs forward in place.
 */
export function widen(dst: usize, src: usize, n: i32): void {
  let i = 0;
  for (; i + 4 <= n; i += 4) {
    const v = v128.load(src + (<usize>i << 2));
    const lo = f64x2.promote_low_f32x4(v);
    const hi = f64x2.promote_low_f32x4(v128.shuffle<f32>(v, v, 2, 3, 0, 1));
    v128.store(dst + (<usize>i << 3), lo);
    v128.store(dst + (<usize>i << 3), hi, 16);
  }
  for (; i < n; i++) store<f64>(dst + (<usize>i << 3), <f64>load<f32>(src + (<usize>i << 2)));
}

/**
 * Per band: the counts and sums of coefficient coder 2's bin statistics (binStats in ../../coeff-coder.ts),
 * from the coefficients x and their quantised values q: at out + 32·b, n1 and n2 (f64 counts of |q| = 1 and
 * |q| ≥ 2), then s1 and s2 = Σ(|c|/Δ_b − |q|) over each class, in raster order band by band (par: Δ_b first).
 */
export function binStats(x: usize, q: usize, width: i32, nb: i32, geo: usize, par: usize, out: usize): void {
  binStatsQ<i32>(x, q, width, nb, geo, par, out);
}

/** {@link binStats} of an i16 q. */
export function binStats16(x: usize, q: usize, width: i32, nb: i32, geo: usize, par: usize, out: usize): void {
  binStatsQ<i16>(x, q, width, nb, geo, par, out);
}

function binStatsQ<Q>(x: usize, q: usize, width: i32, nb: i32, geo: usize, par: usize, out: usize): void {
  for (let bi = 0; bi < nb; bi++) {
    const g = geo + (<usize>bi << 4);
    const x0 = load<i32>(g);
    const y0 = load<i32>(g, 4);
    const bw = load<i32>(g, 8);
    const bh = load<i32>(g, 12);
    const d = load<f64>(par + (<usize>bi << 5));
    let n1: f64 = 0;
    let n2: f64 = 0;
    let s1: f64 = 0;
    let s2: f64 = 0;
    for (let y = 0; y < bh; y++) {
      const row = <usize>(y0 + y) * <usize>width + <usize>x0;
      for (let i: usize = 0; i < <usize>bw; i++) {
        const v = <i32>load<Q>(q + ((row + i) << alignof<Q>()));
        if (v == 0) continue;
        const a: f64 = v < 0 ? -<f64>v : <f64>v;
        const r = abs<f64>(load<f64>(x + ((row + i) << 3))) / d - a;
        if (a == 1) {
          n1++;
          s1 += r;
        } else {
          n2++;
          s2 += r;
        }
      }
    }
    const o = out + (<usize>bi << 5);
    store<f64>(o, n1);
    store<f64>(o, n2, 8);
    store<f64>(o, s1, 16);
    store<f64>(o, s2, 24);
  }
}

/**
 * Per band b, Σ(c − rebuilt(q))² in raster order (c where q = 0), into out + 8·b (f64): the band sums of
 * codedSquaredError in ../../wavelet-plane.ts (par: Δ, d1, d2 per band).
 */
export function squaredError(x: usize, q: usize, width: i32, nb: i32, geo: usize, par: usize, out: usize): void {
  squaredErrorQ<i32>(x, q, width, nb, geo, par, out);
}

/** {@link squaredError} of an i16 q. */
export function squaredError16(x: usize, q: usize, width: i32, nb: i32, geo: usize, par: usize, out: usize): void {
  squaredErrorQ<i16>(x, q, width, nb, geo, par, out);
}

function squaredErrorQ<Q>(x: usize, q: usize, width: i32, nb: i32, geo: usize, par: usize, out: usize): void {
  for (let bi = 0; bi < nb; bi++) {
    const g = geo + (<usize>bi << 4);
    const p = par + (<usize>bi << 5);
    const x0 = load<i32>(g);
    const y0 = load<i32>(g, 4);
    const bw = load<i32>(g, 8);
    const bh = load<i32>(g, 12);
    const step = load<f64>(p);
    const d1 = load<f64>(p, 8);
    const d2 = load<f64>(p, 16);
    let s: f64 = 0;
    for (let y = 0; y < bh; y++) {
      const row = <usize>(y0 + y) * <usize>width + <usize>x0;
      for (let i: usize = 0; i < <usize>bw; i++) {
        const v = <i32>load<Q>(q + ((row + i) << alignof<Q>()));
        const c = load<f64>(x + ((row + i) << 3));
        const d = v == 0 ? c : c - rebuilt(<f64>v, step, d1, d2);
        s += d * d;
      }
    }
    store<f64>(out + (<usize>bi << 3), s);
  }
}

/**
 * Bands b0 … b1 − 1: Σ(c − rebuilt(q))² in raster order (c where q = 0), q being the values quantiseBands would
 * store with par's Δ, ρ and zero threshold (worked out again, not read), the reconstruction offsets d1, d2 read
 * from out + 32·b and the sum written at out + 32·b + 16: squaredError's band sums after quantiseBands, bit
 * for bit, with no q in memory.
 */
export function errorsAt(x: usize, width: i32, b0: i32, b1: i32, geo: usize, par: usize, out: usize): void {
  for (let bi = b0; bi < b1; bi++) {
    const g = geo + (<usize>bi << 4);
    const p = par + (<usize>bi << 5);
    const o = out + (<usize>bi << 5);
    const x0 = load<i32>(g);
    const y0 = load<i32>(g, 4);
    const bw = load<i32>(g, 8);
    const bh = load<i32>(g, 12);
    const step = load<f64>(p);
    const rho = load<f64>(p, 8);
    const zero = load<f64>(p, 16);
    const d1 = load<f64>(o);
    const d2 = load<f64>(o, 8);
    let s: f64 = 0;
    for (let y = 0; y < bh; y++) {
      const row = <usize>(y0 + y) * <usize>width + <usize>x0;
      for (let i: usize = 0; i < <usize>bw; i++) {
        const c = load<f64>(x + ((row + i) << 3));
        const ac = abs<f64>(c);
        let v: i32 = 0;
        if (ac > zero) {
          const m = floor<f64>(ac / step + rho);
          if (m != 0) v = toInt32(c < 0 ? -m : m);
        }
        const d = v == 0 ? c : c - rebuilt(<f64>v, step, d1, d2);
        s += d * d;
      }
    }
    store<f64>(o, s, 16);
  }
}

/** Per band b, the largest |c| (0 for an empty band), into out + 8·b (f64). */
export function bandMax(x: usize, width: i32, nb: i32, geo: usize, out: usize): void {
  for (let bi = 0; bi < nb; bi++) {
    const g = geo + (<usize>bi << 4);
    const x0 = load<i32>(g);
    const y0 = load<i32>(g, 4);
    const bw = load<i32>(g, 8);
    const bh = load<i32>(g, 12);
    // Two lanes: pmax(t, c) is c > t ? c : t, the scalar step, and the largest of a set is the same in any order
    // (magnitudes are never −0; a NaN is passed over either way).
    let tops = f64x2.splat(0);
    let top: f64 = 0;
    for (let y = 0; y < bh; y++) {
      const row = <usize>(y0 + y) * <usize>width + <usize>x0;
      let i: usize = 0;
      for (; i + 2 <= <usize>bw; i += 2) tops = f64x2.pmax(tops, f64x2.abs(v128.load(x + ((row + i) << 3))));
      for (; i < <usize>bw; i++) {
        const c = abs<f64>(load<f64>(x + ((row + i) << 3)));
        if (c > top) top = c;
      }
    }
    const t0 = f64x2.extract_lane(tops, 0);
    const t1 = f64x2.extract_lane(tops, 1);
    if (t0 > top) top = t0;
    if (t1 > top) top = t1;
    store<f64>(out + (<usize>bi << 3), top);
  }
}

// ------------------------------------------------------------------ the report's decode of a grey residual plane

/**
 * The decoded samples of a grey plane whose base is the one value `base` (../../../lowrank/decode-image.ts
 * greyFlatInto) and their squared errors against the source (../../../lowrank/band-sums.ts add), in one pass:
 * out[i] (f32) = clamp(round(base + x[i])) for i < n, where round is JavaScript's Math.round (the nearest
 * integer, halves up: ceil, less one where ceil − 0.5 > the value) and clamp maps values above max to max and
 * anything not above 0 (NaN too) to 0; then with d = src[i] (f32) − out[i], d² is added to the sums at st (f64:
 * the block's sum, the running sum, the blocks' sum, the samples in the block, the sum of all d² since the
 * caller zeroed it), one sample at a time in order, and a block of `block` samples is added to the blocks' sum
 * as it fills. The same operations in the same order as the TypeScript, so the same bits.
 */
export function greyFlatRows(x: usize, src: usize, out: usize, n: i32, base: f64, max: f64, block: i32, st: usize): void {
  const bv = f64x2.splat(base);
  const mv = f64x2.splat(max);
  const half = f64x2.splat(0.5);
  const one = f64x2.splat(1);
  const zero = f64x2.splat(0);
  let blk = load<f64>(st);
  let running = load<f64>(st, 8);
  let sum = load<f64>(st, 16);
  let inBlock = <i32>load<f64>(st, 24);
  let differs = load<f64>(st, 32);
  let i = 0;
  for (; i + 1 < n; i += 2) {
    const s = f64x2.add(bv, v128.load(x + (<usize>i << 3)));
    let r = f64x2.ceil(s);
    r = f64x2.sub(r, v128.and(f64x2.gt(f64x2.sub(r, half), s), one));
    const v = v128.bitselect(v128.bitselect(mv, r, f64x2.gt(r, mv)), zero, f64x2.gt(r, zero));
    v128.store64_lane(out + (<usize>i << 2), f32x4.demote_f64x2_zero(v), 0);
    const d = f64x2.sub(f64x2.promote_low_f32x4(v128.load64_zero(src + (<usize>i << 2))), v);
    const dd = f64x2.mul(d, d);
    const e0 = f64x2.extract_lane(dd, 0);
    blk += e0;
    running += e0;
    differs += e0;
    if (++inBlock == block) {
      sum += blk;
      blk = 0;
      inBlock = 0;
    }
    const e1 = f64x2.extract_lane(dd, 1);
    blk += e1;
    running += e1;
    differs += e1;
    if (++inBlock == block) {
      sum += blk;
      blk = 0;
      inBlock = 0;
    }
  }
  for (; i < n; i++) {
    const s = base + load<f64>(x + (<usize>i << 3));
    let r = Math.ceil(s);
    if (r - 0.5 > s) r -= 1;
    const v: f64 = r > 0 ? (r > max ? max : r) : 0;
    store<f32>(out + (<usize>i << 2), <f32>v);
    const d = <f64>load<f32>(src + (<usize>i << 2)) - v;
    const e = d * d;
    blk += e;
    running += e;
    differs += e;
    if (++inBlock == block) {
      sum += blk;
      blk = 0;
      inBlock = 0;
    }
  }
  store<f64>(st, blk);
  store<f64>(st, running, 8);
  store<f64>(st, sum, 16);
  store<f64>(st, <f64>inBlock, 24);
  store<f64>(st, differs, 32);
}

// ------------------------------------------------------------------ the rate model's sample (../../wavelet-estimate.ts)

/** Bits per digit of the sample's radix sort, and its digits (64 bits in 6). */
const DIGIT_BITS = 11;
const DIGIT_MASK: u64 = (1 << DIGIT_BITS) - 1;
const DIGITS = 6;

/**
 * The magnitudes |c| of the band x0, y0, bw × bh at the raster positions i ≡ 0 (mod stride), taken row by row,
 * sorted ascending into out (f64): the list wavelet-estimate's sortedSample gathers and sorts. The sort is a
 * least-significant-digit radix sort of the magnitudes' bit patterns (a non-negative double's bits order as its
 * value does, and a NaN's lie past +∞'s, last as a typed array's sort puts it), each pass a stable counting
 * sort, so the result is the sorted list whatever the order of equal values. tmp takes as many f64 as out,
 * hist DIGITS·2^DIGIT_BITS u32. Returns how many.
 */
export function sortedSample(
  x: usize,
  width: i32,
  x0: i32,
  y0: i32,
  bw: i32,
  bh: i32,
  stride: i32,
  out: usize,
  tmp: usize,
  hist: usize,
): i32 {
  const buckets = 1 << DIGIT_BITS;
  memory.fill(hist, 0, <usize>(DIGITS * buckets) << 2);
  let k = 0;
  for (let y = 0; y < bh; y++) {
    const row = <u32>(y0 + y) * <u32>width + <u32>x0;
    const end = row + <u32>bw;
    for (let i = row + ((<u32>stride - (row % <u32>stride)) % <u32>stride); i < end; i += <u32>stride) {
      const v = load<u64>(x + (<usize>i << 3)) & 0x7fffffffffffffff;
      store<u64>(out + (<usize>k << 3), v);
      for (let d = 0; d < DIGITS; d++) {
        const h = hist + ((<usize>(d * buckets) + <usize>((v >> <u64>(d * DIGIT_BITS)) & DIGIT_MASK)) << 2);
        store<u32>(h, load<u32>(h) + 1);
      }
      k++;
    }
  }
  let src = out;
  let dst = tmp;
  for (let d = 0; d < DIGITS; d++) {
    const h = hist + (<usize>(d * buckets) << 2);
    // Prefix sums into starting positions; a digit every value shares moves nothing.
    let sum: u32 = 0;
    let trivial = false;
    for (let b = 0; b < buckets; b++) {
      const c = load<u32>(h + (<usize>b << 2));
      if (c == <u32>k) trivial = true;
      store<u32>(h + (<usize>b << 2), sum);
      sum += c;
    }
    if (trivial) continue;
    const shift = <u64>(d * DIGIT_BITS);
    for (let i = 0; i < k; i++) {
      const v = load<u64>(src + (<usize>i << 3));
      const at = h + (<usize>((v >> shift) & DIGIT_MASK) << 2);
      const p = load<u32>(at);
      store<u32>(at, p + 1);
      store<u64>(dst + (<usize>p << 3), v);
    }
    const t = src;
    src = dst;
    dst = t;
  }
  if (src != out) memory.copy(out, src, <usize>k << 3);
  return k;
}
