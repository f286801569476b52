#!/usr/bin/env node
/**
 * Deterministic generator for Rankfold's demo scans. Everything here is synthetic: the scenario (the
 * Harrowgate County Survey Office and the Fenwick Lab) is invented, and no outside image data is used.
 * Each sample has its own seed, so one file can be regenerated alone and comes out the same.
 *
 *   node samples/generate.mjs                 write every committed sample into samples/
 *   node samples/generate.mjs --out DIR       write them into DIR instead
 *   node samples/generate.mjs --only a,b      only the named samples (file names without extension)
 *   node samples/generate.mjs --large         also the 3000×4000 ledger page (not committed; ~8 MB)
 *   node samples/generate.mjs --list          list the samples and exit
 *
 * Determinism: a seeded PRNG (mulberry32) drives every random choice; no clock, no Math.random.
 * The pixels depend only on the seed and on IEEE-754 arithmetic (V8's Math.sin/cos/exp/log are
 * fdlibm ports, the same on every platform). The PNG/TIFF bytes additionally depend on libvips and
 * zlib in sharp, so test/samples checks the decoded pixels against the committed files.
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import sharp from 'sharp';

const here = dirname(fileURLToPath(import.meta.url));

// ---------------------------------------------------------------------------------------------
// Random numbers and noise

/** mulberry32: a small, well-mixed 32-bit PRNG (public-domain construction by Tommy Ettinger). */
export function rng(seed) {
  let a = seed >>> 0;
  const next = () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  let spare = null;
  next.gauss = () => {
    if (spare !== null) {
      const s = spare;
      spare = null;
      return s;
    }
    let u = next();
    while (u <= 1e-12) u = next();
    const v = next();
    const r = Math.sqrt(-2 * Math.log(u));
    spare = r * Math.sin(2 * Math.PI * v);
    return r * Math.cos(2 * Math.PI * v);
  };
  next.range = (lo, hi) => lo + (hi - lo) * next();
  next.int = (lo, hi) => lo + Math.floor((hi - lo + 1) * next());
  return next;
}

/** Integer lattice hash → [0, 1). */
function hash2(ix, iy, seed) {
  let h = Math.imul(ix, 0x27d4eb2d) ^ Math.imul(iy, 0x165667b1) ^ Math.imul(seed, 0x9e3779b9);
  h = Math.imul(h ^ (h >>> 15), 0x85ebca6b);
  h = Math.imul(h ^ (h >>> 13), 0xc2b2ae35);
  return ((h ^ (h >>> 16)) >>> 0) / 4294967296;
}

/** Smooth value noise in [−1, 1] on a lattice of the given cell size. */
function valueNoise(x, y, cell, seed) {
  const fx = x / cell;
  const fy = y / cell;
  const ix = Math.floor(fx);
  const iy = Math.floor(fy);
  const tx = fx - ix;
  const ty = fy - iy;
  const sx = tx * tx * (3 - 2 * tx);
  const sy = ty * ty * (3 - 2 * ty);
  const a = hash2(ix, iy, seed);
  const b = hash2(ix + 1, iy, seed);
  const c = hash2(ix, iy + 1, seed);
  const d = hash2(ix + 1, iy + 1, seed);
  return 2 * (a + (b - a) * sx + (c - a) * sy + (a - b - c + d) * sx * sy) - 1;
}

/** Fractal sum of value noise: octaves halve the cell and the amplitude. Roughly in [−1, 1]. */
function fbm(x, y, cell, octaves, seed) {
  let sum = 0;
  let amp = 1;
  let norm = 0;
  for (let o = 0; o < octaves; o++) {
    sum += amp * valueNoise(x, y, cell, seed + o * 1013);
    norm += amp;
    amp *= 0.5;
    cell *= 0.5;
  }
  return sum / norm;
}

/** A plane of fbm values, computed on a coarse grid and interpolated (fast for large, smooth fields). */
function fbmPlane(w, h, cell, octaves, seed, step = 4) {
  const gw = Math.ceil(w / step) + 2;
  const gh = Math.ceil(h / step) + 2;
  const g = new Float64Array(gw * gh);
  for (let j = 0; j < gh; j++)
    for (let i = 0; i < gw; i++) g[j * gw + i] = fbm(i * step, j * step, cell, octaves, seed);
  const out = new Float32Array(w * h);
  for (let y = 0; y < h; y++) {
    const gy = y / step;
    const j = Math.floor(gy);
    const ty = gy - j;
    for (let x = 0; x < w; x++) {
      const gx = x / step;
      const i = Math.floor(gx);
      const tx = gx - i;
      const a = g[j * gw + i];
      const b = g[j * gw + i + 1];
      const c = g[(j + 1) * gw + i];
      const d = g[(j + 1) * gw + i + 1];
      out[y * w + x] = a + (b - a) * tx + (c - a) * ty + (a - b - c + d) * tx * ty;
    }
  }
  return out;
}

