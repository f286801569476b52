// The residual check of a plane whose recorded coefficients are resident in the plane's own memory
// (src-main/engine/lowrank/residual-check.ts checkResident): its bytes are range-decoded into that memory's q
// region on the calling thread, no side job runs, and the check still refuses a changed coefficient, a
// changed reconstruction offset and bytes that do not decode to the recorded values. Afterwards the plane
// is rebuilt with the same bits as before the check. The same on a second thread ('residual-verify'), in
// that thread's coder memory and, once the encode is decided, in the plane's q region after its rebuild over
// the coefficients has read q ('lend').
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { forgetCodes, recordingCodes } from '../../src-main/engine/codec/coded-planes';
import { giveBackWork, residentQ, residentQView } from '../../src-main/engine/codec/resident-plane';
import { ARENA_MIN_PIXELS, type PlaneArena, setArenaMinPixels } from '../../src-main/engine/codec/wasm/arena';
import type { QView } from '../../src-main/engine/codec/wasm/coder-runtime';
import { analysePlane, codeAnalysed, decodePlane } from '../../src-main/engine/codec/wavelet-plane';
import { initEngine } from '../../src-main/engine/linalg';
import { startResidualCheck } from '../../src-main/engine/lowrank/residual-check';
import { runHere, type SideRunner } from '../../src-main/engine/lowrank/side-jobs';
import { digest, rampPlane } from '../codec/plane-samples';

const [w, h, step] = [97, 83, 3];

/** A runner whose jobs run only when joined (after the caller's rebuild), recording their names. */
const later =
  (names: string[]): SideRunner =>
  (name, args) => {
    names.push(name);
    return () => runHere(name, args)();
  };

/** A runner that counts the jobs it is given (none for a resident plane). */
function counting(): { run: SideRunner; jobs: () => number } {
  let n = 0;
  return {
    run: (name, args) => {
      n++;
      return runHere(name, args);
    },
    jobs: () => n,
  };
}

beforeAll(async () => {
  await initEngine();
  setArenaMinPixels(1);
});
afterAll(() => {
  setArenaMinPixels(ARENA_MIN_PIXELS);
  forgetCodes();
});

const code = () => {
  forgetCodes();
  const a = analysePlane(rampPlane(w, h, 11), w, h);
  return recordingCodes(() => codeAnalysed(a, step, 2));
};

/** The plane rebuilt in its own memory, handed out and given back, as the report's decode does: its digest. */
function rebuiltDigest(bytes: Uint8Array): string {
  const x = decodePlane(bytes, w, h, step, 2);
  const d = digest(x);
  giveBackWork(x);
  return d;
}

describe('the residual check of a resident plane', () => {
  const check = (run: SideRunner, bytes: Uint8Array) => () =>
    startResidualCheck(run, { steps: [step], bytes: [bytes] }, w, h, 'c.tif')();

  it('passes on the calling thread, with no side job, and the plane rebuilds with the same bits', () => {
    const c = code();
    expect(residentQView(c)).toBeDefined();
    const rebuilt = () => rebuiltDigest(c.bytes);
    const before = rebuilt();
    const r = counting();
    expect(check(r.run, c.bytes)).not.toThrow();
    expect(r.jobs()).toBe(0);
    // What the check left in the region is the decoded q, equal to the recorded one; a rebuild loads it back.
    expect(rebuilt()).toBe(before);
    // 'elsewhere' leaves a resident plane to a later 'resident' call, which checks it here (and only once).
    const e = counting();
    const later = (planes: 'elsewhere' | 'resident') =>
      startResidualCheck(e.run, { steps: [step], bytes: [c.bytes] }, w, h, 'c.tif', planes);
    later('elsewhere')();
    const view = residentQView(c) as QView;
    view[view.findIndex((v) => v !== 0)] += 1;
    expect(later('resident')).toThrow('decodes to other coefficients');
    expect(later('resident')).not.toThrow();
    expect(e.jobs()).toBe(0);
  });

  it('refuses a changed coefficient, also one changed to or from 0', () => {
    for (const pick of ['non-zero', 'zero'] as const) {
      const c = code();
      const view = residentQView(c) as QView;
      const i = view.findIndex((v) => (pick === 'zero' ? v === 0 : v !== 0));
      expect(i).toBeGreaterThanOrEqual(0);
      view[i] = pick === 'zero' ? 1 : 0;
      expect(check(runHere, c.bytes)).toThrow(
        'c.tif: the residual layer just coded for plane 0 decodes to other coefficients than it was coded from',
      );
    }
  });

  it('refuses a changed reconstruction offset, and bytes that decode to other values', () => {
    const c = code();
    (c.offsets as Float64Array)[1] += 0.125;
    expect(check(runHere, c.bytes)).toThrow('decodes to other reconstruction offsets');
    const d = code();
    // The recorded bytes themselves changed (recallCode still finds them: the same array): the decode differs
    // or runs out.
    d.bytes[d.bytes.length >> 1] ^= 0x5a;
    expect(check(runHere, d.bytes)).toThrow(
      /^c\.tif: the residual layer just coded for plane 0 (decodes to other|cannot be range-decoded)/,
    );
  });
});

