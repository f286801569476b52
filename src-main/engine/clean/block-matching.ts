/**
 * Block matching shared by the two passes of the patch-group denoiser (patch-groups.ts, wiener-groups.ts):
 * the grid of reference patches, the search offsets, and the K nearest candidates by SSD with a fixed
 * tie order (so the groups do not depend on how the image is split into bands). Where WebAssembly SIMD is
 * available the distances run in a kernel (wasm/assembly/groups.ts) with the same groups, bit for bit.
 */
import { ensureGroupMemory, groupKernels, MATCH_BASE } from './wasm/runtime';

/** Reference positions along one axis: 0, stride, 2·stride, … and always the last valid one. */
function referenceGrid(length: number, patch: number, stride: number): Int32Array {
  const last = length - patch;
  if (last < 0) return new Int32Array(0);
  const out: number[] = [];
  for (let v = 0; v < last; v += stride) out.push(v);
  out.push(last);
  return Int32Array.from(out);
}

/** Candidate offsets, nearest first (ties in a fixed order): every offset within ±3, every even one beyond. */
export function searchOffsets(radius: number): Int32Array {
  const list: Array<[number, number]> = [];
  for (let dy = -radius; dy <= radius; dy++)
    for (let dx = -radius; dx <= radius; dx++) {
      const near = Math.abs(dy) <= 3 && Math.abs(dx) <= 3;
      if (near || (dy % 2 === 0 && dx % 2 === 0)) list.push([dy, dx]);
    }
  list.sort((a, b) => a[0] * a[0] + a[1] * a[1] - (b[0] * b[0] + b[1] * b[1]) || a[0] - b[0] || a[1] - b[1]);
  const out = new Int32Array(list.length * 2);
  list.forEach(([dy, dx], i) => {
    out[2 * i] = dy;
    out[2 * i + 1] = dx;
  });
  return out;
}

/**
 * Block matching: the K candidates nearest to the reference patch at (y, x) by (SSD on `guide`, candidate
 * order), with exact early termination of each SSD once it cannot enter the current K best. Writes their
 * positions to posY/posX and returns how many were found (fewer than K only in tiny images).
 */
export function matchGroup(
  guide: Float32Array,
  width: number,
  height: number,
  p: number,
  K: number,
  offsets: Int32Array,
  y: number,
  x: number,
  heapD: Float64Array,
  heapI: Int32Array,
  posY: Int32Array,
  posX: Int32Array,
): number {
  const nOff = offsets.length / 2;
  let count = 0;
  const refBase = y * width + x;
  for (let o = 0; o < nOff; o++) {
    const cy = y + offsets[2 * o];
    const cx = x + offsets[2 * o + 1];
    if (cy < 0 || cx < 0 || cy > height - p || cx > width - p) continue;
    const bound = count === K ? heapD[0] : Number.POSITIVE_INFINITY;
    const candBase = cy * width + cx;
    let s = 0;
    for (let i = 0; i < p && s < bound; i++) {
      const ra = refBase + i * width;
      const ca = candBase + i * width;
      for (let j = 0; j < p; j++) {
        const t = guide[ra + j] - guide[ca + j];
        s += t * t;
      }
    }
    if (s >= bound) continue;
    if (count < K) {
      heapPush(heapD, heapI, count, s, o);
      count++;
    } else heapReplaceTop(heapD, heapI, K, s, o);
  }
  for (let k = 0; k < count; k++) {
    const o = heapI[k];
    posY[k] = y + offsets[2 * o];
    posX[k] = x + offsets[2 * o + 1];
  }
  return count;
}