// ---------------------------------------------------------------------------------------------
// Drawing: coverage planes in [0, 1], antialiased by distance

class Coverage {
  constructor(w, h) {
    this.w = w;
    this.h = h;
    this.a = new Float32Array(w * h);
  }
  /** A segment of the given width; combines with max so overlapping strokes do not over-darken. */
  segment(x0, y0, x1, y1, width, strength = 1) {
    const r = width / 2;
    const minX = Math.max(0, Math.floor(Math.min(x0, x1) - r - 1));
    const maxX = Math.min(this.w - 1, Math.ceil(Math.max(x0, x1) + r + 1));
    const minY = Math.max(0, Math.floor(Math.min(y0, y1) - r - 1));
    const maxY = Math.min(this.h - 1, Math.ceil(Math.max(y0, y1) + r + 1));
    const dx = x1 - x0;
    const dy = y1 - y0;
    const len2 = dx * dx + dy * dy;
    for (let y = minY; y <= maxY; y++)
      for (let x = minX; x <= maxX; x++) {
        let t = len2 > 0 ? ((x - x0) * dx + (y - y0) * dy) / len2 : 0;
        t = t < 0 ? 0 : t > 1 ? 1 : t;
        const ex = x - (x0 + t * dx);
        const ey = y - (y0 + t * dy);
        const d = Math.sqrt(ex * ex + ey * ey);
        let c = r + 0.5 - d;
        if (c <= 0) continue;
        c = (c > 1 ? 1 : c) * strength;
        const k = y * this.w + x;
        if (c > this.a[k]) this.a[k] = c;
      }
  }
  polyline(pts, width, strength = 1) {
    for (let i = 1; i < pts.length; i++) {
      const w = typeof width === 'function' ? width(i / pts.length) : width;
      this.segment(pts[i - 1][0], pts[i - 1][1], pts[i][0], pts[i][1], w, strength);
    }
  }
  disk(cx, cy, r, strength = 1) {
    this.segment(cx, cy, cx, cy, 2 * r, strength);
  }
}

const clamp = (v, lo, hi) => (v < lo ? lo : v > hi ? hi : v);

/** Handwriting-like cursive: a pen path of loops and connectors along a baseline. Returns words' right edge. */
function writeWords(cov, r, x0, baseline, maxX, xHeight, width, opts = {}) {
  let x = x0;
  const slant = opts.slant ?? 0.25;
  while (x < maxX - 4 * xHeight) {
    const letters = r.int(2, 9);
    const pts = [];
    let px = x;
    for (let l = 0; l < letters; l++) {
      const adv = xHeight * r.range(0.55, 0.95);
      const kind = r();
      // ascender, descender or plain x-height letter
      const top = kind < 0.18 ? xHeight * r.range(1.7, 2.3) : xHeight * r.range(0.85, 1.1);
      const bottom = kind > 0.88 ? -xHeight * r.range(0.7, 1.1) : 0;
      const steps = 14;
      for (let s = 0; s <= steps; s++) {
        const t = s / steps;
        const up = Math.sin(Math.PI * t);
        const yOff =
          t < 0.5 ? top * up : bottom !== 0 ? bottom * Math.sin(Math.PI * (t - 0.5) * 2) : top * up;
        const loop = 0.35 * adv * Math.sin(2 * Math.PI * t);
        const yy = baseline - yOff;
        const xx = px + adv * t - loop + slant * (baseline - yy);
        pts.push([xx + r.gauss() * 0.15, yy + r.gauss() * 0.15]);
      }
      px += adv;
    }
    const pressure = r.range(0.75, 1);
    cov.polyline(pts, (t) => width * (0.65 + 0.45 * Math.sin(Math.PI * t)) * pressure, opts.strength ?? 1);
    x = px + xHeight * r.range(0.9, 1.8);
    if (opts.maxWords && --opts.maxWords <= 0) break;
  }
  return x;
}

// ---------------------------------------------------------------------------------------------
// Samples

