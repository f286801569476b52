// Ruled lines are content, not sensor defects (src-main/engine/clean/band-rules.ts, banding.ts clipSpikes).
// In a crop a printed rule crosses every line, as a hot or dead column does, and `--banding auto` used to
// remove it whole with the banding it found: on the ruled pages below (drawn here) and on crops of
// samples/ledger-page.png and samples/map-sheet.png (our own synthetic demo scans, samples/SOURCES.md)
// with banding of RMS 3 and noise σ 3, 96–100 % of each rule's offset went with it. A sensor defect adds
// its offset (or scales the signal) whatever lies under it; a rule lays its ink over the paper, so its
// offset fades where the paper under it is as dark as the ink. Defects must still go.
import { describe, expect, it } from 'vitest';
import { decodeImage } from '../../src-main/node/image/decode';
import {
  autoBandingRemoved,
  damage,
  fixtureGray,
  type Gray,
  gaussian,
  randomProfile,
  rng,
  sineProfile,
} from './helpers';

/**
 * Paper of level ~222 with slow shading and fibre noise, and anti-aliased rules (coverage 1 − distance
 * beyond half the width, as samples/generate.mjs draws strokes) of the given widths and opacity, ink 90.
 */
function ruledPage(horiz: number[], vert: number[], widths: number[], opacity: number, seed: number): Gray {
  const w = 420;
  const h = 360;
  const g = gaussian(rng(seed));
  const cover = new Float32Array(w * h);
  const draw = (at: number, k: number, along: 'rows' | 'columns') => {
    const r = widths[k % widths.length] / 2;
    for (let a = 0; a < (along === 'rows' ? h : w); a++) {
      const c = Math.min(1, r + 0.5 - Math.abs(a - at)) * opacity;
      if (c > 0)
        for (let b = 0; b < (along === 'rows' ? w : h); b++) {
          const i = along === 'rows' ? a * w + b : b * w + a;
          cover[i] = Math.max(cover[i], c);
        }
    }
  };
  for (const [k, y] of horiz.entries()) draw(y, k, 'rows');
  for (const [k, x] of vert.entries()) draw(x, k + 1, 'columns');
  const data = new Float32Array(w * h);
  for (let y = 0; y < h; y++)
    for (let x = 0; x < w; x++) {
      const paper = 222 + 6 * Math.sin(x / 150 + 1) * Math.cos(y / 130 + 2) + 1.5 * g();
      data[y * w + x] = paper - cover[y * w + x] * (paper - 90);
    }
  return { width: w, height: h, data };
}

/** The offset of each position of the clean image, relative to the positions 4–8 away (median over lines). */
function ownOffsets(g: Gray, axis: 'rows' | 'columns'): Float64Array {
  const L = axis === 'columns' ? g.width : g.height;
  const N = axis === 'columns' ? g.height : g.width;
  const at = (k: number, x: number) =>
    axis === 'columns' ? g.data[k * g.width + x] : g.data[x * g.width + k];
  const med = (a: number[]) => a.sort((u, v) => u - v)[a.length >> 1];
  return Float64Array.from({ length: L }, (_, x) => {
    const d: number[] = [];
    for (let k = 0; k < N; k++) {
      const nb: number[] = [];
      for (let s = 4; s <= 8; s++) for (const j of [x - s, x + s]) if (j >= 0 && j < L) nb.push(at(k, j));
      d.push(at(k, x) - med(nb));
    }
    return med(d);
  });
}

/**
 * Per rule of the clean image (a run of positions whose own offset passes 20 grey levels, with its
 * shoulders above 20/6), the share of its offset that the removed part, less the true banding, takes out
 * (1: removed whole, 0: kept).
 */
function ruleLoss(clean: Gray, removed: Float32Array, banding: Float64Array, axis: 'rows' | 'columns') {
  const own = ownOffsets(clean, axis);
  const L = own.length;
  const across = (x: number) => {
    // the removed offset at position x: median over lines (the removed part is one value per position)
    const N = axis === 'columns' ? clean.height : clean.width;
    const v: number[] = [];
    for (let k = 0; k < N; k += 7)
      v.push(removed[axis === 'columns' ? k * clean.width + x : x * clean.width + k]);
    return v.sort((a, b) => a - b)[v.length >> 1] - banding[x];
  };
  const losses: number[] = [];
  for (let i = 0; i < L; ) {
    if (Math.abs(own[i]) <= 20) {
      i++;
      continue;
    }
    let s = i;
    while (s > 0 && Math.abs(own[s - 1]) > 20 / 6) s--;
    let e = i;
    while (e < L && Math.abs(own[e]) > 20 / 6) e++;
    let e0 = 0;
    let e1 = 0;
    for (let x = s; x < e; x++) {
      e0 += own[x] ** 2;
      e1 += across(x) * own[x];
    }
    losses.push(e1 / e0);
    i = e;
  }
  return losses;
}

