// Stack layout: plane coder, joint encode/decode, random access, damaged files, rate control.
import { describe, expect, it } from 'vitest';
import { driftingSpecimen, formPages, phantomSlices, seededRandom } from '../../bench/models/synthetic';
import { FormatError } from '../../src-main/contract';
import { readContainer } from '../../src-main/engine/codec/container';
import { fitStack } from '../../src-main/engine/codec/stack-budget';
import { encodeStack, framePsnr, isStackContainer } from '../../src-main/engine/codec/stack-codec';
import type { StackInput } from '../../src-main/engine/codec/stack-header';
import {
  decodePlane,
  encodePlane,
  forwardWavelet,
  forwardWaveletReference,
  inverseWavelet,
} from '../../src-main/engine/codec/stack-plane';
import { decodeStackFrame, openStack, prepareStack } from '../../src-main/engine/lowrank/stack-frames';

const asInput = (s: {
  width: number;
  height: number;
  bitDepth: 8 | 16;
  frames: Float32Array[];
}): StackInput => ({
  width: s.width,
  height: s.height,
  bitDepth: s.bitDepth,
  channels: 1,
  frames: s.frames.map((p, j) => ({ planes: [p], name: `frame-${j}.png` })),
});

describe('plane coder', () => {
  it('the 9/7 lifting transform is perfectly invertible on odd sizes (biorthogonality, Cohen–Daubechies–Feauveau 1992)', () => {
    const rnd = seededRandom(3);
    const x = Float64Array.from({ length: 37 * 23 }, () => rnd() * 255);
    const y = Float64Array.from(x);
    forwardWavelet(y, 37, 23, 3);
    inverseWavelet(y, 37, 23, 3);
    for (let i = 0; i < x.length; i++) expect(Math.abs(x[i] - y[i])).toBeLessThan(1e-9);
  });

  it('the row-wise column pass is bit-identical to a column-by-column lifting transform', () => {
    const rnd = seededRandom(4);
    const x = Float64Array.from({ length: 53 * 41 }, () => rnd() * 1000 - 500);
    const a = Float64Array.from(x);
    const b = Float64Array.from(x);
    forwardWavelet(a, 53, 41, 3);
    forwardWaveletReference(b, 53, 41, 3);
    expect(Buffer.from(a.buffer).equals(Buffer.from(b.buffer))).toBe(true);
  });

  it('the 9/7 low-pass keeps a constant signal in the low band only (vanishing moments of the analysis high-pass)', () => {
    const x = new Float64Array(64 * 64).fill(100);
    forwardWavelet(x, 64, 64, 1);
    // High bands of a constant are zero (the 9/7 high-pass annihilates polynomials of degree < 4).
    for (let y = 0; y < 64; y++)
      for (let c = 0; c < 64; c++) if (y >= 32 || c >= 32) expect(Math.abs(x[y * 64 + c])).toBeLessThan(1e-9);
  });

  it('quantisation error at a fine step is close to the uniform-quantiser Δ²/12 (common practice)', () => {
    const s = phantomSlices({ width: 64, height: 64, frames: 1, noise: 4 });
    const x = s.frames[0];
    const { decoded, bytes } = encodePlane(x, 64, 64, 1);
    let e = 0;
    for (let i = 0; i < x.length; i++) e += (x[i] - decoded[i]) ** 2;
    const ratio = e / x.length / (1 / 12);
    expect(ratio).toBeGreaterThan(0.5);
    expect(ratio).toBeLessThan(1.6);
    expect(decodePlane(bytes, 64, 64, 1)).toEqual(decoded);
  });
});

