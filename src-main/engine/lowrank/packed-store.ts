/**
 * The packed candidate store of the large-scan encoder (./tiled): every kept component of the scan in typed
 * arrays, no object per component or vector. Vector entries take one byte each (entries outside −127…127
 * go to a per-band escape list); tiles are rebuilt as QuantTiles on demand, with their vectors reused while
 * an entropy coder walks the tiles in order.
 */
import type { QuantTile } from '../codec/quantised';
import type { Comp } from './candidate';
import type { TileFactors } from './factorise';

/** Entry value that stands for "the next value of the band's escape list" (entries outside −127…127). */
const ESCAPE = -128;

/** One band row's vector entries: qu then qv of each component in tile order, one byte each. */
interface BandStore {
  q: Int8Array;
  /** Entries that do not fit a byte, in the order they occur. */
  esc: Int32Array;
}

/** One plane's tiles (raster order) and their quantised candidate components. */
export interface PackedPlane {
  g: Geometry;
  nTiles: number;
  meanQ: Int32Array;
  energy: Float64Array;
  /** σ after the tile's last kept component (for the spectral bound), −1 when there is none. */
  sNext: Float64Array;
  /** Components of tile t are first[t] … first[t + 1] − 1. */
  first: Int32Array;
  nComps: number;
  /** Per component: σ, the refit error (dropped once ordered), its first entry and first escape in its band. */
  sigma: Float64Array;
  err: Float64Array;
  at: Int32Array;
  escAt: Int32Array;
  bands: BandStore[];
  /** Tiles that skipped the SVD as quiet (see quietEnergy). */
  quiet: number[];
}

export interface Geometry {
  width: number;
  height: number;
  tile: number;
  cols: number;
}

export function newPackedPlane(g: Geometry): PackedPlane {
  const nTiles = g.cols * Math.ceil(g.height / g.tile);
  const c = Math.max(1024, nTiles);
  return {
    g,
    nTiles: 0,
    meanQ: new Int32Array(nTiles),
    energy: new Float64Array(nTiles),
    sNext: new Float64Array(nTiles),
    first: new Int32Array(nTiles + 1),
    nComps: 0,
    sigma: new Float64Array(c),
    err: new Float64Array(c),
    at: new Int32Array(c),
    escAt: new Int32Array(c),
    bands: [],
    quiet: [],
  };
}

export function grow<T extends Float64Array | Int32Array>(a: T, need: number): T {
  if (need <= a.length) return a;
  const b = new (a.constructor as new (n: number) => T)(Math.max(need, Math.ceil(a.length * 1.5)));
  b.set(a);
  return b;
}

/** Append one band row of tiles (their kept components, σ and errors) to a plane's store. */
export function appendBand(
  pp: PackedPlane,
  tiles: TileFactors[],
  lists: Comp[][],
  errs: Float64Array[],
): void {
  let entries = 0;
  let escapes = 0;
  let comps = 0;
  for (const list of lists)
    for (const c of list) {
      comps++;
      entries += c.qu.length + c.qv.length;
      for (const q of [c.qu, c.qv])
        for (let j = 0; j < q.length; j++) if (q[j] < -127 || q[j] > 127) escapes++;
    }
  const need = pp.nComps + comps;
  pp.sigma = grow(pp.sigma, need);
  pp.err = grow(pp.err, need);
  pp.at = grow(pp.at, need);
  pp.escAt = grow(pp.escAt, need);
  const band: BandStore = { q: new Int8Array(entries), esc: new Int32Array(escapes) };
  pp.bands.push(band);
  let p = 0;
  let e = 0;
  tiles.forEach((tf, i) => {
    const t = pp.nTiles++;
    const list = lists[i];
    pp.meanQ[t] = tf.meanQ;
    pp.energy[t] = tf.energy;
    pp.sNext[t] = list.length < tf.s.length ? tf.s[list.length] : -1;
    pp.first[t] = pp.nComps;
    for (let k = 0; k < list.length; k++) {
      const c = pp.nComps++;
      pp.sigma[c] = tf.s[k];
      pp.err[c] = errs[i][k];
      pp.at[c] = p;
      pp.escAt[c] = e;
      for (const q of [list[k].qu, list[k].qv])
        for (let j = 0; j < q.length; j++) {
          const v = q[j];
          if (v < -127 || v > 127) {
            band.q[p++] = ESCAPE;
            band.esc[e++] = v;
          } else band.q[p++] = v;
        }
    }
    pp.first[t + 1] = pp.nComps;
  });
}

