// The band gains the plane coder uses (src-main/engine/codec/wavelet-transform.ts bandsFor) are read from a
// table for levels 1 … 6 rather than worked out on each thread; the table must hold exactly what the
// synthesis of an impulse gives, since every quantiser step, hence every file, follows from these gains.
import { describe, expect, it } from 'vitest';
import { bandsFor, synthesisGain1d } from '../../src-main/engine/codec/wavelet-transform';

describe('the synthesis gains of the 9/7 bands', () => {
  it('bandsFor gives each band the product of the worked-out 1-D gains, to the last bit', () => {
    const g = (kind: 'low' | 'high', l: number) => (l === 0 ? 1 : synthesisGain1d(kind, l));
    for (const levels of [1, 2, 3, 4, 5, 6]) {
      const bands = bandsFor(4096, 3072, levels);
      for (const b of bands) {
        const h = b.orient === 1 || b.orient === 3 ? g('high', b.level) : g('low', b.level);
        const v = b.orient === 2 || b.orient === 3 ? g('high', b.level) : g('low', b.level);
        expect(Object.is(b.gain, h * v)).toBe(true);
      }
    }
  });

  it('grow about twofold a level (low) and stay near the orthogonal 1 at level 1 (high), as a 9/7 does', () => {
    // Common practice (near-orthogonal CDF 9/7 synthesis): low-band energy roughly doubles per level.
    for (let l = 1; l < 6; l++) {
      const r = synthesisGain1d('low', l + 1) / synthesisGain1d('low', l);
      expect(r).toBeGreaterThan(1.7);
      expect(r).toBeLessThan(1.9);
    }
    expect(synthesisGain1d('high', 1)).toBeCloseTo(0.5957, 3);
  });
});