/** Harrowgate County Survey Office: a ruled ledger page with handwritten entries, 8-bit gray. */
function ledgerPage(scale = 1) {
  const W = Math.round(1600 * scale);
  const H = Math.round(2100 * scale);
  const r = rng(1101);
  const s = (v) => v * scale;
  const shade = fbmPlane(W, H, s(700), 4, 11, 8);
  const fibre = fbmPlane(W, H, s(9), 2, 12, 1);
  const paper = new Float32Array(W * H);
  for (let y = 0; y < H; y++)
    for (let x = 0; x < W; x++) {
      const k = y * W + x;
      const ex = (x / W - 0.5) * 2;
      const ey = (y / H - 0.5) * 2;
      paper[k] = 226 + 7 * shade[k] + 2.2 * fibre[k] - 6 * (ex * ex * ex * ex + ey * ey * ey * ey);
    }
  // foxing: small brownish (darker) blotches
  for (let i = 0; i < 30; i++) {
    const cx = r.range(0, W);
    const cy = r.range(0, H);
    const rad = s(r.range(4, 26));
    const depth = r.range(6, 22);
    for (let y = Math.max(0, Math.floor(cy - 3 * rad)); y < Math.min(H, cy + 3 * rad); y++)
      for (let x = Math.max(0, Math.floor(cx - 3 * rad)); x < Math.min(W, cx + 3 * rad); x++) {
        const d2 = ((x - cx) ** 2 + (y - cy) ** 2) / (rad * rad);
        paper[y * W + x] -= depth * Math.exp(-d2) * (0.7 + 0.3 * valueNoise(x, y, s(5), 13 + i));
      }
  }
  const rules = new Coverage(W, H);
  const lineGap = s(58);
  const top = s(250);
  for (let y = top; y < H - s(110); y += lineGap) rules.segment(s(60), y, W - s(60), y, s(1.6), 0.55);
  rules.segment(s(60), s(200), W - s(60), s(200), s(2.4), 0.8); // heading rule
  for (const xm of [s(230), s(236)]) rules.segment(xm, s(120), xm, H - s(90), s(1.5), 0.7); // double margin
  for (const xc of [W - s(330), W - s(210), W - s(120)])
    rules.segment(xc, s(200), xc, H - s(110), s(1.4), 0.6);
  const ink = new Coverage(W, H);
  // heading, larger hand
  writeWords(ink, r, s(260), s(165), W - s(400), s(24), s(3.4), { maxWords: 5, slant: 0.2 });
  writeWords(ink, r, s(80), s(165), s(220), s(18), s(2.6), { maxWords: 1 });
  let line = 0;
  for (let y = top + lineGap; y < H - s(120); y += lineGap, line++) {
    if (r() < 0.1) continue; // blank line
    // date in the margin column, entry text, then amounts in the money columns
    writeWords(ink, r, s(80), y - s(8), s(220), s(12), s(2), { maxWords: 1, slant: 0.15 });
    const end = line % 7 === 6 ? s(700) : W - s(360) - r.range(0, s(500));
    writeWords(ink, r, s(255), y - s(8), end, s(14), s(2.2));
    for (const [a, b] of [
      [W - s(320), W - s(220)],
      [W - s(200), W - s(130)],
    ])
      if (r() < 0.8) writeWords(ink, r, a + s(8), y - s(8), b, s(11), s(2), { maxWords: 1, slant: 0.1 });
  }
  const fade = fbmPlane(W, H, s(400), 3, 14, 8);
  const out = new Uint8Array(W * H);
  const grain = rng(1102);
  for (let k = 0; k < W * H; k++) {
    let v = paper[k];
    v -= rules.a[k] * (v - 150);
    const inkLevel = 58 + 22 * fade[k];
    v -= ink.a[k] * (v - inkLevel);
    v += 1.6 * grain.gauss();
    out[k] = clamp(Math.round(v), 0, 255);
  }
  return { width: W, height: H, channels: 1, depth: 8, data: out, density: Math.round(200 * scale) };
}

