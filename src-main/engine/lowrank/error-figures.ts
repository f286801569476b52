/**
 * The error figures a whole-scan encode reports (./encode): the Eckart–Young optimum at the ranks kept
 * (the truncation error, weighted as the reported RGB or gray error), the spectral bound (the largest σ
 * left out) and the achieved Frobenius error.
 */
import type { PlaneRankSummary } from './encode-options';
import type { PlaneFactors } from './factorise';
import type { LayerPlan } from './two-layer';

/** The coded planes (gray, or Y, Cb, Cr) and each one's share of the reported squared error. */
export interface EncodedPlanes {
  planes: ArrayLike<number>[];
  weights: number[];
}

/**
 * Figures for the ranks kept of `factors`. `frobenius` is the achieved error of the decoded samples; with a
 * residual layer it becomes the base layer's own error (in float), since the Eckart–Young figures are
 * about the base. `baseTile` is the written base's tile side.
 */
export function errorFigures(
  factors: PlaneFactors[],
  ranks: PlaneRankSummary[],
  prep: EncodedPlanes,
  frobenius: number,
  baseTile: number,
  layered: LayerPlan | undefined,
): { frobenius: number; frobeniusOptimal: number; spectralBound: number } {
  let trunc = 0;
  let spectral = 0;
  if (baseTile === 0 && factors[0].tile !== 0 && layered) {
    // Rank 0 (residual only, a whole-plane base while the factors are tiled): the Eckart–Young optimum at
    // rank 0 is the whole energy, which is the base error itself; σ₁ of the whole plane was not computed.
    for (let k = 0; k < layered.base.length; k++) {
      let e = 0;
      for (let i = 0; i < layered.base[k].length; i++) e += Number(prep.planes[k][i]) ** 2;
      trunc += prep.weights[k] * e;
    }
    frobenius = Math.sqrt(trunc);
    spectral = Number.NaN;
  } else {
    factors.forEach((f, k) => {
      f.tiles.forEach((tf, t) => {
        const r = ranks[k].ranks[t];
        let kept = 0;
        for (let i = 0; i < r; i++) kept += tf.s[i] * tf.s[i];
        trunc += prep.weights[k] * Math.max(0, tf.energy - kept);
        if (r < tf.s.length) spectral = Math.max(spectral, tf.s[r]);
      });
    });
    // Two layers: the Eckart–Young figures are about the base layer, so the error is the base's (in float).
    if (layered?.residual) frobenius = Math.sqrt(baseSse(prep, layered.base));
  }
  return { frobenius, frobeniusOptimal: Math.sqrt(trunc), spectralBound: spectral };
}

/** Weighted squared error of a decoded base (float, before rounding) against the coded planes. */
function baseSse(prep: EncodedPlanes, base: Float64Array[]): number {
  let s = 0;
  for (let k = 0; k < base.length; k++) {
    const o = prep.planes[k];
    let e = 0;
    for (let i = 0; i < base[k].length; i++) {
      const d = o[i] - base[k][i];
      e += d * d;
    }
    s += prep.weights[k] * e;
  }
  return s;
}