/** Max-heap on (distance, order) of the current best candidates. */
function heapLess(d: Float64Array, idx: Int32Array, a: number, b: number): boolean {
  return d[a] < d[b] || (d[a] === d[b] && idx[a] < idx[b]);
}
function heapPush(d: Float64Array, idx: Int32Array, n: number, v: number, o: number) {
  let i = n;
  d[i] = v;
  idx[i] = o;
  while (i > 0) {
    const parent = (i - 1) >> 1;
    if (!heapLess(d, idx, parent, i)) break;
    swap(d, idx, i, parent);
    i = parent;
  }
}
function heapReplaceTop(d: Float64Array, idx: Int32Array, n: number, v: number, o: number) {
  d[0] = v;
  idx[0] = o;
  let i = 0;
  for (;;) {
    const l = 2 * i + 1;
    const r = l + 1;
    let big = i;
    if (l < n && heapLess(d, idx, big, l)) big = l;
    if (r < n && heapLess(d, idx, big, r)) big = r;
    if (big === i) break;
    swap(d, idx, i, big);
    i = big;
  }
}
function swap(d: Float64Array, idx: Int32Array, a: number, b: number) {
  const t = d[a];
  d[a] = d[b];
  d[b] = t;
  const u = idx[a];
  idx[a] = idx[b];
  idx[b] = u;
}

/**
 * Visit, in global raster order of the reference grid, every group whose patches reach rows
 * [rowStart, rowEnd): `visit(count, posY, posX)` gets the matched positions (valid until the next call).
 * References up to R + p − 1 rows outside the band are matched, since their groups can reach it.
 */
export function forEachGroup(
  guide: Float32Array,
  width: number,
  height: number,
  sizes: { patch: number; groupSize: number; searchRadius: number; stride: number },
  rowStart: number,
  rowEnd: number,
  visit: (count: number, posY: Int32Array, posX: Int32Array) => void,
  onProgress?: (fraction: number) => void,
): void {
  const { patch: p, groupSize: K, searchRadius: R, stride } = sizes;
  const gy = referenceGrid(height, p, stride);
  const gx = referenceGrid(width, p, stride);
  const offsets = searchOffsets(R);
  const posY = new Int32Array(K);
  const posX = new Int32Array(K);
  let first = 0;
  while (first < gy.length && gy[first] + R + p - 1 < rowStart) first++;
  let last = gy.length - 1;
  while (last >= 0 && gy[last] - R > rowEnd - 1) last--;
  if (first > last) return;
  // Rows the references and their candidates can read.
  const rows: [number, number] = [Math.max(0, gy[first] - R), Math.min(height, gy[last] + R + p)];
  const match = groupMatcher(guide, { width, height, p, K }, offsets, rows);
  for (let a = first; a <= last; a++) {
    for (let b = 0; b < gx.length; b++) {
      const count = match(gy[a], gx[b], posY, posX);
      // Skip groups with no patch in the band.
      let touches = false;
      for (let k = 0; k < count && !touches; k++)
        if (posY[k] + p - 1 >= rowStart && posY[k] < rowEnd) touches = true;
      if (touches) visit(count, posY, posX);
    }
    if (onProgress) onProgress((a - first + 1) / (last - first + 1));
  }
}

/** Bytes rounded up to a multiple of 16 (v128 alignment). */
const align16 = (bytes: number) => Math.ceil(bytes / 16) * 16;

/** Largest |value| of a guide the i16 kernel takes (squared differences of 8×8 patches stay below 2³¹). */
const SMALL_INTEGER = 1023;

/** 'i16' when every value is an integer of at most SMALL_INTEGER in size, else 'f64' when all are finite, else null. */
function guideKind(values: Float32Array): 'i16' | 'f64' | null {
  let small = true;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (small && (v !== Math.round(v) || v > SMALL_INTEGER || v < -SMALL_INTEGER)) small = false;
    if (!small && !Number.isFinite(v)) return null;
  }
  return small ? 'i16' : 'f64';
}

/**
 * `matchGroup` for every reference of one pass, as a function of (y, x, posY, posX) → count: a WebAssembly
 * kernel on a copy of the guide's rows [rows[0], rows[1]) when the kernels load — i16 for small-integer
 * guides (8-bit scans) and patches up to 8, else f64 when the pixels are finite (the kernels' exactness
 * arguments need sums that only grow) — else TypeScript.
 */