describe('stack layout encode / decode', () => {
  const series = driftingSpecimen({ width: 48, height: 40, frames: 16, seed: 5, noise: 2 });
  const input = asInput(series);
  const prep = prepareStack(input);
  const enc = encodeStack(prep, { step: 3 });

  it('writes a container whose header says layout "stack" and keeps the per-frame names and hashes', () => {
    expect(isStackContainer(enc.bytes)).toBe(true);
    const r = openStack(enc.bytes, 'series.rkf');
    expect(r.header.frameCount).toBe(16);
    expect(r.header.frameTable[7].name).toBe('frame-7.png');
    expect(r.header.spectrum[0].length).toBe(16);
  });

  it('random-access decode of one frame equals the same frame of a full decode, bit for bit, and reads no other frame', () => {
    for (const j of [0, 7, 15]) {
      const one = openStack(enc.bytes, 'series.rkf');
      const f = one.frame(j);
      expect([...one.touched].filter((t) => t.startsWith('SRES') && t !== `SRES#${j}`)).toEqual([]);
      const all = openStack(enc.bytes, 'series.rkf');
      const frames = Array.from({ length: 16 }, (_, i) => all.frame(i));
      expect(Buffer.from(f[0].buffer).equals(Buffer.from(frames[j][0].buffer))).toBe(true);
      expect(Buffer.from(f[0].buffer).equals(Buffer.from(enc.decoded[j][0].buffer))).toBe(true);
    }
  });

  it('the encoder’s reported decode is what the decoder rebuilds (so its PSNR figures are honest)', () => {
    const psnr = framePsnr(
      input,
      Array.from({ length: 16 }, (_, j) => decodeStackFrame(enc.bytes, j)),
    );
    expect(psnr).toEqual(framePsnr(input, enc.decoded));
    expect(Math.min(...psnr)).toBeGreaterThan(35);
  });

  it('a finer step never gives a worse series (PSNR non-decreasing as Δ falls)', () => {
    const p = [12, 6, 3, 1.5].map((step) => {
      const ps = framePsnr(input, encodeStack(prep, { step }).decoded);
      return ps.reduce((a, b) => a + b) / ps.length;
    });
    for (let i = 1; i < p.length; i++) expect(p[i]).toBeGreaterThan(p[i - 1] - 0.05);
  });

  it('refuses a damaged or truncated stack file with a FormatError naming the file', () => {
    const bad = enc.bytes.slice();
    bad[Math.floor(bad.length / 2)] ^= 0xff;
    expect(() => openStack(bad, 'damaged.rkf').frame(3)).toThrow(FormatError);
    expect(() => {
      const r = openStack(bad, 'damaged.rkf');
      for (let j = 0; j < 16; j++) r.frame(j);
    }).toThrow(/damaged\.rkf: .*CRC-32/);
    expect(() => openStack(enc.bytes.subarray(0, enc.bytes.length - 40), 'cut.rkf')).toThrow(
      /cut\.rkf: .*truncated/,
    );
    expect(() => openStack(enc.bytes, 's.rkf').frame(16)).toThrow(
      /s\.rkf: has 16 frames \(0–15\); frame 16 does not exist/,
    );
    // All chunks carry valid CRCs in an intact file (container check of every chunk).
    expect(() => readContainer(enc.bytes, 'ok.rkf', true)).not.toThrow();
  });

  it('colour and 16-bit series round-trip through the same layout', () => {
    const base = phantomSlices({ width: 32, height: 24, frames: 8, bitDepth: 16, noise: 0 });
    const rgb: StackInput = {
      width: 32,
      height: 24,
      bitDepth: 16,
      channels: 3,
      frames: base.frames.map((p) => ({ planes: [p, p.map((v) => v * 0.8), p.map((v) => 65535 - v)] })),
    };
    const e = encodeStack(prepareStack(rgb), { step: 20 });
    const f = openStack(e.bytes, 'rgb.rkf').frame(5);
    expect(f.length).toBe(3);
    expect(Math.min(...framePsnr(rgb, e.decoded))).toBeGreaterThan(50);
    expect(Math.max(...f[2])).toBeLessThanOrEqual(65535);
  });
});

