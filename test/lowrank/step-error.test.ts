// One step of the crop's base estimate (engine/lowrank/step-error.ts: small functions, entries counted while
// quantised, all-zero vectors counted at once and costed from a table of zero runs) against the single function
// it replaced, kept here as the reference: the same value, gains and costs bit for bit at every step of the grid.
import { describe, expect, it } from 'vitest';
import { DEAD_ZONE } from '../../src-main/engine/codec/quantise';
import { greedyBlockOrder, poolHull } from '../../src-main/engine/lowrank/allocate';
import { tileColumns } from '../../src-main/engine/lowrank/base-estimate';
import { codeLengths, countVector, newCounts, vectorBits } from '../../src-main/engine/lowrank/cost-model';
import { stepGrid } from '../../src-main/engine/lowrank/solve';
import {
  type ColumnsPlane,
  errorAtStep,
  readySteps,
  StepScratch,
} from '../../src-main/engine/lowrank/step-error';
import { decodeImage } from '../../src-main/node/image/decode';
import { image } from '../helpers/fixtures';

/**
 * The step as lowrank/base-estimate.ts computed it before lowrank/step-error.ts: every component above the dead
 * zone quantised entry by entry (signed), counted by ./cost-model countVector, its bits by vectorBits, the hull
 * per tile, the greedy order and the longest prefix within the payload's bits.
 */
function referenceStep(planes: ColumnsPlane[], delta: number, payload: number, baseD: number) {
  const counts = newCounts();
  const q: number[] = [];
  const gains: number[] = [];
  const at: number[] = [];
  const quantise = (x: Float64Array, from: number, len: number, inv: number) => {
    let n2 = 0;
    let d = 0;
    for (let j = 0; j < len; j++) {
      const xj = x[from + j];
      const y = xj * inv;
      const a = Math.abs(y);
      const r = a < 0.5 + DEAD_ZONE ? 0 : Math.floor(a + 0.5 - DEAD_ZONE);
      const v = y < 0 ? -r : r;
      q.push(v);
      n2 += r * r;
      d += v * xj;
    }
    return [n2, d];
  };
  const ranks: number[] = [];
  for (const { tiles, weight, stepScale } of planes) {
    const step = delta * stepScale;
    for (const t of tiles) {
      let r = 0;
      while (r < t.s.length && !(t.s[r] < (0.5 + DEAD_ZONE) * step)) r++;
      ranks.push(r);
      for (let i = 0; i < r; i++) {
        const sigma = t.s[i];
        const from = q.length;
        const [nu2, du] = quantise(t.u, i * t.h, t.h, sigma / step);
        const [nv2, dv] = quantise(t.v, i * t.w, t.w, sigma / step);
        const nu = Math.sqrt(nu2);
        const nv = Math.sqrt(nv2);
        const c = nu > 0 && nv > 0 ? step / Math.sqrt(nu * nv) : 0;
        const e2 = c * c * nu2 * nv2 + sigma * sigma - 2 * sigma * c * du * dv;
        const e = c === 0 ? sigma * sigma : e2 > 0 ? e2 : 0;
        const gain = sigma * sigma - e;
        gains.push(weight * (sigma * sigma - (sigma * sigma - gain)));
        countVector(counts, q, from, t.h);
        countVector(counts, q, from + t.h, t.w);
        at.push(from);
      }
    }
  }
  const table = codeLengths(counts);
  const qi = Int32Array.from(q);
  const costs = at.map(() => 0);
  const [bGain, bCost, bTile, bEnd]: number[][] = [[], [], [], []];
  let c = 0;
  let tile = 0;
  for (const { tiles } of planes)
    for (const t of tiles) {
      const r = ranks[tile];
      for (let i = 0; i < r; i++)
        costs[c + i] =
          vectorBits(qi, table, at[c + i], t.h) + vectorBits(qi, table, at[c + i] + t.h, t.w) + 2;
      const [sg, sc, se]: number[][] = [[], [], []];
      const m = poolHull(gains, costs, r, sg, sc, se, c);
      for (let j = 0; j < m; j++) {
        bGain.push(sg[j]);
        bCost.push(sc[j]);
        bTile.push(tile);
        bEnd.push(se[j]);
      }
      c += r;
      tile++;
    }
  const order = greedyBlockOrder(bGain, bCost, bTile, bEnd, bGain.length);
  let cost = 0;
  let gain = 0;
  for (const b of order) {
    if (!(cost + bCost[b] <= payload * 8)) break;
    cost += bCost[b];
    gain += bGain[b];
  }
  return { err: Math.max(0, baseD - gain), gains, costs };
}

