// The range coder's bytes are part of every Rankfold file (factor streams, residual planes, alpha, ICC
// profiles): its rewrite onto typed-array contexts (src-main/engine/codec/range-coder.ts) must write the same
// bytes for the same symbols. Digests recorded with the coder of commit a30fbfa on one mixed stream that
// uses every entry point: model bits, equiprobable bits, signed integers and magnitudes up to the
// Exp-Golomb escape near 2^30, with carries.
import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import {
  decodeInt,
  decodeMagnitude,
  encodeInt,
  encodeMagnitude,
  IntModel,
  models,
  RangeDecoder,
  RangeEncoder,
} from '../../src-main/engine/codec/range-coder';
import { lcg } from '../helpers/lcg';

type Sym = { kind: 0 | 1 | 2 | 3; v: number; ctx: number };

/** A mixed stream: skewed model bits, direct bits, small and huge signed integers, magnitudes. */
function symbols(n: number, seed: number): Sym[] {
  const rnd = lcg(seed);
  return Array.from({ length: n }, (_, i) => {
    const kind = (i % 7 === 0 ? 1 : i % 5 === 0 ? 2 : i % 3 === 0 ? 3 : 0) as Sym['kind'];
    const ctx = Math.floor(rnd() * 4);
    if (kind === 0) return { kind, v: rnd() < 0.1 + 0.2 * ctx ? 1 : 0, ctx };
    if (kind === 1) return { kind, v: rnd() < 0.5 ? 1 : 0, ctx };
    const big = rnd() < 0.02;
    const mag = Math.floor(big ? 2 ** (rnd() * 29.9) : rnd() * rnd() * 40);
    return { kind, v: kind === 2 && rnd() < 0.5 && mag > 0 ? -mag : mag, ctx };
  });
}

function encode(s: Sym[]): Uint8Array {
  const enc = new RangeEncoder();
  const bits = models(4);
  const ints = new IntModel(4);
  for (const { kind, v, ctx } of s) {
    if (kind === 0) enc.encodeBit(bits[ctx], v);
    else if (kind === 1) enc.encodeDirect(v);
    else if (kind === 2) encodeInt(enc, ints, v, ctx, (ctx % 3) - 1);
    else encodeMagnitude(enc, ints, v, ctx);
  }
  return enc.finish();
}

describe('range coder bytes', () => {
  it.each([
    [20_000, 1],
    [3_000, 2],
  ])('writes the recorded bytes for a mixed stream of %i symbols (seed %i) and reads it back', (n, seed) => {
    const s = symbols(n, seed);
    const bytes = encode(s);
    expect(createHash('sha256').update(bytes).digest('hex').slice(0, 32)).toBe(RECORDED[`${n}/${seed}`]);
    const dec = new RangeDecoder(bytes);
    const bits = models(4);
    const ints = new IntModel(4);
    const back = s.map(({ kind, ctx }) =>
      kind === 0
        ? dec.decodeBit(bits[ctx])
        : kind === 1
          ? dec.decodeDirect()
          : kind === 2
            ? decodeInt(dec, ints, ctx, (ctx % 3) - 1)
            : decodeMagnitude(dec, ints, ctx),
    );
    expect(back).toEqual(s.map((x) => x.v));
    dec.checkEnd('test stream');
  });
});

// Recorded from commit a30fbfa's range coder (same symbols): the first 32 hex digits of SHA-256.
const RECORDED: Record<string, string> = {
  '20000/1': '300763183796efd6801c4d8393637974',
  '3000/2': '4554d64eb1726ddc690d54b2ef349d11',
};
