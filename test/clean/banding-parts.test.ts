// The narrow pass's slice test (src-main/engine/clean/band-profile.ts partsAgree): banding is the same on
// every line, so each quarter of the lines must carry the profile alone. Before it, content that spans the
// middle of every line but not its ends passed the halves' consistency test (each half holds part of it):
// scikit-image 0.19.3's chelsea.png and coins.png (not in test/fixtures) with noise σ 3 and no bands lost
// 4.6 and 5.8 dB to a row profile taken from the cat and the rows of coins. Here the same situation built
// from a row texture (each row its own offset, like fur or print), with the whole-width texture as the
// control: that one is banding by definition and must still be found.
import { describe, expect, it } from 'vitest';
import { analyseBanding } from '../../src-main/engine/clean';
import { damage, type Gray } from './helpers';

/** 512×512 grey 128 plus a row texture of amplitude `amp` on the middle `share` of the width (noise σ 3). */
function rowTexture(amp: number, share: number): Gray {
  const W = 512;
  const H = 512;
  const data = new Float32Array(W * H);
  const x0 = Math.round((W * (1 - share)) / 2);
  for (let y = 0; y < H; y++) {
    const r = Math.sin(y * 12.9898 + 78.233) * 43758.5453; // a fixed pseudo-random offset per row
    const v = (r - Math.floor(r) - 0.5) * 2 * amp;
    for (let x = 0; x < W; x++) data[y * W + x] = 128 + (x >= x0 && x < W - x0 ? v : 0);
  }
  return { width: W, height: H, data: damage({ width: W, height: H, data }, { sigma: 3, seed: 9 }) };
}

describe('content across the middle of every line is not banding', () => {
  for (const amp of [4, 8, 16])
    it(`a row texture of ±${amp} on the middle 70 % of the width: nothing removed (before the slice test: rows)`, () => {
      const g = rowTexture(amp, 0.7);
      const a = analyseBanding(g.data, g.width, g.height, 'auto', { maxValue: 255 });
      expect(a.direction).toBe('none');
    });

  it('the same texture across the whole width is row banding: found, and its profile follows the rows', () => {
    const g = rowTexture(8, 1);
    const a = analyseBanding(g.data, g.width, g.height, 'auto', { maxValue: 255 });
    expect(a.removeRows).toBe(true);
    // Profile against the true row offsets (the texture minus its mean): correlation above 0.95.
    const truth = Float64Array.from({ length: g.height }, (_, y) => {
      let s = 0;
      for (let x = 0; x < g.width; x++) s += g.data[y * g.width + x];
      return s / g.width;
    });
    const m = truth.reduce((s, v) => s + v, 0) / truth.length;
    let pt = 0;
    let pp = 0;
    let tt = 0;
    for (let y = 0; y < g.height; y++) {
      pt += a.rows.profile[y] * (truth[y] - m);
      pp += a.rows.profile[y] ** 2;
      tt += (truth[y] - m) ** 2;
    }
    expect(pt / Math.sqrt(pp * tt)).toBeGreaterThan(0.95);
  });
});
