// A released plane's WebAssembly memory is reused by the next plane analysed (src-main/engine/codec/wasm/arena.ts
// spares, releaseAnalysed in ../wavelet-plane.ts): the next plane (larger: the memory grows in place) codes to
// the same bits as the TypeScript reference, results made before the release keep their q, and the released
// plane can no longer be read.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { forgetCodes, recordingCodes } from '../../src-main/engine/codec/coded-planes';
import { residentArena } from '../../src-main/engine/codec/resident-plane';
import { ARENA_MIN_PIXELS, setArenaMinPixels } from '../../src-main/engine/codec/wasm/arena';
import {
  analysePlane,
  codeAnalysed,
  decodePlane,
  reconstructCoded,
  releaseAnalysed,
} from '../../src-main/engine/codec/wavelet-plane';
import { digest, rampPlane, reference } from './plane-samples';

/** Coefficients, bytes and reconstruction of a plane coded at two steps, as digests. */
function codes(p: Float32Array, w: number, h: number) {
  const a = analysePlane(p, w, h);
  const out = [digest(a.coeffs)];
  for (const s of [1.5, 7]) {
    const c = codeAnalysed(a, s, 2);
    out.push(digest(c.bytes), digest(c.q), digest(reconstructCoded(a, c)));
  }
  return { a, out };
}

describe('a released plane arena', () => {
  beforeAll(() => setArenaMinPixels(1));
  afterAll(() => setArenaMinPixels(ARENA_MIN_PIXELS));

  it('gives its memory to the next, larger plane, which codes to the reference bits', () => {
    const small = rampPlane(48, 40, 3);
    const big = rampPlane(131, 97, 8);
    const ref = reference(() => codes(big, 131, 97).out);
    const { a } = codes(small, 48, 40);
    const memory = residentArena(a)?.memory;
    expect(memory).toBeDefined();
    const pagesBefore = (memory as WebAssembly.Memory).buffer.byteLength;
    releaseAnalysed(a);
    const next = codes(big, 131, 97);
    expect(residentArena(next.a)?.memory).toBe(memory);
    expect((memory as WebAssembly.Memory).buffer.byteLength).toBeGreaterThan(pagesBefore);
    expect(next.out).toEqual(ref);
    releaseAnalysed(next.a);
  });

  it('keeps the q of results made before the release, and refuses to be read', () => {
    const w = 56;
    const h = 45;
    const p = rampPlane(w, h, 17);
    const a = analysePlane(p, w, h);
    const first = codeAnalysed(a, 2, 2);
    const last = codeAnalysed(a, 5, 2); // its q is the one in the arena at the release
    const want = [digest(first.q), digest(last.q)];
    releaseAnalysed(a);
    // Another plane overwrites the memory; the released results' q and bytes are unchanged.
    const other = analysePlane(rampPlane(w, h, 99), w, h);
    codeAnalysed(other, 0.5, 2);
    expect([digest(first.q), digest(last.q)]).toEqual(want);
    expect(digest(decodePlane(last.bytes, w, h, 5, 2))).toBe(
      digest(reference(() => decodePlane(last.bytes, w, h, 5, 2))),
    );
    expect(() => a.coeffs).toThrow(/released plane arena/);
    releaseAnalysed(other);
  });

  it('is not reused while a reconstruction handed out of its work region is held', () => {
    const w = 40;
    const h = 33;
    const a = analysePlane(rampPlane(w, h, 4), w, h);
    // Decoding bytes just coded while recording rebuilds them in the arena's work region and hands it out.
    const decoded = recordingCodes(() => {
      const c = codeAnalysed(a, 3, 2);
      return decodePlane(c.bytes, w, h, 3, 2);
    });
    forgetCodes();
    const memory = residentArena(a) ? undefined : (decoded.buffer as ArrayBuffer);
    expect(memory).toBeDefined(); // handed out: the plane is no longer resident, its region is the result
    const kept = digest(decoded);
    releaseAnalysed(a);
    const other = analysePlane(rampPlane(w, h, 5), w, h);
    codeAnalysed(other, 1, 2);
    expect(residentArena(other)?.memory.buffer).not.toBe(memory);
    expect(digest(decoded)).toBe(kept);
    releaseAnalysed(other);
  });
});