describe('stack rate control', () => {
  it('meets a byte budget for the whole series (file bytes ≤ budget)', () => {
    const s = formPages({ width: 64, height: 80, frames: 12, seed: 2 });
    const prep = prepareStack(asInput(s));
    const budget = Math.floor((0.5 * 64 * 80 * 12) / 8);
    const fit = fitStack(prep, { maxBytes: budget });
    expect(fit.encoded.bytes.length).toBeLessThanOrEqual(budget);
    expect(fit.encoded.bytes.length).toBeGreaterThan(0.8 * budget);
  });

  it('records each frame’s PSNR and SSIM in the file (SQAL) without changing its size, and a reader returns them', () => {
    const s = driftingSpecimen({ width: 48, height: 40, frames: 9, seed: 21, noise: 1 });
    const prep = prepareStack(asInput(s));
    const budget = 48 * 40 * 9 * 0.4;
    const trial = encodeStack(prep, { step: 6 });
    const fit = fitStack(prep, { maxBytes: budget });
    expect(fit.encoded.bytes.length).toBeLessThanOrEqual(budget);
    const reader = openStack(fit.encoded.bytes, 'series.rkf');
    // The values read back are float32 copies of the figures measured on the decoded frames.
    reader.header.frameTable.forEach((f, j) => {
      expect(f.psnr).toBeCloseTo(fit.psnr[j], 4);
      expect(f.ssim).toBeCloseTo(fit.ssim[j], 6);
    });
    // Independent check of one figure: PSNR of the reader's own decode against the source (10·log10(255²/MSE)).
    const dec = reader.frame(4)[0];
    let se = 0;
    for (let p = 0; p < dec.length; p++) se += (dec[p] - s.frames[4][p]) ** 2;
    expect(reader.header.frameTable[4].psnr).toBeCloseTo(10 * Math.log10((255 * 255 * dec.length) / se), 4);
    // A trial encode holds the chunk at its final size with NaN: not recorded.
    expect(
      openStack(trial.bytes, 't.rkf').header.frameTable.every(
        (f) => f.psnr === undefined && f.ssim === undefined,
      ),
    ).toBe(true);
    const view = readContainer(fit.encoded.bytes, 'series.rkf', true);
    expect(view.payload(view.find('SQAL', 0)).length).toBe(8 * 9);
  });

  it('--rank K keeps exactly K eigen-frames and no residuals', () => {
    const s = phantomSlices({ width: 40, height: 40, frames: 12, seed: 6 });
    const fit = fitStack(prepareStack(asInput(s)), { rank: 3 });
    expect(fit.encoded.header.ranks).toEqual([3]);
    expect(fit.encoded.header.frameTable.every((f) => !f.residual[0])).toBe(true);
    expect(fit.encoded.split.residuals).toBe(0);
  });

  it('combines a per-frame PSNR floor with a byte budget, and says so when both cannot hold', () => {
    const s = driftingSpecimen({ width: 40, height: 40, frames: 10, seed: 13, noise: 1 });
    const prep = prepareStack(asInput(s));
    const fit = fitStack(prep, { minPsnr: 38, maxBytes: 40 * 40 * 10 });
    expect(Math.min(...fit.psnr)).toBeGreaterThanOrEqual(38);
    expect(fit.encoded.bytes.length).toBeLessThanOrEqual(40 * 40 * 10);
    expect(() => fitStack(prep, { minPsnr: 60, maxBytes: 2000 })).toThrow(
      /quality floor needs more than the budget/,
    );
  });

  it('meets a per-frame SSIM floor (Wang et al. 2004, via the metrics module) on the worst frame', () => {
    const s = formPages({ width: 48, height: 56, frames: 8, seed: 3 });
    const fit = fitStack(prepareStack(asInput(s)), { minSsim: 0.9 });
    expect(Math.min(...fit.ssim)).toBeGreaterThanOrEqual(0.9);
  });

  it('meets a per-frame PSNR floor on the worst frame', () => {
    const s = driftingSpecimen({ width: 48, height: 48, frames: 12, seed: 8, noise: 1 });
    const prep = prepareStack(asInput(s));
    const fit = fitStack(prep, { minPsnr: 40 });
    expect(Math.min(...fit.psnr)).toBeGreaterThanOrEqual(40);
    expect(Math.min(...framePsnr(prep.input, fit.encoded.decoded))).toBeGreaterThanOrEqual(40);
  });
});