/** Harrowgate County Survey Office: a contoured map sheet with grid, water and a fold, 8-bit RGB. */
function mapSheet() {
  const W = 2000;
  const H = 1500;
  const r = rng(2201);
  const terrain = fbmPlane(W, H, 900, 6, 21, 2);
  const height = new Float32Array(W * H);
  for (let k = 0; k < W * H; k++) height[k] = 120 + 260 * terrain[k];
  // ridge bump
  for (let y = 0; y < H; y++)
    for (let x = 0; x < W; x++)
      height[y * W + x] += 140 * Math.exp(-(((x - 1350) / 380) ** 2) - ((y - 500) / 260) ** 2);
  const contours = new Float32Array(W * H);
  const index = new Float32Array(W * H);
  const interval = 10;
  for (let y = 1; y < H - 1; y++)
    for (let x = 1; x < W - 1; x++) {
      const k = y * W + x;
      const hv = height[k];
      if (hv < 40) continue;
      const gx = (height[k + 1] - height[k - 1]) / 2;
      const gy = (height[k + W] - height[k - W]) / 2;
      const g = Math.sqrt(gx * gx + gy * gy) + 1e-6;
      const lvl = Math.round(hv / interval);
      const d = Math.abs(hv - lvl * interval) / g;
      const isIndex = lvl % 5 === 0;
      const c = clamp((isIndex ? 1.3 : 0.7) + 0.5 - d, 0, 1);
      if (isIndex) index[k] = c;
      else contours[k] = c;
    }
  const water = new Coverage(W, H);
  // streams by steepest descent from seeded sources
  for (let i = 0; i < 9; i++) {
    let x = r.range(200, W - 200);
    let y = r.range(150, H - 150);
    const pts = [[x, y]];
    for (let step = 0; step < 900; step++) {
      const ix = Math.round(x);
      const iy = Math.round(y);
      if (ix < 2 || iy < 2 || ix > W - 3 || iy > H - 3 || height[iy * W + ix] < 40) break;
      const gx = height[iy * W + ix + 1] - height[iy * W + ix - 1];
      const gy = height[(iy + 1) * W + ix] - height[(iy - 1) * W + ix];
      const g = Math.hypot(gx, gy) + 1e-6;
      x += (-2 * gx) / g + 0.6 * r.gauss();
      y += (-2 * gy) / g + 0.6 * r.gauss();
      pts.push([x, y]);
    }
    water.polyline(pts, (t) => 1.2 + 2 * t);
  }
  const grid = new Coverage(W, H);
  for (let x = 100; x < W; x += 300) grid.segment(x, 60, x, H - 60, 1.1, 0.8);
  for (let y = 60 + 140; y < H; y += 300) grid.segment(60, y, W - 60, y, 1.1, 0.8);
  for (const [x0, y0, x1, y1] of [
    [60, 60, W - 60, 60],
    [W - 60, 60, W - 60, H - 60],
    [W - 60, H - 60, 60, H - 60],
    [60, H - 60, 60, 60],
  ])
    grid.segment(x0, y0, x1, y1, 4, 1);
  const labels = new Coverage(W, H);
  for (let i = 0; i < 14; i++)
    writeWords(labels, r, r.range(150, W - 500), r.range(150, H - 150), W - 100, 9, 1.6, {
      maxWords: r.int(1, 3),
    });
  writeWords(labels, r, 700, 40, W - 600, 14, 2.4, { maxWords: 4, slant: 0.15 });
  const stain = fbmPlane(W, H, 500, 4, 23, 4);
  const grain = rng(2202);
  const out = new Uint8Array(W * H * 3);
  for (let y = 0; y < H; y++)
    for (let x = 0; x < W; x++) {
      const k = y * W + x;
      const age = 0.5 + 0.5 * stain[k];
      let R = 236 - 10 * age;
      let G = 229 - 14 * age;
      let B = 208 - 24 * age;
      // fold creases
      const fold = Math.exp(-(((x - W / 2) / 3) ** 2)) * 18 + Math.exp(-(((y - H / 2) / 3) ** 2)) * 14;
      R -= fold;
      G -= fold;
      B -= fold;
      if (height[k] < 40) {
        R += (178 - R) * 0.75;
        G += (208 - G) * 0.75;
        B += (228 - B) * 0.75;
      }
      const mix = (cov, cr, cg, cb) => {
        R += (cr - R) * cov;
        G += (cg - G) * cov;
        B += (cb - B) * cov;
      };
      mix(contours[k] * 0.8, 160, 100, 50);
      mix(index[k], 130, 75, 35);
      mix(water.a[k], 40, 95, 170);
      mix(grid.a[k], 35, 35, 40);
      mix(labels.a[k], 30, 30, 30);
      const n = 0.8 * grain.gauss();
      out[3 * k] = clamp(Math.round(R + n), 0, 255);
      out[3 * k + 1] = clamp(Math.round(G + n), 0, 255);
      out[3 * k + 2] = clamp(Math.round(B + n), 0, 255);
    }
  return { width: W, height: H, channels: 3, depth: 8, data: out, density: 150 };
}

