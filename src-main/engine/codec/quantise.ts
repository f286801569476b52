/**
 * Rate–distortion quantiser of truncated-SVD factors, and the matching reconstruction.
 *
 * Component i of a tile, σᵢ·uᵢ·vᵢᵀ, is stored as the two σ-weighted vectors a = σᵢuᵢ and b = σᵢvᵢ,
 * each entry rounded to one uniform step Δ with a dead zone. The decoder rebuilds
 * â·b̂ᵀ / ŝ with ŝ = sqrt(‖â‖·‖b̂‖), so σ costs no bytes. Why σ-weighting: an entry error e in a adds
 * e·vᵢᵀ to the image, of energy e² whatever σᵢ is, so one Δ gives every stored entry the same
 * distortion slope (−Δ²·ln2/6 per bit at high rate, the equal-slope condition of reverse water-filling;
 * Cover & Thomas, Elements of Information Theory, 2nd ed., §10.3.3, from memory). At low rate the dead
 * zone zeroes the entries of weak components, which then cost only their zero flags.
 */
import type { QuantPlane, QuantTile, TileRect } from './quantised';
import { tileGrid } from './quantised';

/** Dead zone: values below (0.5 + DEAD_ZONE)·Δ round to 0. 0.2 is a common choice for Laplacian-like data. */
export const DEAD_ZONE = 0.2;

/** q = sign(x)·floor(|x|/Δ + 0.5 − dz) for |x| ≥ (0.5 + dz)·Δ, else 0. */
export function quantiseVector(
  x: ArrayLike<number>,
  scale: number,
  step: number,
  out: Int32Array,
): Int32Array {
  const inv = scale / step;
  for (let j = 0; j < out.length; j++) {
    const y = x[j] * inv;
    const a = Math.abs(y);
    const q = a < 0.5 + DEAD_ZONE ? 0 : Math.floor(a + 0.5 - DEAD_ZONE);
    out[j] = y < 0 ? -q : q;
  }
  return out;
}

function norm(q: Int32Array): number {
  let s = 0;
  for (let j = 0; j < q.length; j++) s += q[j] * q[j];
  return Math.sqrt(s);
}

/** Scale applied to qu·qvᵀ at decode: Δ / sqrt(‖qu‖·‖qv‖), 0 if either vector is all zero. */
export function componentScale(qu: Int32Array, qv: Int32Array, step: number): number {
  const nu = norm(qu);
  const nv = norm(qv);
  return nu > 0 && nv > 0 ? step / Math.sqrt(nu * nv) : 0;
}

/**
 * Squared Frobenius error of one quantised component against σ·u·vᵀ (unit u, v), ignoring the
 * (small) cross terms with other components: ‖X‖² + σ² − 2σ·c·(qu·u)(qv·v), X = c·qu·qvᵀ.
 */
export function componentError(
  qu: Int32Array,
  qv: Int32Array,
  u: ArrayLike<number>,
  uStride: number,
  uOff: number,
  v: ArrayLike<number>,
  vStride: number,
  vOff: number,
  sigma: number,
  step: number,
): number {
  const c = componentScale(qu, qv, step);
  if (c === 0) return sigma * sigma;
  let nu = 0;
  let du = 0;
  for (let j = 0; j < qu.length; j++) {
    nu += qu[j] * qu[j];
    du += qu[j] * u[j * uStride + uOff];
  }
  let nv = 0;
  let dv = 0;
  for (let j = 0; j < qv.length; j++) {
    nv += qv[j] * qv[j];
    dv += qv[j] * v[j * vStride + vOff];
  }
  const e = c * c * nu * nv + sigma * sigma - 2 * sigma * c * du * dv;
  return e > 0 ? e : 0;
}

/** Rebuild a plane (grey levels, before clamping) from its quantised factors. Deterministic. */
export function reconstructPlane(plane: QuantPlane): Float64Array {
  const { width, height } = plane;
  const out = new Float64Array(width * height);
  const rects: TileRect[] = tileGrid(width, height, plane.tile);
  if (rects.length !== plane.tiles.length)
    throw new RangeError('tile count does not match the plane geometry');
  const row = new Float64Array(Math.max(1, plane.tile > 0 ? plane.tile : width));
  for (let t = 0; t < rects.length; t++) {
    const r = rects[t];
    addTileRows(out, width, r, plane.tiles[t], plane.step, plane.meanStep, row, 0, r.h, r.y);
  }
  return out;
}

/**
 * The value every sample of a plane rebuilt by {@link reconstructRows} takes when the plane is one tile with no
 * kept component (a residual-only file's base: its mean alone), so a reader may add it instead of filling rows
 * with it; undefined for any other plane.
 */
export function flatBase(plane: QuantPlane): number | undefined {
  if (plane.tiles.length !== 1 || plane.tiles[0].u.length !== 0) return undefined;
  // addTileRows's `mean`, the value its rows are filled with.
  return plane.tiles[0].meanQ * plane.meanStep;
}

/**
 * Rows [y0, y1) of a plane (grey levels, before clamping) from its quantised factors, into `out`
 * ((y1 − y0)·width values, row-major). The same arithmetic as {@link reconstructPlane}, so a plane rebuilt
 * band by band equals the whole-plane result value for value; only the tiles that meet the band are read.
 */
export function reconstructRows(
  plane: QuantPlane,
  rects: TileRect[],
  y0: number,
  y1: number,
  out: Float64Array,
): void {
  const { width } = plane;
  if (rects.length !== plane.tiles.length)
    throw new RangeError('tile count does not match the plane geometry');
  const row = new Float64Array(Math.max(1, plane.tile > 0 ? plane.tile : width));
  // Rects are in raster order (tileGrid): find the first one that reaches row y0, stop at row y1.
  let lo = 0;
  let hi = rects.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (rects[mid].y + rects[mid].h <= y0) lo = mid + 1;
    else hi = mid;
  }
  for (let t = lo; t < rects.length; t++) {
    const r = rects[t];
    if (r.y >= y1) break;
    const from = Math.max(y0, r.y) - r.y;
    const to = Math.min(y1, r.y + r.h) - r.y;
    addTileRows(out, width, r, plane.tiles[t], plane.step, plane.meanStep, row, from, to, r.y - y0);
  }
}

/**
 * Write rows [from, to) of one tile's mean plus Σ cₖ·quₖ·qvₖᵀ into `out` (row stride `width`, the tile's row
 * i at output row dy + i), a row at a time through `row`. Its own function so V8 optimises the loops once,
 * not by on-stack replacement inside the tile loop.
 */
function addTileRows(
  out: Float64Array,
  width: number,
  rect: TileRect,
  tile: QuantTile,
  step: number,
  meanStep: number,
  row: Float64Array,
  from: number,
  to: number,
  dy: number,
): void {
  const { x, w } = rect;
  const mean = tile.meanQ * meanStep;
  const n = tile.u.length;
  const scales = new Float64Array(n);
  for (let k = 0; k < n; k++) scales[k] = componentScale(tile.u[k], tile.v[k], step);
  for (let i = from; i < to; i++) {
    row.fill(mean, 0, w);
    for (let k = 0; k < n; k++) {
      const c = scales[k];
      if (c === 0) continue;
      const a = tile.u[k][i] * c;
      if (a === 0) continue;
      const qv = tile.v[k];
      for (let j = 0; j < w; j++) row[j] += a * qv[j];
    }
    out.set(row.subarray(0, w), (dy + i) * width + x);
  }
}