describe('the residual check of a resident plane on a second thread (offThread)', () => {
  const check = (run: SideRunner, bytes: Uint8Array) =>
    startResidualCheck(run, { steps: [step], bytes: [bytes] }, w, h, 'c.tif', 'all', true);

  it('one verify job, joined after a rebuild over the q region, passes; the rebuild has the same bits', () => {
    const c = code();
    const rebuilt = () => rebuiltDigest(c.bytes);
    const before = rebuilt();
    const names: string[] = [];
    const join = check(later(names), c.bytes);
    expect(rebuilt()).toBe(before);
    expect(join).not.toThrow();
    expect(names).toEqual(['residual-verify']);
  });

  it('refuses a changed coefficient (to or from 0) and a changed offset, with the same messages', () => {
    for (const pick of ['non-zero', 'zero'] as const) {
      const c = code();
      const view = residentQView(c) as QView;
      const i = view.findIndex((v) => (pick === 'zero' ? v === 0 : v !== 0));
      view[i] = pick === 'zero' ? 1 : 0;
      expect(check(later([]), c.bytes)).toThrow(
        'c.tif: the residual layer just coded for plane 0 decodes to other coefficients than it was coded from',
      );
    }
    const c = code();
    (c.offsets as Float64Array)[1] += 0.125;
    expect(check(later([]), c.bytes)).toThrow('decodes to other reconstruction offsets');
    const d = code();
    d.bytes[d.bytes.length >> 1] ^= 0x5a;
    expect(check(runHere, d.bytes)).toThrow(
      /^c\.tif: the residual layer just coded for plane 0 (decodes to other|cannot be range-decoded)/,
    );
  });
});

describe('the residual check of a decided plane on a second thread, in its q region after the rebuild (lend)', () => {
  /** A plane coded from its own analysis, kept so the test can read its coefficients afterwards. */
  const coded = () => {
    forgetCodes();
    const a = analysePlane(rampPlane(w, h, 11), w, h);
    return { a, c: recordingCodes(() => codeAnalysed(a, step, 2)) };
  };
  const check = (run: SideRunner, bytes: Uint8Array) =>
    startResidualCheck(run, { steps: [step], bytes: [bytes] }, w, h, 'c.tif', 'all', 'lend');

  it('rebuilds over the coefficients, then decodes in the q region beside the rest, passes, and the coefficients are refused after', () => {
    const { a, c } = coded();
    const arena = residentQ(c) as PlaneArena;
    expect(arena).toBeDefined();
    const recorded = Int32Array.from(residentQView(c) as QView);
    expect(recorded.some((v) => v !== 0)).toBe(true);
    const rebuilt = () => rebuiltDigest(c.bytes);
    const before = rebuilt();
    const names: string[] = [];
    const join = check(later(names), c.bytes);
    expect(() => a.coeffs).toThrow('coefficients were overwritten');
    // Nothing is lent (nor any job started) before the rebuild has read q.
    expect(arena.onLoan).toBe(false);
    expect(names).toEqual([]);
    const x = decodePlane(c.bytes, w, h, step, 2);
    expect(digest(x)).toBe(before);
    // The rebuild lies over the coefficients; q's region is lent to the check's decode, started then.
    expect(x.buffer).toBe(arena.memory.buffer);
    expect(x.byteOffset).toBe(arena.coeffsAt);
    expect(arena.onLoan).toBe(true);
    expect(names).toEqual(['residual-verify']);
    giveBackWork(x);
    expect(join).not.toThrow();
    expect(arena.onLoan).toBe(false);
    // The decode left the plane's q in its region: the recorded values, in place (an i16 q: every |q| fits).
    expect(arena.narrowQ).toBe(true);
    expect(Int32Array.from(arena.qView())).toEqual(recorded);
    expect(rebuilt()).toBe(before);
    // Quantising the plane again would read the overwritten coefficients: refused, not computed.
    expect(() => codeAnalysed(a, step * 2, 2)).toThrow('coefficients were overwritten');
  });

  it('with a runner that computes at once (no second thread), checks inside the rebuild, once q is read', () => {
    const { c } = coded();
    const arena = residentQ(c) as PlaneArena;
    const before = rebuiltDigest(c.bytes);
    const join = check(runHere, c.bytes);
    const x = decodePlane(c.bytes, w, h, step, 2);
    expect(digest(x)).toBe(before);
    expect(x.byteOffset).toBe(arena.coeffsAt);
    giveBackWork(x);
    expect(join).not.toThrow();
    const d = coded().c;
    const view = residentQView(d) as QView;
    view[view.findIndex((v) => v !== 0)] = 0;
    const refused = check(runHere, d.bytes);
    giveBackWork(decodePlane(d.bytes, w, h, step, 2));
    expect(refused).toThrow('decodes to other coefficients than it was coded from');
  });

  it('starts the check when joined if no rebuild came first, and the plane still rebuilds with the same bits', () => {
    const { c } = coded();
    const arena = residentQ(c) as PlaneArena;
    const before = rebuiltDigest(c.bytes);
    const names: string[] = [];
    const join = check(later(names), c.bytes);
    expect(names).toEqual([]);
    expect(join).not.toThrow();
    expect(names).toEqual(['residual-verify']);
    expect(arena.onLoan).toBe(false);
    expect(rebuiltDigest(c.bytes)).toBe(before);
  });

  it('refuses a changed coefficient (to or from 0), a changed offset and changed bytes, with the same messages', () => {
    for (const pick of ['non-zero', 'zero'] as const) {
      const { c } = coded();
      const view = residentQView(c) as QView;
      const i = view.findIndex((v) => (pick === 'zero' ? v === 0 : v !== 0));
      view[i] = pick === 'zero' ? 1 : 0;
      expect(check(later([]), c.bytes)).toThrow(
        'c.tif: the residual layer just coded for plane 0 decodes to other coefficients than it was coded from',
      );
    }
    const { c } = coded();
    (c.offsets as Float64Array)[1] += 0.125;
    expect(check(later([]), c.bytes)).toThrow('decodes to other reconstruction offsets');
    const d = coded().c;
    d.bytes[d.bytes.length >> 1] ^= 0x5a;
    expect(check(later([]), d.bytes)).toThrow(
      /^c\.tif: the residual layer just coded for plane 0 (decodes to other|cannot be range-decoded)/,
    );
  });
});