function groupMatcher(
  guide: Float32Array,
  shape: { width: number; height: number; p: number; K: number },
  offsets: Int32Array,
  rows: [number, number],
): (y: number, x: number, posY: Int32Array, posX: Int32Array) => number {
  const { width, height, p, K } = shape;
  const heapD = new Float64Array(K);
  const heapI = new Int32Array(K);
  const typescript = (y: number, x: number, posY: Int32Array, posX: Int32Array) =>
    matchGroup(guide, width, height, p, K, offsets, y, x, heapD, heapI, posY, posX);
  const k = groupKernels();
  const rowsOf = guide.subarray(rows[0] * width, rows[1] * width);
  const kind = k ? guideKind(rowsOf) : null;
  if (!k || !kind) return typescript;
  const i16 = kind === 'i16' && p <= 8;
  const size = i16 ? 2 : 8;
  const n = rowsOf.length;
  // i16 rows are read eight lanes at a time: 16 bytes of slack after the last row.
  const offAt = MATCH_BASE + align16(n * size + 16);
  const refAt = offAt + align16(offsets.length * 4);
  const heapDAt = refAt + align16(i16 ? 16 * p : p * p * 8);
  const heapIAt = heapDAt + align16(K * 8);
  ensureGroupMemory(k, heapIAt + align16(K * 4));
  (i16
    ? new Int16Array(k.memory.buffer, MATCH_BASE, n)
    : new Float64Array(k.memory.buffer, MATCH_BASE, n)
  ).set(rowsOf);
  new Int32Array(k.memory.buffer, offAt, offsets.length).set(offsets);
  const nOff = offsets.length / 2;
  // The kernels address rows by their global index: the base moves back by rows[0] rows (mod 2³²).
  const guideAt = (MATCH_BASE - rows[0] * width * size) | 0;
  const kernel = i16 ? k.exports.matchGroupI16 : k.exports.matchGroupF64;
  let idx = new Int32Array(k.memory.buffer, heapIAt, K);
  return (y, x, posY, posX) => {
    const count = kernel(guideAt, width, height, p, K, offAt, nOff, y, x, heapDAt, heapIAt, refAt);
    if (idx.buffer !== k.memory.buffer) idx = new Int32Array(k.memory.buffer, heapIAt, K);
    for (let i = 0; i < count; i++) {
      const o = idx[i];
      posY[i] = y + offsets[2 * o];
      posX[i] = x + offsets[2 * o + 1];
    }
    return count;
  };
}

/** Weighting floor so that pixels no group touches keep their fallback value (cannot happen with a full grid). */
const MIN_WEIGHT = 1e-12;

/** Weighted aggregation of group estimates into the rows [rowStart, rowEnd) of each plane. */
export class BandAggregate {
  private readonly num: Float64Array[];
  private readonly den: Float64Array[];

  constructor(
    planes: number,
    private readonly width: number,
    private readonly rowStart: number,
    private readonly rowEnd: number,
  ) {
    const n = (rowEnd - rowStart) * width;
    this.num = Array.from({ length: planes }, () => new Float64Array(n));
    this.den = Array.from({ length: planes }, () => new Float64Array(n));
  }

  /** Add the p×p patches of `est` (m × count, stride count) at (posY, posX) to plane c with weight w. */
  add(c: number, est: Float64Array, count: number, posY: Int32Array, posX: Int32Array, p: number, w: number) {
    const { width, rowStart, rowEnd } = this;
    const nm = this.num[c];
    const dn = this.den[c];
    for (let k = 0; k < count; k++) {
      for (let i = 0; i < p; i++) {
        const row = posY[k] + i;
        if (row < rowStart || row >= rowEnd) continue;
        const ob = (row - rowStart) * width + posX[k];
        for (let j = 0; j < p; j++) {
          nm[ob + j] += w * est[(i * p + j) * count + k];
          dn[ob + j] += w;
        }
      }
    }
  }

  /** The band of each plane; where no weight arrived, the full-size `fallback` plane's value. */
  result(fallback: Float32Array[]): Float32Array[] {
    const off = this.rowStart * this.width;
    return fallback.map((src, c) => {
      const o = new Float32Array((this.rowEnd - this.rowStart) * this.width);
      const nm = this.num[c];
      const dn = this.den[c];
      for (let i = 0; i < o.length; i++) o[i] = dn[i] > MIN_WEIGHT ? nm[i] / dn[i] : src[off + i];
      return o;
    });
  }
}