/** A centred w×h crop of a plane, as f64. */
function crop(p: ArrayLike<number>, width: number, height: number, w: number, h: number) {
  const [x0, y0] = [(width - w) >> 1, (height - h) >> 1];
  const out = new Float64Array(w * h);
  for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) out[y * w + x] = p[(y0 + y) * width + x0 + x];
  return out;
}

/** Every step of the grid through step-error and through the reference; also what the fast paths met. */
function compareSteps(planes: ColumnsPlane[], payloads: number[], maxValue: number) {
  const s = new StepScratch();
  const baseD = readySteps(planes, s);
  const count = s.gains.length;
  const entries = s.q.length;
  let zeroVectors = 0;
  let escapes = 0;
  let compared = 0;
  for (const payload of payloads)
    for (const delta of stepGrid(maxValue)) {
      const got = errorAtStep(planes, delta, payload, baseD, s);
      const want = referenceStep(planes, delta, payload, baseD);
      expect(got).toBe(want.err);
      // Each component's gain and cost too (a cost one ulp off rarely moves the error, but would be a change).
      expect(Array.from(s.gains.subarray(0, want.gains.length))).toEqual(want.gains);
      expect(Array.from(s.costs.subarray(0, want.costs.length))).toEqual(want.costs);
      compared++;
      for (let c = 0; c < count; c++) if (s.zero[c] !== 0) zeroVectors++;
      for (let i = 0; i < entries; i++) if (s.q[i] >= 16) escapes++;
    }
  return { zeroVectors, escapes, compared };
}

describe('errorAtStep', () => {
  it('equals the single-function step bit for bit on grey crops (tiles of 32 and partial edge tiles)', async () => {
    const img = await decodeImage(image('camera.png'));
    const [w, h] = [150, 100];
    const plane = crop(img.planes[0], img.width, img.height, w, h);
    const planes = [{ tiles: tileColumns(plane, w, h, 32, 255 / 1020), weight: 1, stepScale: 1 }];
    const r = compareSteps(planes, [40, 400, 4000], 255);
    expect(r.compared).toBe(3 * stepGrid(255).length);
    // Both fast paths ran: whole vectors quantised to 0, and magnitudes past the cost model's escape.
    expect(r.zeroVectors).toBeGreaterThan(0);
    expect(r.escapes).toBeGreaterThan(0);
  }, 60_000);

  it('equals it on a 16-bit crop and on weighted, scaled colour planes', async () => {
    const img = await decodeImage(image('chessboard_GRAY_U16.tif'));
    const [w, h] = [96, 64];
    const plane = crop(img.planes[0], img.width, img.height, w, h);
    const grey = compareSteps(
      [{ tiles: tileColumns(plane, w, h, 64, 65535 / 1020), weight: 1, stepScale: 1 }],
      [30, 900],
      65535,
    );
    expect(grey.zeroVectors).toBeGreaterThan(0);
    const [cw, ch] = [70, 50];
    const colour = [0, 1, 2].map((c) =>
      Float64Array.from(
        { length: cw * ch },
        (_, i) => 128 + 50 * Math.sin((i % cw) / (5 + c)) + ((i * 7919) % 13),
      ),
    );
    const weights = [0.5, 0.3, 0.2];
    const planes = colour.map((p, k) => ({
      tiles: tileColumns(p, cw, ch, 16, 255 / 1020),
      weight: weights[k],
      stepScale: Math.sqrt(weights[0] / weights[k]),
    }));
    expect(compareSteps(planes, [50, 500], 255).zeroVectors).toBeGreaterThan(0);
  }, 60_000);
});