/** Fenwick Lab: an electrophoresis gel, dark bands on a light stained background, 8-bit gray, 2 pages (exposures). */
function gelScan() {
  const W = 1200;
  const H = 960;
  const r = rng(3301);
  const lanes = 12;
  const laneW = 64;
  const pitch = 88;
  const left = (W - (lanes - 1) * pitch) / 2;
  // ladder (lane 0): log-spaced fragment sizes; samples: random subsets and strengths
  const ladder = [];
  for (let i = 0; i < 14; i++) ladder.push(150 + 700 * (Math.log(1 + i * 0.9) / Math.log(1 + 13 * 0.9)));
  const laneBands = [];
  for (let l = 0; l < lanes; l++) {
    const bands = [];
    if (l === 0 || l === lanes - 1)
      for (const y of ladder) bands.push({ y, amp: 0.55 + 0.1 * r(), sigma: 3.2 });
    else {
      const n = r.int(3, 9);
      for (let i = 0; i < n; i++)
        bands.push({ y: r.range(170, 860), amp: r.range(0.15, 1), sigma: r.range(2.5, 6) });
    }
    laneBands.push({ bands, smear: r.range(0, 0.25), shift: r.gauss() * 3 });
  }
  const stain = fbmPlane(W, H, 350, 4, 31, 4);
  const absorb = new Float32Array(W * H);
  for (let y = 0; y < H; y++)
    for (let x = 0; x < W; x++) {
      let a = 0.12 + 0.05 * stain[y * W + x];
      const l = Math.round((x - left) / pitch);
      if (l >= 0 && l < lanes) {
        const cx = left + l * pitch;
        const u = (x - cx) / (laneW / 2);
        if (Math.abs(u) < 1.25) {
          const across = 1 / (1 + Math.exp((Math.abs(u) - 1) * 9));
          const lane = laneBands[l];
          const smile = 10 * (1 - ((l - (lanes - 1) / 2) / ((lanes - 1) / 2)) ** 2); // centre lanes run further
          let v = 0;
          for (const b of lane.bands) {
            const by = b.y + smile + lane.shift + 3 * u * u;
            const d = y - by;
            v += b.amp * Math.exp(-(d * d) / (2 * b.sigma * b.sigma));
            if (d > 0) v += lane.smear * b.amp * 0.25 * Math.exp(-d / 60);
          }
          // wells at the top
          if (y > 95 && y < 125) v += 0.5 * (1 - Math.abs(y - 110) / 15);
          a += across * v;
        }
      }
      // dye front
      a += 0.18 * Math.exp(-(((y - 905) / 5) ** 2)) * (x > 40 && x < W - 40 ? 1 : 0);
      absorb[y * W + x] = a;
    }
  const dust = new Coverage(W, H);
  for (let i = 0; i < 40; i++) dust.disk(r.range(0, W), r.range(0, H), r.range(0.6, 2.2), r.range(0.3, 1));
  const pages = [];
  for (const [exposure, seed] of [
    [1, 3302],
    [2.2, 3303],
  ]) {
    const g = rng(seed);
    const out = new Uint8Array(W * H);
    for (let k = 0; k < W * H; k++) {
      // transmitted light through the stain, with a camera-like response
      const t = Math.exp(-exposure * 2.3 * absorb[k]);
      let v = 18 + 225 * t;
      v -= dust.a[k] * 90;
      v += 1.8 * g.gauss();
      out[k] = clamp(Math.round(v), 0, 255);
    }
    pages.push(out);
  }
  const data = new Uint8Array(W * H * 2);
  data.set(pages[0], 0);
  data.set(pages[1], W * H);
  return { width: W, height: H, pages: 2, channels: 1, depth: 8, data, density: 300 };
}

