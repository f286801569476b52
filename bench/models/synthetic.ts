/**
 * Deterministic, seeded synthetic series with known structure, for tests and benchmarks (research data,
 * not part of the engine: it lived in src-main/engine/stack until issue 17).
 * Every generator returns integer samples on the chosen scale (0–255 or 0–65535), one Float32Array per frame.
 * Scenario names are our own (the fictional "Fenwick Lab" and "Harrowgate County Survey Office").
 */

/** Mulberry32: a small 32-bit seeded generator (public-domain construction by T. Ettinger, from memory). */
export function seededRandom(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Standard normal deviates by the Box–Muller transform (Box & Muller, Ann. Math. Stat. 29(2), 1958). */
function seededNormal(seed: number): () => number {
  const u = seededRandom(seed);
  let spare: number | undefined;
  return () => {
    if (spare !== undefined) {
      const s = spare;
      spare = undefined;
      return s;
    }
    const u1 = Math.max(u(), 1e-300);
    const u2 = u();
    const r = Math.sqrt(-2 * Math.log(u1));
    spare = r * Math.sin(2 * Math.PI * u2);
    return r * Math.cos(2 * Math.PI * u2);
  };
}

export interface SyntheticSeries {
  width: number;
  height: number;
  bitDepth: 8 | 16;
  frames: Float32Array[];
}

export interface SeriesOptions {
  width?: number;
  height?: number;
  frames?: number;
  seed?: number;
  /** Gaussian noise σ in grey levels of the output scale. */
  noise?: number;
  bitDepth?: 8 | 16;
  /** Amplitude (grey levels) of fine specimen texture that moves with the specimen (driftingSpecimen). Default 0. */
  texture?: number;
  /** Total drift in pixels over the series (driftingSpecimen). Default 3. */
  drift?: number;
  /**
   * The noise-free series before rounding (same seed, same scene): what a coder that spent nothing on
   * sensor noise could at best rebuild. For the benchmark's noise-floor row (driftingSpecimen, phantomSlices).
   */
  clean?: boolean;
}

function quantise(v: number, max: number, round = true): number {
  return Math.min(max, Math.max(0, round ? Math.round(v) : v));
}

/**
 * Fenwick Lab time-lapse: a specimen of soft cells on a shaded background that drifts slowly
 * (sub-pixel, a few pixels over the series) and fades, under Gaussian noise.
 */
export function driftingSpecimen(o: SeriesOptions = {}): SyntheticSeries {
  const width = o.width ?? 128;
  const height = o.height ?? 128;
  const N = o.frames ?? 24;
  const bitDepth = o.bitDepth ?? 8;
  const max = bitDepth === 16 ? 65535 : 255;
  const scale = max / 255;
  const rnd = seededRandom(o.seed ?? 1);
  const gauss = seededNormal((o.seed ?? 1) + 7919);
  const noise = o.clean ? 0 : (o.noise ?? 2);
  const cells = Array.from({ length: 14 }, () => ({
    x: rnd() * width,
    y: rnd() * height,
    r: 4 + rnd() * Math.min(width, height) * 0.08,
    a: 40 + rnd() * 80,
    ring: rnd() < 0.5,
  }));
  // Fine texture: a sum of random plane waves (periods 2.5–12 px), evaluated in specimen coordinates.
  const waves = Array.from({ length: o.texture ? 24 : 0 }, () => {
    const period = 2.5 + rnd() * 9.5;
    const angle = rnd() * Math.PI;
    return {
      kx: (2 * Math.PI * Math.cos(angle)) / period,
      ky: (2 * Math.PI * Math.sin(angle)) / period,
      ph: rnd() * 6.283,
    };
  });
  const texAmp = (o.texture ?? 0) / Math.sqrt(Math.max(1, waves.length / 2));
  const frames: Float32Array[] = [];
  for (let j = 0; j < N; j++) {
    const t = N > 1 ? j / (N - 1) : 0;
    const drift = o.drift ?? 3;
    const dx = drift * t;
    const dy = 0.5 * drift * Math.sin(Math.PI * t);
    const fade = 1 - 0.35 * t;
    const f = new Float32Array(width * height);
    for (let y = 0; y < height; y++)
      for (let x = 0; x < width; x++) {
        let v = 60 + 30 * (x / width) + 15 * (y / height);
        for (const c of cells) {
          const ex = x - dx - c.x;
          const ey = y - dy - c.y;
          const d2 = (ex * ex + ey * ey) / (c.r * c.r);
          v += fade * c.a * (c.ring ? Math.exp(-4 * (Math.sqrt(d2) - 0.8) ** 2) * 0.8 : Math.exp(-d2));
        }
        if (waves.length) {
          let tex = 0;
          for (const w of waves) tex += Math.cos(w.kx * (x - dx) + w.ky * (y - dy) + w.ph);
          v += fade * texAmp * tex;
        }
        f[y * width + x] = quantise((v + noise * gauss()) * scale, max, !o.clean);
      }
    frames.push(f);
  }
  return { width, height, bitDepth, frames };
}

/**
 * Slices of a smooth 3-D phantom: soft ellipsoids (logistic edges) in a unit cube, sliced along z.
 */
export function phantomSlices(o: SeriesOptions = {}): SyntheticSeries {
  const width = o.width ?? 96;
  const height = o.height ?? 96;
  const N = o.frames ?? 32;
  const bitDepth = o.bitDepth ?? 8;
  const max = bitDepth === 16 ? 65535 : 255;
  const gauss = seededNormal((o.seed ?? 3) + 104729);
  const noise = o.clean ? 0 : (o.noise ?? 0.5);
  // (centre, semi-axes, level) — a head-like phantom of our own design.
  const shapes = [
    { c: [0, 0, 0], a: [0.85, 0.9, 0.8], v: 90 },
    { c: [0, 0, 0], a: [0.78, 0.83, 0.72], v: -40 },
    { c: [-0.3, 0.1, 0.1], a: [0.2, 0.35, 0.3], v: 60 },
    { c: [0.32, -0.1, -0.1], a: [0.18, 0.28, 0.35], v: 45 },
    { c: [0, -0.45, 0.2], a: [0.12, 0.1, 0.15], v: 80 },
    { c: [0.05, 0.4, -0.3], a: [0.3, 0.12, 0.2], v: 30 },
  ];
  const edge = 40;
  const frames: Float32Array[] = [];
  for (let j = 0; j < N; j++) {
    const z = -0.9 + (1.8 * (j + 0.5)) / N;
    const f = new Float32Array(width * height);
    for (let yy = 0; yy < height; yy++)
      for (let xx = 0; xx < width; xx++) {
        const x = -1 + (2 * (xx + 0.5)) / width;
        const y = -1 + (2 * (yy + 0.5)) / height;
        let v = 10;
        for (const s of shapes) {
          const q =
            ((x - s.c[0]) / s.a[0]) ** 2 + ((y - s.c[1]) / s.a[1]) ** 2 + ((z - s.c[2]) / s.a[2]) ** 2;
          v += s.v / (1 + Math.exp(edge * (q - 1)));
        }
        f[yy * width + xx] = quantise(((v + noise * gauss()) * max) / 255, max, !o.clean);
      }
    frames.push(f);
  }
  return { width, height, bitDepth, frames };
}

/**
 * Harrowgate County Survey Office return forms: one printed form (rules, boxes, printed labels as
 * bar glyphs) on every page, each page filled in with different pen strokes, under light scanner noise
 * and a small per-page exposure change.
 */
export function formPages(o: SeriesOptions = {}): SyntheticSeries {
  const width = o.width ?? 160;
  const height = o.height ?? 200;
  const N = o.frames ?? 16;
  const bitDepth = o.bitDepth ?? 8;
  const max = bitDepth === 16 ? 65535 : 255;
  const rnd = seededRandom(o.seed ?? 5);
  const gauss = seededNormal((o.seed ?? 5) + 15485863);
  const noise = o.noise ?? 1.5;
  const template = new Float64Array(width * height).fill(235);
  const ink = (arr: Float64Array, x: number, y: number, v: number) => {
    const xi = Math.round(x);
    const yi = Math.round(y);
    if (xi >= 0 && yi >= 0 && xi < width && yi < height)
      arr[yi * width + xi] = Math.min(arr[yi * width + xi], v);
  };
  const fields: Array<{ x: number; y: number; w: number; h: number }> = [];
  for (let row = 0; row * 28 + 24 < height - 10; row++) {
    const y0 = 14 + row * 28;
    for (let x = 6; x < width - 6; x++) ink(template, x, y0 + 20, 40); // rule
    for (let k = 0; k < 5; k++) {
      const gx = 8 + k * 5;
      for (let yy = y0 + 4; yy < y0 + 10; yy++) ink(template, gx, yy, 30); // printed label glyphs
      if (rnd() < 0.6) for (let xx = gx; xx < gx + 3; xx++) ink(template, xx, y0 + 4, 30);
    }
    fields.push({ x: 40, y: y0 + 2, w: width - 50, h: 16 });
  }
  const frames: Float32Array[] = [];
  for (let j = 0; j < N; j++) {
    const page = Float64Array.from(template);
    for (const fd of fields) {
      if (rnd() < 0.15) continue;
      // A pen stroke: a smooth random curve across part of the field.
      const len = fd.w * (0.3 + 0.7 * rnd());
      let x = fd.x + rnd() * (fd.w - len);
      const x1 = x + len;
      const phase = rnd() * 6.28;
      const freq = 0.2 + rnd() * 0.4;
      const amp = 2 + rnd() * 4;
      const yc = fd.y + fd.h / 2;
      for (; x < x1; x += 0.25) {
        const y = yc + amp * Math.sin(freq * x + phase) + 1.5 * Math.sin(2.7 * freq * x);
        ink(page, x, y, 55);
        ink(page, x, y + 1, 70);
      }
    }
    const exposure = 1 + 0.03 * (rnd() - 0.5);
    const f = new Float32Array(width * height);
    for (let p = 0; p < f.length; p++)
      f[p] = quantise(((page[p] * exposure + noise * gauss()) * max) / 255, max);
    frames.push(f);
  }
  return { width, height, bitDepth, frames };
}

/**
 * An exactly low-rank series: F_j = μ + Σ_{i<r} a_{ij} B_i with smooth random B_i and coefficients,
 * not rounded (float samples), so that its centred frame matrix has rank exactly ≤ r.
 */
export function lowRankSeries(r: number, o: SeriesOptions = {}): SyntheticSeries {
  const width = o.width ?? 24;
  const height = o.height ?? 20;
  const N = o.frames ?? 16;
  const rnd = seededRandom(o.seed ?? 11);
  const basis = Array.from({ length: r }, () => {
    const fx = 1 + Math.floor(rnd() * 5);
    const fy = 1 + Math.floor(rnd() * 5);
    const ph = rnd() * 6.28;
    const b = new Float64Array(width * height);
    for (let y = 0; y < height; y++)
      for (let x = 0; x < width; x++)
        b[y * width + x] =
          20 * Math.sin((fx * x) / 3 + ph) * Math.cos((fy * y) / 4 + ph) + 10 * (rnd() - 0.5);
    return b;
  });
  const frames: Float32Array[] = [];
  for (let j = 0; j < N; j++) {
    const a = basis.map(() => 2 * rnd() - 1);
    const f = new Float32Array(width * height);
    for (let p = 0; p < f.length; p++) {
      let v = 128;
      for (let i = 0; i < r; i++) v += a[i] * basis[i][p];
      f[p] = v;
    }
    frames.push(f);
  }
  return { width, height, bitDepth: 8, frames };
}
