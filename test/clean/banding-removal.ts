// The wide-band removal measurement shared by test/clean/banding-wide.test.ts and banding-chain.test.ts:
// bands of 50–200 px, RMS 4 (bandProfile) plus noise σ 3 on one axis, removed by the wide pass alone or by
// --banding auto, and the share of the band energy removed with the PSNR before and after (removedShare,
// also used by banding.test.ts and banding-aligned.test.ts).
import { analyseBanding, subtractProfiles } from '../../src-main/engine/clean';
import { wideBandProfile } from '../../src-main/engine/clean/banding-wide';
import { bandProfile, damage, type Gray, psnr, rounded } from './helpers';

/** Removed share 1 − ‖s − ŝ‖²/‖s‖² and PSNR before/after; `auto` runs analyseBanding, else the plain wide pass. */
export function wideRemoval(img: Gray, axis: 'rows' | 'columns', seed: number, auto = false) {
  const len = axis === 'columns' ? img.width : img.height;
  const truth = bandProfile(len, 4, 50, 200, seed);
  const noisy = damage(img, { sigma: 3, seed: 9, [axis]: truth });
  let est: Float64Array | null;
  if (auto) {
    const a = analyseBanding(noisy, img.width, img.height, 'auto', { maxValue: 255 });
    est =
      axis === 'rows' ? (a.removeRows ? a.rows.profile : null) : a.removeColumns ? a.columns.profile : null;
  } else {
    const w = wideBandProfile(noisy, img.width, img.height, axis, 255);
    est = w.detected ? w.profile : null;
  }
  const out = rounded(
    subtractProfiles(
      noisy,
      img.width,
      img.height,
      axis === 'rows' ? est : null,
      axis === 'columns' ? est : null,
    ),
  );
  return { removed: removedShare(truth, est), before: psnr(noisy, img.data), after: psnr(out, img.data) };
}

/** Share of the true profile's energy an estimate takes away: 1 − ‖s − ŝ‖²/‖s‖² (no estimate: 0). */
export function removedShare(truth: Float64Array, estimate: Float64Array | null): number {
  let e0 = 0;
  let e1 = 0;
  for (let i = 0; i < truth.length; i++) {
    e0 += truth[i] ** 2;
    e1 += (truth[i] - (estimate ? estimate[i] : 0)) ** 2;
  }
  return 1 - e1 / e0;
}