/** Fenwick Lab: a 16-bit scan of a photographic plate (star field negative) with a step wedge. */
function filmPlate16() {
  const W = 1200;
  const H = 1500;
  const r = rng(4401);
  const density = new Float32Array(W * H); // optical density of the emulsion
  const fog = fbmPlane(W, H, 800, 4, 41, 8);
  for (let y = 0; y < H; y++)
    for (let x = 0; x < W; x++) {
      const ex = (x - W / 2) / W;
      const ey = (y - H / 2) / H;
      density[y * W + x] = 0.32 + 0.05 * fog[y * W + x] + 0.12 * (ex * ex + ey * ey);
    }
  // stars: power-law brightness, Gaussian images, halation rings for the brightest
  const stars = 1800;
  for (let i = 0; i < stars; i++) {
    const cx = r.range(40, W - 40);
    const cy = r.range(40, H - 200);
    const flux = 0.04 * (1 / (0.02 + r())) ** 0.9;
    const sigma = 0.9 + 0.5 * Math.log1p(flux);
    const peak = Math.min(2.6, flux);
    const rad = Math.ceil(4 * sigma + (peak > 1.5 ? 14 : 0));
    for (let y = Math.max(0, Math.floor(cy - rad)); y <= Math.min(H - 1, cy + rad); y++)
      for (let x = Math.max(0, Math.floor(cx - rad)); x <= Math.min(W - 1, cx + rad); x++) {
        const d2 = (x - cx) ** 2 + (y - cy) ** 2;
        let add = peak * Math.exp(-d2 / (2 * sigma * sigma));
        if (peak > 1.5) add += 0.05 * Math.exp(-((Math.sqrt(d2) - 3 * sigma - 6) ** 2) / 4);
        density[y * W + x] += add;
      }
  }
  // sensitometer step wedge along the bottom: 11 steps of 0.12 density
  for (let y = H - 150; y < H - 40; y++)
    for (let x = 100; x < W - 100; x++)
      density[y * W + x] = 0.1 + 0.12 * Math.floor(((x - 100) / (W - 200)) * 11);
  // scratches: thin, clear (low density) lines
  const scratch = new Coverage(W, H);
  for (let i = 0; i < 5; i++) {
    const x0 = r.range(0, W);
    const y0 = r.range(0, H);
    const ang = r.range(0, Math.PI);
    const len = r.range(200, 900);
    scratch.segment(
      x0,
      y0,
      x0 + len * Math.cos(ang),
      y0 + len * Math.sin(ang),
      r.range(0.8, 1.6),
      r.range(0.4, 0.9),
    );
  }
  const g = rng(4402);
  const out = new Uint16Array(W * H);
  for (let k = 0; k < W * H; k++) {
    // emulsion grain: multiplicative density noise; scanner: transmitted light T = 10^−D on 16 bits
    let d = density[k] * (1 + 0.025 * g.gauss());
    d -= scratch.a[k] * d * 0.8;
    const t = 10 ** -d;
    let v = 1200 + 62000 * t + 35 * g.gauss();
    // unexposed rebate at the plate edges
    const x = k % W;
    const y = (k - x) / W;
    if (x < 18 || x >= W - 18 || y < 18 || y >= H - 18) v = 61500 + 40 * g.gauss();
    out[k] = clamp(Math.round(v), 0, 65535);
  }
  return { width: W, height: H, channels: 1, depth: 16, data: out, density: 1200 };
}

/** Fenwick Lab: a line-sensor scan with column fixed-pattern noise and row banding, plus its clean truth, 8-bit gray. */
function lineSensorPair() {
  const W = 1400;
  const H = 1000;
  const r = rng(5501);
  // content: a printed figure page (smooth photo-like panel, text strokes, a plot)
  const scene = fbmPlane(W, H, 260, 5, 51, 2);
  const truth = new Float32Array(W * H);
  for (let y = 0; y < H; y++)
    for (let x = 0; x < W; x++) {
      const k = y * W + x;
      let v = 222;
      if (x > 90 && x < 760 && y > 100 && y < 620)
        v = 128 + 80 * scene[k] + 25 * Math.sin(x / 45) * Math.cos(y / 70);
      truth[k] = v;
    }
  const ink = new Coverage(W, H);
  for (let y = 700; y < H - 60; y += 34)
    writeWords(ink, r, 95, y, W - 95 - r.range(0, 300), 9, 1.8, { slant: 0.05 });
  for (let y = 120; y < 600; y += 34) writeWords(ink, r, 820, y, W - 95, 9, 1.8, { slant: 0.05 });
  // plot axes and a curve inside the right column bottom
  const plot = [];
  for (let x = 0; x <= 500; x += 4) plot.push([840 + x, 640 - 40 * Math.exp(-(((x - 250) / 80) ** 2))]);
  ink.polyline(plot, 2);
  for (let k = 0; k < W * H; k++) truth[k] -= ink.a[k] * (truth[k] - 35);
  // sensor: per-column gain and offset (CIS chips of 216 px with step offsets), row banding from lamp flicker
  const gain = new Float32Array(W);
  const offset = new Float32Array(W);
  for (let x = 0; x < W; x++) {
    const chip = Math.floor(x / 216);
    gain[x] = 1 + 0.012 * r.gauss() + 0.02 * Math.sin(chip * 2.1);
    offset[x] = 3 * r.gauss() + 5 * ((chip % 2) - 0.5);
  }
  for (let i = 0; i < 6; i++) offset[r.int(0, W - 1)] += r.range(-25, 25); // a few hot/dead columns
  const rowBand = new Float32Array(H);
  let walk = 0;
  for (let y = 0; y < H; y++) {
    walk = 0.97 * walk + 0.6 * r.gauss();
    rowBand[y] = 4 * Math.sin((2 * Math.PI * y) / 41) + walk;
  }
  const g = rng(5502);
  const noisy = new Uint8Array(W * H);
  const clean = new Uint8Array(W * H);
  for (let y = 0; y < H; y++)
    for (let x = 0; x < W; x++) {
      const k = y * W + x;
      clean[k] = clamp(Math.round(truth[k]), 0, 255);
      noisy[k] = clamp(Math.round(gain[x] * truth[k] + offset[x] + rowBand[y] + 1.5 * g.gauss()), 0, 255);
    }
  return [
    { name: 'line-sensor-banding', width: W, height: H, channels: 1, depth: 8, data: noisy, density: 300 },
    {
      name: 'line-sensor-banding-truth',
      width: W,
      height: H,
      channels: 1,
      depth: 8,
      data: clean,
      density: 300,
    },
  ];
}

