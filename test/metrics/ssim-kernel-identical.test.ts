// The SSIM WebAssembly kernel (src-main/engine/metrics/wasm/) against the TypeScript rows it replaces
// (src-main/engine/metrics/ssim.ts): whole-plane SSIM, row sums of a split, and streams fed in bands and
// interleaved (one per channel, as tiled-measure feeds them) must give the same bits, on odd and even widths,
// the smallest plane the window allows, and a custom window radius.
import { describe, expect, it } from 'vitest';
import { SsimStream, ssim, ssimRowSums } from '../../src-main/engine/metrics';
import { readySsimKernel, ssimKernelActive } from '../../src-main/engine/metrics/wasm/runtime';
import { bothPaths, restoreKernelsAfterEach } from '../helpers/kernel-paths';
import { lcg } from '../helpers/lcg';

/** A plane (ramp plus LCG noise, grey levels) and a copy with extra noise. */
function planes(w: number, h: number, seed: number): [Float32Array, Float64Array] {
  const next = lcg(seed);
  const a = new Float32Array(w * h);
  const b = new Float64Array(w * h);
  for (let i = 0; i < a.length; i++) {
    a[i] = ((i % w) * 3 + Math.floor(i / w)) % 256;
    b[i] = a[i] + (next() - 0.5) * 24;
  }
  return [a, b];
}

restoreKernelsAfterEach();

const SIZES: Array<[number, number]> = [
  [11, 11],
  [12, 11],
  [11, 40],
  [37, 23],
  [64, 64],
  [301, 97],
  // Several of the kernel's column strips (128 window columns) and, at 93 rows per call, two calls.
  [700, 160],
];

describe('SSIM WebAssembly kernel gives the TypeScript bits', () => {
  it('the kernel loads in Node (so the comparisons below exercise it)', () => {
    expect(ssimKernelActive()).toBe(true);
  });

  it.each(SIZES)('%i×%i: whole-plane SSIM and row sums', (w, h) => {
    const [a, b] = planes(w, h, w * h);
    const [ref, got] = bothPaths(() => ssim(a, b, w, h, 255));
    expect(got).toBe(ref);
    expect(got).toBeLessThan(1);
    const hv = h - 10;
    const mid = hv >> 1 || 1;
    const [sRef, sGot] = bothPaths(() => ssimRowSums(a, b, w, h, 255, 0, mid));
    expect([...sGot]).toEqual([...sRef]);
    const [r3, g3] = bothPaths(() => ssim(a, b, w, h, 255, { radius: 3, sigma: 1 }));
    expect(g3).toBe(r3);
  });

  it('readying the kernel for wider rows mid-stream (its memory grown, fresh pages touched) changes no bit', () => {
    const [w, h] = [301, 97];
    const [a, b] = planes(w, h, 11);
    const [ref] = bothPaths(() => ssim(a, b, w, h, 255));
    const s = new SsimStream(w, h, 255);
    s.addRows(a, b, 40, 0, 0);
    // 20 000 columns: a ring of 11·5·19 990 f64 (8.8 MB), more than any stream here used, so the memory grows.
    const pages = readySsimKernel(20_000);
    expect(pages).toBeGreaterThan((11 * 5 * 19_990 * 8) / 4096 - 256);
    expect(readySsimKernel(20_000)).toBe(0);
    expect(readySsimKernel(w)).toBe(0);
    s.addRows(a, b, h - 40, 40 * w, 40 * w);
    expect(s.value()).toBe(ref);
  });

  it('interleaved streams fed in uneven bands, with a skipped identical top, match the whole-plane value', () => {
    const w = 77;
    const h = 90;
    const [a, b] = planes(w, h, 3);
    const [c, d] = planes(w, h, 4);
    const top = 23;
    // Rows above `top` identical in both planes, as skipIdentical requires.
    const b2 = Float64Array.from(b);
    for (let i = 0; i < top * w; i++) b2[i] = a[i];
    const [ref1, ref2] = bothPaths(() => [ssim(a, b2, w, h, 255), ssim(c, d, w, h, 255)])[0];
    const s1 = new SsimStream(w, h, 255);
    const s2 = new SsimStream(w, h, 255);
    s1.skipIdentical(top, a);
    let y1 = top;
    let y2 = 0;
    for (const band of [5, 13, 1, 30, 40]) {
      const n1 = Math.min(band, h - y1);
      if (n1 > 0) s1.addRows(a, b2, n1, y1 * w, y1 * w);
      y1 += n1;
      const n2 = Math.min(band + 3, h - y2);
      if (n2 > 0) s2.addRows(c, d, n2, y2 * w, y2 * w);
      y2 += n2;
    }
    s2.addRows(c, d, h - y2, y2 * w, y2 * w);
    expect(s1.value()).toBe(ref1);
    expect(s2.value()).toBe(ref2);
  });

  // Both planes Float32Array: the kernel reads the f32 samples and widens them itself (8 bytes → 4 per
  // sample copied), with the 11-tap pass unrolled for the default radius; odd and even widths.
  it.each(SIZES)('%i×%i, both planes float32: the same bits as the TypeScript rows', (w, h) => {
    const [a, b64] = planes(w, h, w + h);
    const b = Float32Array.from(b64);
    const [ref, got] = bothPaths(() => ssim(a, b, w, h, 255));
    expect(got).toBe(ref);
    expect(got).toBeLessThan(1);
    const hv = h - 10;
    const from = hv >> 2;
    const [sRef, sGot] = bothPaths(() =>
      ssimRowSums(a.subarray(from * w), b.subarray(from * w), w, h, 255, from, hv),
    );
    expect([...sGot]).toEqual([...sRef]);
  });
});
