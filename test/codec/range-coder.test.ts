// The adaptive range coder: exact round trips, and compression close to the source entropy.
import { describe, expect, it } from 'vitest';
import { decodeLosslessPlane, encodeLosslessPlane } from '../../src-main/engine/codec/alpha';
import {
  decodeInt,
  encodeInt,
  IntModel,
  models,
  RangeDecoder,
  RangeEncoder,
} from '../../src-main/engine/codec/range-coder';
import { lcg } from '../helpers/lcg';

describe('range coder', () => {
  it('round-trips biased bits and comes within 4% of the Shannon bound', () => {
    // Shannon (1948): a memoryless source with P(1) = p needs at least n·H(p) bits; H(0.05) = 0.2864 bits.
    const rnd = lcg(1);
    const n = 200_000;
    const bits = Array.from({ length: n }, () => (rnd() < 0.05 ? 1 : 0));
    const enc = new RangeEncoder();
    const m = models(1)[0];
    for (const b of bits) enc.encodeBit(m, b);
    const out = enc.finish();
    const dec = new RangeDecoder(out);
    const m2 = models(1)[0];
    const back = bits.map(() => dec.decodeBit(m2));
    expect(back).toEqual(bits);
    const h = -(0.05 * Math.log2(0.05) + 0.95 * Math.log2(0.95));
    expect(out.length * 8).toBeGreaterThanOrEqual(n * h * 0.97);
    // Adaptive estimators pay for tracking change: the fast (16-observation) half costs ≈ 2–3% here.
    expect(out.length * 8).toBeLessThan(n * h * 1.04);
  });

  it('round-trips signed integers of every size, including the Exp-Golomb escape and carries', () => {
    const rnd = lcg(7);
    const vals: number[] = [];
    for (let i = 0; i < 20_000; i++) {
      const mag = Math.floor(2 ** (rnd() * 29) * rnd());
      vals.push(rnd() < 0.5 && mag > 0 ? -mag : mag);
    }
    vals.push(2 ** 30 - 1, -(2 ** 30 - 1), 0, 0, 1, -1);
    const enc = new RangeEncoder();
    const m = new IntModel(4);
    for (const [i, v] of vals.entries()) encodeInt(enc, m, v, i % 4, (i % 3) - 1);
    const dec = new RangeDecoder(enc.finish());
    const m2 = new IntModel(4);
    expect(vals.map((_, i) => decodeInt(dec, m2, i % 4, (i % 3) - 1))).toEqual(vals);
  });

  it('codes integer planes losslessly (alpha), constant planes in a few bytes', () => {
    const w = 37;
    const h = 23;
    const rnd = lcg(3);
    const p16 = Float32Array.from({ length: w * h }, (_, i) =>
      i % w < 10 ? 65535 : Math.floor(rnd() * 65536),
    );
    expect(Array.from(decodeLosslessPlane(encodeLosslessPlane(p16, w, h), w, h, 65535))).toEqual(
      Array.from(p16),
    );
    const flat = new Float32Array(512 * 512).fill(255);
    const code = encodeLosslessPlane(flat, 512, 512);
    expect(code.length).toBeLessThan(400);
    expect(Array.from(decodeLosslessPlane(code, 512, 512, 255).subarray(0, 10))).toEqual(
      new Array(10).fill(255),
    );
  });
});