/** Fenwick Lab: a faded 35 mm colour slide (landscape) in its mount, with dust and a hair, 8-bit RGB. */
function colourSlide() {
  const W = 1500;
  const H = 1000;
  const r = rng(6601);
  const clouds = fbmPlane(W, H, 300, 5, 61, 2);
  const ground = fbmPlane(W, H, 120, 5, 62, 2);
  const hills = [];
  for (let i = 0; i < 3; i++) {
    const line = new Float32Array(W);
    for (let x = 0; x < W; x++) line[x] = 430 + i * 90 + 70 * fbm(x, i * 1000, 500, 5, 63 + i) - i * 10;
    hills.push(line);
  }
  const dust = new Coverage(W, H);
  for (let i = 0; i < 60; i++) dust.disk(r.range(0, W), r.range(0, H), r.range(0.7, 3), r.range(0.4, 1));
  const hair = [];
  let hx = r.range(300, 1200);
  let hy = r.range(150, 800);
  let ang = r.range(0, 2 * Math.PI);
  for (let i = 0; i < 220; i++) {
    ang += 0.05 * r.gauss();
    hx += 2 * Math.cos(ang);
    hy += 2 * Math.sin(ang);
    hair.push([hx, hy]);
  }
  dust.polyline(hair, 1.4, 0.9);
  const g = rng(6602);
  const out = new Uint8Array(W * H * 3);
  const mx = 70;
  const my = 60;
  for (let y = 0; y < H; y++)
    for (let x = 0; x < W; x++) {
      const k = y * W + x;
      let R;
      let G;
      let B;
      const t = y / H;
      // sky
      R = 120 + 90 * t;
      G = 160 + 60 * t;
      B = 225 + 10 * t;
      const c = clamp((clouds[k] - 0.05) * 3, 0, 1);
      R += (245 - R) * c;
      G += (245 - G) * c;
      B += (248 - B) * c;
      for (let i = 0; i < hills.length; i++)
        if (y > hills[i][x]) {
          const haze = 0.55 - 0.25 * i;
          const tex = ground[k] * (10 + 12 * i);
          R = (70 - 10 * i + tex) * (1 - haze) + 170 * haze;
          G = (105 + 15 * i + tex) * (1 - haze) + 190 * haze;
          B = (60 - 5 * i + tex * 0.5) * (1 - haze) + 210 * haze;
        }
      // faded dyes: cyan layer lost density, so a red/magenta cast; lifted blacks
      R = 25 + 0.9 * R + 18;
      G = 20 + 0.82 * G;
      B = 30 + 0.8 * B;
      R -= dust.a[k] * (R - 20);
      G -= dust.a[k] * (G - 18);
      B -= dust.a[k] * (B - 22);
      // slide mount with rounded corners
      const dx = Math.max(mx - x, x - (W - 1 - mx), 0);
      const dy = Math.max(my - y, y - (H - 1 - my), 0);
      const inCorner = x < mx + 30 || x > W - 1 - mx - 30 ? (y < my + 30 || y > H - 1 - my - 30 ? 1 : 0) : 0;
      let mount = dx > 0 || dy > 0 ? 1 : 0;
      if (!mount && inCorner) {
        const cx = x < W / 2 ? mx + 30 : W - 1 - mx - 30;
        const cy = y < H / 2 ? my + 30 : H - 1 - my - 30;
        mount = clamp(Math.hypot(x - cx, y - cy) - 30 + 0.5, 0, 1);
      }
      R += (22 - R) * mount;
      G += (21 - G) * mount;
      B += (24 - B) * mount;
      out[3 * k] = clamp(Math.round(R + 2.2 * g.gauss()), 0, 255);
      out[3 * k + 1] = clamp(Math.round(G + 2.2 * g.gauss()), 0, 255);
      out[3 * k + 2] = clamp(Math.round(B + 2.6 * g.gauss()), 0, 255);
    }
  return { width: W, height: H, channels: 3, depth: 8, data: out, density: 2400 };
}

