// The report's check that the residual bytes just coded range-decode to the coefficients the reported samples
// were rebuilt from (src-main/engine/lowrank/residual-check.ts), and the report's decode into Float32 samples
// (src-main/engine/lowrank/decode-image.ts), which must hold exactly the integers of the integer decode.
import { beforeAll, describe, expect, it } from 'vitest';
import type { DecodedImage } from '../../src-main/contract';
import { forgetCodes, recordingCodes } from '../../src-main/engine/codec/coded-planes';
import { analysePlane, codeAnalysed } from '../../src-main/engine/codec/wavelet-plane';
import { roundInto, ycbcrToRgbSamples } from '../../src-main/engine/colour';
import { initEngine } from '../../src-main/engine/linalg';
import { decodeImageFile, decodeImageFileSamples } from '../../src-main/engine/lowrank/decode-image';
import { encodeScan } from '../../src-main/engine/lowrank/encode';
import { startResidualCheck } from '../../src-main/engine/lowrank/residual-check';
import { runHere } from '../../src-main/engine/lowrank/side-jobs';
import { COMPRESSORS } from '../../src-main/node/services/compress';
import { field } from './noisy-field';

beforeAll(async () => {
  await initEngine();
});

describe('the residual check', () => {
  const [w, h, step] = [97, 83, 3];
  const code = () => {
    forgetCodes();
    return recordingCodes(() => codeAnalysed(analysePlane(field(w, h, 1, 255), w, h), step, 2));
  };

  it('passes for the bytes as coded, also when given an equal copy (as read back from a file)', () => {
    const c = code();
    expect(c.nonZero).toBeGreaterThan(0);
    expect(() =>
      startResidualCheck(runHere, { steps: [step], bytes: [Uint8Array.from(c.bytes)] }, w, h, 'a.png')(),
    ).not.toThrow();
  });

  it('refuses, naming the file, when the recorded coefficients differ from what the bytes decode to', () => {
    const c = code();
    const i = c.q.findIndex((v) => v !== 0);
    c.q[i] += 1;
    expect(() => startResidualCheck(runHere, { steps: [step], bytes: [c.bytes] }, w, h, 'a.png')()).toThrow(
      'a.png: the residual layer just coded for plane 0 decodes to other coefficients than it was coded from',
    );
  });

  it('refuses when the recorded reconstruction offsets differ, and when the bytes do not range-decode', () => {
    const c = code();
    (c.offsets as Float64Array)[0] += 0.125;
    expect(() => startResidualCheck(runHere, { steps: [step], bytes: [c.bytes] }, w, h, 'a.png')()).toThrow(
      'decodes to other reconstruction offsets',
    );
    const d = code();
    // The decode job handed half the bytes: the range decoder runs out and the check says so.
    const cut = d.bytes.subarray(0, d.bytes.length >> 1);
    const job = startResidualCheck(
      (name, args) => runHere(name, { ...args, bytes: cut }),
      { steps: [step], bytes: [d.bytes] },
      w,
      h,
      'a.png',
    );
    expect(job).toThrow(/^a\.png: the residual layer just coded for plane 0 cannot be range-decoded \(/);
  });

  it('a later check of the same size decodes into the buffer of a passed one, and still catches a mismatch', () => {
    const given: Array<Int32Array | undefined> = [];
    const seeing: typeof runHere = (name, args) => {
      given.push((args as { into?: Int32Array }).into);
      return runHere(name, args);
    };
    const check = (c: ReturnType<typeof code>) =>
      startResidualCheck(seeing, { steps: [step], bytes: [c.bytes] }, w, h, 'a.png');
    expect(check(code())).not.toThrow();
    expect(check(code())).not.toThrow();
    expect(given[0]?.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(given[1]).toBe(given[0]);
    const bad = code();
    bad.q[bad.q.findIndex((v) => v !== 0)] -= 1;
    expect(check(bad)).toThrow('decodes to other coefficients');
    expect(given[2]).toBe(given[0]);
    // Dropped after the failure: the next check gets a fresh buffer, and passes.
    expect(check(code())).not.toThrow();
    expect(given[3]).not.toBe(given[0]);
  });

  it('checks nothing for bytes with no recorded encode (the report’s decode range-decodes those itself)', () => {
    const c = code();
    forgetCodes();
    let jobs = 0;
    const counting: typeof runHere = (name, args) => {
      jobs++;
      return runHere(name, args);
    };
    startResidualCheck(counting, { steps: [step], bytes: [c.bytes] }, w, h, 'a.png')();
    expect(jobs).toBe(0);
  });
});

describe("the report's decode into Float32", () => {
  it('rounds like the integer outputs: NaN and −0 become +0, out-of-range values clamp', () => {
    const x = [Number.NaN, -0.4, -3, 0.5, 254.5, 255.6, 1e9, -Infinity, Infinity, 17.49];
    const u8 = new Uint8Array(x.length);
    const f32 = new Float32Array(x.length);
    roundInto(x, x.length, 255, u8, 0);
    roundInto(x, x.length, 255, f32, 0);
    expect(Array.from(u8)).toEqual([0, 0, 0, 1, 255, 255, 255, 0, 255, 17]);
    for (let i = 0; i < x.length; i++) expect(Object.is(f32[i], u8[i])).toBe(true);
    const [r8, g8, b8] = [0, 1, 2].map(() => new Uint8Array(x.length));
    const [rf, gf, bf] = [0, 1, 2].map(() => new Float32Array(x.length));
    const cb = x.map((v, i) => (i % 2 ? v : 128 - v));
    ycbcrToRgbSamples(x, cb, x, x.length, 8, r8, g8, b8, 0);
    ycbcrToRgbSamples(x, cb, x, x.length, 8, rf, gf, bf, 0);
    for (const [a, b] of [
      [r8, rf],
      [g8, gf],
      [b8, bf],
    ] as const)
      for (let i = 0; i < x.length; i++) expect(Object.is(b[i], a[i])).toBe(true);
  });

  it('gives the integer decode’s samples, in shared memory (grey 16-bit, RGBA 8-bit)', () => {
    const [W, H] = [72, 56];
    for (const channels of [1, 4] as const) {
      const bitDepth = channels === 1 ? 16 : 8;
      const max = bitDepth === 16 ? 65535 : 255;
      const img = {
        file: 'scan.png',
        width: W,
        height: H,
        channels,
        bitDepth,
        colour: channels === 1 ? 'gray' : 'rgb',
        hasAlpha: channels === 4,
        planes: Array.from({ length: channels }, (_, c) => field(W, H, 3 + c, max)),
        meta: { format: 'png' },
        inputBytes: W * H,
        rawBytes: W * H * channels * (bitDepth / 8),
        sourceSha256: '0'.repeat(64),
      } as DecodedImage;
      const r = encodeScan(img, {
        budget: { kind: 'psnr', db: 40 },
        tile: 'auto',
        compressors: COMPRESSORS,
        layers: 'auto',
      });
      forgetCodes();
      const f = decodeImageFile(r.bytes, img.file).samples;
      const s = decodeImageFileSamples(r.bytes, img.file).samples;
      expect(f.length).toBe(channels);
      for (let c = 0; c < channels; c++) {
        expect(f[c].buffer).toBeInstanceOf(SharedArrayBuffer);
        expect(Array.from(f[c])).toEqual(Array.from(s[c]));
      }
    }
  });
});