/** Rect of tile t in raster order (as tileGrid gives it). */
export function tileRect(g: Geometry, t: number): { x: number; y: number; w: number; h: number } {
  const x = (t % g.cols) * g.tile;
  const y = Math.floor(t / g.cols) * g.tile;
  return { x, y, w: Math.min(g.tile, g.width - x), h: Math.min(g.tile, g.height - y) };
}

/** Component c (of a tile in band row br) into qu and qv (of the tile's height and width). */
export function unpack(pp: PackedPlane, br: number, c: number, qu: Int32Array, qv: Int32Array): void {
  const { q, esc } = pp.bands[br];
  let p = pp.at[c];
  let e = pp.escAt[c];
  for (let j = 0; j < qu.length; j++) {
    const v = q[p++];
    qu[j] = v === ESCAPE ? esc[e++] : v;
  }
  for (let j = 0; j < qv.length; j++) {
    const v = q[p++];
    qv[j] = v === ESCAPE ? esc[e++] : v;
  }
}

/** Int32Arrays reused from tile to tile while an entropy coder walks the tiles in order. */
export class VectorPool {
  private readonly byLen = new Map<number, Int32Array[]>();
  get(len: number, i: number): Int32Array {
    let list = this.byLen.get(len);
    if (!list) {
      list = [];
      this.byLen.set(len, list);
    }
    while (list.length <= i) list.push(new Int32Array(len));
    return list[i];
  }
}

/** Tile t at rank min(ranks[t], its component count) as a QuantTile; vectors from `pool` when given. */
export function packedTile(
  pp: PackedPlane,
  g: Geometry,
  t: number,
  ranks: Int32Array,
  pool: VectorPool | undefined,
): QuantTile {
  const f = pp.first[t];
  const r = Math.min(ranks[t], pp.first[t + 1] - f);
  const { w, h } = tileRect(g, t);
  const br = Math.floor(t / g.cols);
  const u: Int32Array[] = [];
  const v: Int32Array[] = [];
  for (let i = 0; i < r; i++) {
    const qu = pool ? pool.get(h, 2 * i) : new Int32Array(h);
    const qv = pool ? pool.get(w, 2 * i + 1) : new Int32Array(w);
    unpack(pp, br, f + i, qu, qv);
    u.push(qu);
    v.push(qv);
  }
  return { meanQ: pp.meanQ[t], u, v };
}

/**
 * A plane's tiles as an array whose elements are made when read: iterating (what the entropy coders do:
 * one tile after another) reuses one set of vectors, so coding a prefix holds no vector per component;
 * indexing makes a fresh tile. Only reading is supported.
 */
export function lazyTiles(pp: PackedPlane, g: Geometry, ranks: Int32Array): QuantTile[] {
  const n = pp.nTiles;
  const iterate = function* (): Generator<QuantTile> {
    const pool = new VectorPool();
    for (let t = 0; t < n; t++) yield packedTile(pp, g, t, ranks, pool);
  };
  return new Proxy([] as QuantTile[], {
    get(target, key, receiver) {
      if (key === 'length') return n;
      if (key === Symbol.iterator) return iterate;
      if (typeof key === 'string') {
        const i = Number(key);
        if (Number.isInteger(i) && i >= 0 && String(i) === key)
          return i < n ? packedTile(pp, g, i, ranks, undefined) : undefined;
      }
      return Reflect.get(target, key, receiver);
    },
  });
}