// ---------------------------------------------------------------------------------------------
// Catalogue and writing

/** name → { ext, make(): image | image[] } ; `large` entries are written only with --large. */
export const SAMPLES = [
  { name: 'ledger-page', ext: 'png', make: () => ledgerPage(1) },
  { name: 'map-sheet', ext: 'png', make: mapSheet },
  { name: 'gel-scan', ext: 'tif', make: gelScan },
  { name: 'film-plate-16bit', ext: 'tif', make: filmPlate16 },
  { name: 'line-sensor-banding', ext: 'png', make: lineSensorPair, also: ['line-sensor-banding-truth'] },
  { name: 'colour-slide', ext: 'png', make: colourSlide },
  { name: 'ledger-page-large', ext: 'png', make: () => ledgerPage(1.9), large: true },
];

/** Encode one generated image to PNG or TIFF bytes (lossless). */
export async function encode(img, ext) {
  const space =
    img.channels >= 3 ? (img.depth === 16 ? 'rgb16' : 'srgb') : img.depth === 16 ? 'grey16' : 'b-w';
  const pages = img.pages ?? 1;
  let p = sharp(img.data, {
    raw: {
      width: img.width,
      height: img.height * pages,
      channels: img.channels,
      ...(pages > 1 ? { pageHeight: img.height } : {}),
    },
  }).toColourspace(space);
  if (img.density) p = p.withDensity(img.density);
  p =
    ext === 'png'
      ? p.png({ compressionLevel: 9, adaptiveFiltering: true })
      : p.tiff({ compression: 'deflate', predictor: 'horizontal' });
  return p.toBuffer();
}

async function main(argv) {
  const args = { out: here, only: null, large: false, list: false };
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a === '--out') args.out = resolve(argv[++i]);
    else if (a === '--only') args.only = new Set(argv[++i].split(','));
    else if (a === '--large') args.large = true;
    else if (a === '--list') args.list = true;
    else {
      process.stderr.write(`samples/generate.mjs: unknown argument ${a}\n`);
      return 1;
    }
  }
  if (args.list) {
    for (const s of SAMPLES)
      process.stdout.write(`${s.name}.${s.ext}${s.large ? '  (only with --large)' : ''}\n`);
    return 0;
  }
  mkdirSync(args.out, { recursive: true });
  for (const s of SAMPLES) {
    const wanted = args.only
      ? args.only.has(s.name) || (s.also ?? []).some((n) => args.only.has(n))
      : !s.large || args.large;
    if (!wanted) continue;
    const made = s.make();
    const list = Array.isArray(made) ? made : [{ ...made, name: s.name }];
    for (const img of list) {
      if (args.only && !args.only.has(img.name) && !args.only.has(s.name)) continue;
      const bytes = await encode(img, s.ext);
      const file = join(args.out, `${img.name}.${s.ext}`);
      writeFileSync(file, bytes);
      process.stdout.write(
        `${file}  ${img.width}×${img.height}${img.pages ? `×${img.pages} pages` : ''}  ${img.depth}-bit  ${(bytes.length / 1e6).toFixed(2)} MB\n`,
      );
    }
  }
  return 0;
}

if (process.argv[1] && resolve(process.argv[1]) === fileURLToPath(import.meta.url))
  main(process.argv.slice(2)).then((code) => {
    process.exitCode = code;
  });
