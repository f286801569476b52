/**
 * Coefficient coder 2 (./coeff-coder) run where q already lies, with no array copied in or out: on the q
 * region of a plane's own memory (./resident-plane, ./wasm/arena.ts), encoding and decoding there, and the
 * decode of a check that reads the decoded values in place, in a region lent by a plane's arena or in the
 * port's own memory. Same bytes, same coefficients as ./coeff-coder's array forms.
 */
import { besideEncode } from './coded-aside';
import { bandTable, type CodedV2, offsetCodes, offsetsOf, SETUP } from './coeff-coder';
import * as rc from './range-coder';
import { workFree } from './resident-plane';
import type { PlaneArena } from './wasm/arena';
import { MAX_BANDS } from './wasm/coder-constants';
import {
  coderOn,
  coderWasm,
  decodeAt,
  decodeInPort,
  encodeAt,
  type LentRegion,
  planesLayout,
  type QView,
} from './wasm/coder-runtime';
import type { Band } from './wavelet-transform';

/**
 * Coder 2 on the q resident in a plane's arena (./resident-plane.ts) with its bin statistics `stats` (what
 * binStats gives): the bytes and offsets ./coeff-coder's encodeCoefficientsV2 returns for the same q, without
 * copying q; null where the port is unavailable, or the arena's coefficient region is lent to a decode on
 * another thread, whose coder shares this memory's scratch area (the caller then runs encodeCoefficientsV2).
 * With `beside` (the quantised result q is of, its band steps and non-zero count), the other thread works out
 * the result's band errors and non-zeros meanwhile (./coded-aside.ts).
 */
export function encodeResidentV2(
  arena: PlaneArena,
  bands: Band[],
  stats: { n: Int32Array; sum: Float64Array },
  beside?: { result: object; steps: Float64Array; nonZero: number },
): CodedV2 | null {
  const c = bands.length <= MAX_BANDS && workFree(arena) && !arena.onLoan ? arena.coder(SETUP) : null;
  if (!c) return null;
  const k = offsetCodes(stats.n, stats.sum);
  const offsets = offsetsOf(stats.n, k);
  const table = bandTable(bands);
  const at = arena.coderLayout(table);
  const encode = () => encodeAt(c, at, arena.n, arena.width, table, stats.n, k);
  if (!beside) return { bytes: encode(), offsets };
  // The reconstruction's Δ, d1, d2 per band, as ./wavelet-rebuild.ts makes them from the result.
  const par = (bi: number) => [beside.steps[bi], offsets[2 * bi], offsets[2 * bi + 1]];
  return { bytes: besideEncode(arena, beside.result, bands, par, beside.nonZero, at.mag, encode), offsets };
}

/**
 * Range-decode coder 2's `bytes` into the q region of a plane's arena (free it first: ./resident-plane.ts
 * releaseForRedecode), where ./coeff-coder's decodeCoefficientsV2 decodes into an array: no fresh pages, and
 * the decoded q stays there to be read in place. Returns the reconstruction offsets and the decoded values'
 * count per band and bin class (|q| = 1, |q| ≥ 2); null where the port is unavailable or the arena's region
 * is lent (as encodeResidentV2; take decodeCoefficientsV2).
 * @throws RangeError as decodeCoefficientsV2
 */
export function decodeResidentV2(
  arena: PlaneArena,
  bytes: Uint8Array,
  bands: Band[],
): { offsets: Float64Array; counts: Int32Array } | null {
  const c = bands.length <= MAX_BANDS && workFree(arena) && !arena.onLoan ? arena.coder(SETUP) : null;
  if (!c) return null;
  const table = bandTable(bands);
  const got = decodeAt(c, arena.coderLayout(table), arena.n, arena.width, table, bytes);
  if (!got) return null;
  rc.checkStreamEnd('plane data', got.pos, bytes.length);
  return { offsets: offsetsOf(got.counts, got.k), counts: got.counts };
}

/**
 * Range-decode coder 2's `bytes` of a plane of n coefficients (row stride `width`) where they need no fresh
 * array, and give `read` the decoded q where it lies (a view, valid during the call), its non-zero count (the
 * decoder's own count of the values it decoded) and the reconstruction offsets, as decodeCoefficientsV2 would
 * return them. Where: at the start of `region` (a coder instance on its memory; memory the encode already
 * touched; q, the map and the bytes where the region places them, ./wasm/coder-runtime.ts LentRegion) when they
 * fit there, else in the port's own memory. Null where the port
 * is unavailable (take decodeCoefficientsV2).
 * @throws RangeError as decodeCoefficientsV2
 */
export function decodeInPlaceV2<T>(
  bytes: Uint8Array,
  n: number,
  width: number,
  bands: Band[],
  read: (q: QView, nonZero: number, offsets: Float64Array) => T,
  region?: LentRegion,
): T | null {
  if (bands.length > MAX_BANDS) return null;
  const table = bandTable(bands);
  const give = (got: { pos: number; counts: Int32Array; k: Int32Array }, q: QView) => {
    rc.checkStreamEnd('plane data', got.pos, bytes.length);
    let nonZero = 0;
    for (let j = 0; j < got.counts.length; j++) nonZero += got.counts[j];
    return read(q, nonZero, offsetsOf(got.counts, got.k));
  };
  const placed = region?.mag !== undefined && region.tail !== undefined;
  const at =
    region &&
    (placed
      ? {
          ...planesLayout(n, table, region.at, region.mag),
          tail: region.tail as number,
          narrow: region.narrow,
        }
      : planesLayout(n, table, region.at, region.at + 4 * n));
  const c = at && at.tail + bytes.length <= region.at + region.bytes ? coderOn(region.memory, SETUP) : null;
  // (Into a narrow q, null too when a value does not fit: then into an i32 q in the port's own memory.)
  const got = c && at && decodeAt(c, at, n, width, table, bytes);
  if (c && got) {
    const buf = c.memory.buffer;
    return give(got, at.narrow ? new Int16Array(buf, at.q, n) : new Int32Array(buf, at.q, n));
  }
  const w = coderWasm(SETUP);
  return w && decodeInPort(w, bytes, n, width, table, give);
}