/** What `--banding auto` removes from `dam`, per pixel (dam − out). */
function removedPart(dam: Float32Array, g: Gray): Float32Array {
  const out = autoBandingRemoved(dam, g);
  return dam.map((v, i) => v - out[i]);
}

async function sampleCrop(file: string, x: number, y: number, w: number, h: number): Promise<Gray> {
  const d = await decodeImage(`samples/${file}`);
  const data = new Float32Array(w * h);
  for (let j = 0; j < h; j++)
    for (let i = 0; i < w; i++) data[j * w + i] = d.planes[0][(y + j) * d.width + x + i];
  return { width: w, height: h, data };
}

describe('--banding auto keeps ruled lines that cross the whole image', () => {
  const both = ['rows', 'columns'] as const;
  const cases: Array<[string, () => Promise<Gray>, ReadonlyArray<'rows' | 'columns'>]> = [
    [
      'drawn: rules 1–4 px, regular',
      async () =>
        ruledPage(
          [40.3, 95.6, 151, 206.4, 261.7, 317],
          [50.2, 120.5, 190, 260.7, 331.4],
          [1, 2, 3, 4, 1.5],
          0.7,
          1,
        ),
      both,
    ],
    [
      'drawn: faint rules 1–2 px, irregular',
      async () =>
        ruledPage([22.5, 61, 140.2, 171.7, 290.4], [35.6, 108, 196.3, 214.9, 377.2], [1, 1.4, 2], 0.25, 2),
      both,
    ],
    // Its rows are left out: where handwriting lies over a rule the fit against the running median's level
    // cannot show the ink, and one of the nine rules is still removed whole (see band-rules.ts).
    [
      'samples/ledger-page.png crop (double margin)',
      () => sampleCrop('ledger-page.png', 100, 400, 400, 512),
      ['columns'],
    ],
    [
      'samples/map-sheet.png crop (grid lines, red plane)',
      () => sampleCrop('map-sheet.png', 80, 150, 700, 700),
      both,
    ],
  ];
  for (const [label, make, axes] of cases)
    for (const axis of axes)
      it(`${label}, ${axis === 'rows' ? 'row banding period 17.3' : 'random column stripes'} RMS 3, noise σ 3: no rule is removed`, async () => {
        const g = await make();
        const L = axis === 'rows' ? g.height : g.width;
        const banding = axis === 'rows' ? sineProfile(L, 3, 17.3) : randomProfile(L, 3, 31);
        const dam = damage(g, { sigma: 3, seed: 8, [axis]: banding });
        const losses = ruleLoss(g, removedPart(dam, g), banding, axis);
        expect(losses.length).toBeGreaterThan(0);
        // Before band-rules.ts each case here but the drawn page's columns lost rules whole (0.96–1.00). What
        // remains is the error of the banding
        // bridged across each rule (banding.ts bridge), up to a quarter of a faint rule's offset.
        for (const [k, loss] of losses.entries()) expect(loss, `rule ${k}`).toBeLessThan(0.5);
      });
});

describe('--banding auto still removes hot and dead columns and rows', () => {
  for (const [kind, apply] of [
    ['offset +30', (v: number) => v + 30],
    ['offset −30', (v: number) => v - 30],
  ] as const)
    for (const width of [1, 2])
      it(`moon.png with column stripes RMS 3 and noise σ 3: a ${width} px column of ${kind} goes (≥ 80 % of its offset)`, async () => {
        const g = await fixtureGray('moon.png');
        const at = 189;
        const bad = g.data.map((v, i) => (i % g.width >= at && i % g.width < at + width ? apply(v) : v));
        const stripes = randomProfile(g.width, 3, 41);
        const dam = damage({ ...g, data: bad }, { sigma: 3, seed: 9, columns: stripes });
        const removed = removedPart(dam, g);
        for (let x = at; x < at + width; x++) {
          let truth = 0;
          let taken = 0;
          for (let y = 0; y < g.height; y++) {
            truth += bad[y * g.width + x] - g.data[y * g.width + x];
            // relative to the columns 3 away, which carry stripes only
            taken +=
              removed[y * g.width + x] -
              (removed[y * g.width + at - 3] + removed[y * g.width + at + width + 2]) / 2;
          }
          // What should be taken there: the defect's mean offset plus the stripes' own step to the neighbours.
          const offset = truth / g.height;
          const want = offset + stripes[x] - (stripes[at - 3] + stripes[at + width + 2]) / 2;
          expect(Math.abs(taken / g.height - want), `column ${x}`).toBeLessThan(0.2 * Math.abs(offset));
        }
      });
});
