/**
 * Whether a clean models the noise as spatially correlated, and what that changes: the σ per pixel (the finest
 * wavelet detail the white-noise estimate reads sees only the high frequencies, which correlated noise mostly
 * lacks), the per-coefficient noise spectrum that the patch-group passes use (group-low-rank.ts,
 * wiener-groups.ts), and the coarse-scale pass over a Gaussian pyramid (pyramid.ts, run from pipeline.ts).
 *
 * With --noise-colour auto the measurement decides (noise-psd.ts: flatness and high-frequency share), and only
 * where the white-noise estimate itself sees noise above rounding level: a noise-free smooth scan's flat
 * blocks hold smooth signal, which looks like low-pass noise, and must not be "denoised" at that level.
 *
 * Texture in the flat blocks. The spectrum is read from the flattest 16×16 blocks, and where the content
 * itself is fine texture at the frequencies where correlated noise has its power (paper grain, foliage,
 * gravel), every block holds some and it is counted as noise. The white-noise estimate (noise-estimate.ts)
 * measures one part of the same spectrum independently and robustly: the variance of the finest Haar
 * diagonal detail, taken as a median over the 2×2 blocks its texture score ranks flattest, a far finer
 * selection than 16×16 blocks. Noise alone makes the two agree (white noise through the 3×3 binomial kernel,
 * σ 5 on a flat image: 1.69 predicted by the spectrum, 1.71 measured, the rest rounding). When the spectrum
 * predicts more there than AGREEMENT times the measurement, its flat blocks carry content, and the spectrum is
 * scaled down to that bound (its shape kept: the content is taken to have the spectrum that was measured,
 * which is what the blocks hold).
 * When the spectrum predicts more than TEXTURE_RATIO times what the fine scale sees, its blocks are mostly
 * content, nothing is known about the noise's colour, and the noise is taken as white (as when too few flat
 * blocks are found). Both apply to --noise-colour auto only (measured: the spectrum as measured). On the
 * bench's correlated cases and 10 of scikit-image's sample images (3×3 binomial and 5×5 Gaussian kernels,
 * σ 5 and 10) this moved text.png σ 5 from σ̂ 7.06 / 6.97 to 6.55 / 5.98 (gain +0.18 / +0.38 dB), turned
 * grass.png and gravel.png (σ̂ ≈ 35 for a true 5 or 10, −8 to −14 dB) to white (+7.7 to +13.3 dB), and cost
 * at most 0.05 dB (moon.png, Gaussian kernel, whose own texture a lower σ̂ leaves in).
 *
 * White noise under texture. Where every flat block holds some low-frequency content (tissue in a stained
 * slide, a colour scan's luma where the noise is 0.67σ of each channel's), white noise plus that content
 * gives a spectrum that is not flat and whose high-frequency share is small, while the fine-scale variance
 * agrees with the white-noise estimate (the content is smooth): the bound above does not see it, and the
 * content was "denoised" as correlated noise (ihc.png in colour, white σ 10: σ̂ 25.3, −1.2 dB). The noise's
 * own scale dependence tells the two apart: the robust σ̂ read one wavelet scale coarser (noise-estimate.ts
 * coarseNoiseSigma, from the least-textured 4×4 blocks) equals the finest-scale σ̂ for white noise and is
 * 3.5–4.4 times it for the filtered noises; when it is below SCALE_RATIO times, the noise is taken as white.
 * The texture bound above is applied at that coarser scale as well (haarCoarseVariance against the coarse
 * σ̂², same TEXTURE_RATIO): gravel.png with white σ 5 passed both other tests (fine-scale ratio 1.8, scale
 * ratio 2.2; its texture has more power at the coarser scale) and read σ̂ 28 (−11.9 dB); its coarse ratio is
 * 2.8, while correlated noise measured 0.7–1.4 on the bench's and 9 unseen images.
 *
 * The white-noise σ̂ on a texture verdict. Where the flat blocks are texture, the finest-scale σ̂ is partly
 * texture too (grass.png with no noise added reads 8.9). Noise that is white reads the same at every Haar scale;
 * the texture's share grows from scale to scale, and taking it to grow by one factor per scale the three finest
 * scales solve for the noise (textureFree). Measured on unseen images with white noise: grass σ 0 / 5 / 10 / 20
 * → 0 (nothing removed) / 4.4 / 10.2 / 19.4, gravel 1.5 / 5.8 / 10.5 (read over the whole plane; only the
 * texture verdicts use it, and of these cases grass σ 0 and 5 and gravel σ 0 and 5 reach them). Low-pass noise
 * grows with scale too, so correlated noise on a scan that is all texture is taken for texture as well
 * (test/clean/correlated-texture.test.ts: nothing removed where the white path gained 0.24 dB).
 */
import type { CleanMethodOptions, NoiseColourChoice, NoiseColourReport } from '../../contract';
import { NOISE_GAIN_YCBCR } from '../colour';
import { estimateNoiseSigma, scaleSigmas } from './noise-estimate';
import { estimateNoisePsd, type NoisePsd, PSD_LAG } from './noise-psd';
import { type ClipChannel, unclippedFloorTest } from './noise-psd-floor';
import { dctNoiseVariances, haarCoarseVariance, haarDiagonalVariance } from './noise-psd-spectrum';

interface NoiseColourPlan {
  /** For the report (null: auto and white, nothing to say beyond today's report). */
  report: NoiseColourReport | null;
  /** The measurement when the noise is modelled as correlated; null: white. */
  psd: NoisePsd | null;
  /** White noise under texture: the factor (≤ 1) on the white-noise σ̂ that takes the texture out (textureFree). */
  whiteFactor?: number;
}

/**
 * Decide the noise colour of `plane` (gray or luma), avoiding samples at or beyond the clip levels. `sigma8` is
 * the white-noise estimate on the 8-bit scale, `floor8` the level below which auto sees no noise, `white` the
 * same estimate in the plane's units (the fine-scale bound of the file comment).
 */
function planNoiseColour(
  plane: Float32Array,
  { width, height }: { width: number; height: number },
  [clipLow, clipHigh]: [number, number],
  choice: NoiseColourChoice,
  { sigma8, floor8, white }: { sigma8: number; floor8: number; white: number },
  { channels, gain }: { channels: ClipChannel[]; gain: number },
): NoiseColourPlan {
  if (choice === 'white')
    return {
      psd: null,
      report: colourReport('white', 'forced', 'forced with --noise-colour white', null),
    };
  const psd = estimateNoisePsd(plane, width, height, clipLow, clipHigh);
  if (!psd)
    return {
      psd: null,
      report:
        choice === 'measured'
          ? colourReport('white', 'forced', 'too few flat blocks to measure the noise spectrum', null)
          : null,
    };
  if (choice === 'measured')
    return { psd, report: colourReport('correlated', 'forced', 'forced with --noise-colour measured', psd) };
  if (!psd.correlated) return { psd: null, report: null };
  /** The verdict white, from the measurement: `reason` says why the spectrum is not taken as the noise's. */
  const measuredWhite = (reason: string, whiteFactor?: number): NoiseColourPlan => ({
    psd: null,
    report: colourReport('white', 'measured', reason, psd),
    ...(whiteFactor === undefined ? {} : { whiteFactor }),
  });
  const scales = () => scaleSigmas(plane, width, height, clipLow, clipHigh, 3);
  /** The texture verdicts: white, with σ̂ taken from the three scales (textureFree). */
  const underTexture = (reason: string, s: number[]) => {
    const f = s[0] > 0 ? Math.sqrt(textureFree(s.map((v) => v * v)) / (s[0] * s[0])) : 1;
    return measuredWhite(
      f < 1 ? `${reason}; the fine-scale σ̂ without the texture's share: ×${f.toFixed(2)}` : reason,
      f,
    );
  };
  if (sigma8 < floor8)
    return measuredWhite(
      'the spectrum looks correlated, but the fine-scale noise is below rounding level (smooth content, not noise)',
    );
  const excess = white > 0 ? haarDiagonalVariance(psd) / (white * white) : 1;
  if (excess > TEXTURE_RATIO)
    return underTexture(
      `the flat blocks hold texture: their spectrum predicts ${excess.toFixed(1)} times the fine-scale variance the white-noise estimate sees`,
      scales(),
    );
  const fine = estimateNoiseSigma(plane, width, height, clipLow, clipHigh);
  const s = scales();
  const coarse = s[1];
  const scale = fine > 0 ? coarse / fine : SCALE_RATIO;
  if (scale < SCALE_RATIO)
    return measuredWhite(
      `the noise reads ${scale.toFixed(2)} times as strong one wavelet scale coarser (white noise: 1): the flat blocks' low frequencies are content`,
    );
  const coarseExcess = coarse > 0 ? haarCoarseVariance(psd) / (coarse * coarse) : 1;
  if (coarseExcess > TEXTURE_RATIO)
    return underTexture(
      `the flat blocks hold texture: their spectrum predicts ${coarseExcess.toFixed(1)} times the variance the white-noise estimate sees one wavelet scale coarser`,
      s,
    );
  const floor = unclippedFloorTest(psd, width, channels, psd.sigma / gain);
  if (floor?.content)
    return measuredWhite(
      `the flat blocks are quieter than noise of this spectrum allows: ${floor.below} of ${floor.blocks} lie below ${floor.floor.toFixed(2)} of their lower-quartile variance (noise: 1 in 100): smooth content, not noise`,
    );
  const bounded = excess > AGREEMENT ? scaledPsd(psd, AGREEMENT / excess) : psd;
  return {
    psd: bounded,
    report: colourReport(
      'correlated',
      'measured',
      `the noise spectrum is not flat (flatness ${psd.flatness.toFixed(2)}, high-frequency share ${psd.highShare.toFixed(2)}; white noise: 1)`,
      bounded,
    ),
  };
}

/**
 * Above this ratio of the fine-scale variance the spectrum predicts to the one measured, the flat blocks are
 * taken as content, not noise (see the file comment). Chosen here: noise alone measures 0.95–1.05; the
 * bench's and 10 unseen images' correlated cases 0.8–1.6, all-texture images (grass, gravel) 2.5–3.1.
 */
const TEXTURE_RATIO = 2;
/**
 * The spread allowed between the two fine-scale variances before the spectrum is scaled: the spectrum's is
 * read from as few as 8 blocks (noise alone measured 0.95–1.05 on the bench's flat cases). Chosen here.
 */
const AGREEMENT = 1.1;

/**
 * The white-noise variance in three variances v₁, v₂, v₃ of the diagonal detail at successive scales (finest
 * first) read as white noise n (the same at every scale) plus texture whose share grows by one factor per
 * scale (t, g·t, g²·t): n = v₁ − d₁²/(d₂ − d₁), d₁ = v₂ − v₁, d₂ = v₃ − v₂ (the geometric series through three
 * terms; Aitken's Δ² extrapolation, common practice). Kept within [0, v₁]; v₁ itself when the texture does not
 * grow faster at each coarser scale (d₁ ≤ 0 or d₂ ≤ d₁), where the model says nothing.
 */
export function textureFree([v1, v2, v3]: number[]): number {
  const d1 = v2 - v1;
  const d2 = v3 - v2;
  if (!(d1 > 0 && d2 > d1)) return v1;
  return Math.min(v1, Math.max(0, v1 - (d1 * d1) / (d2 - d1)));
}

/**
 * Below this ratio of the coarse-scale to the finest-scale σ̂ the noise is white (file comment): the geometric
 * mean of white noise's 1 and the filtered noises' 3.5–4.4, rounded (chosen here). Measured: white noise under
 * texture 1.2–1.8 (ihc, grass), filtered noise on 13 images 2.8–4.8 (the bench's and unseen ones).
 */
const SCALE_RATIO = 2;

/** `psd` with its autocovariance times `f` (shape, flatness and shares unchanged). */
function scaledPsd(psd: NoisePsd, f: number): NoisePsd {
  return { ...psd, autocov: psd.autocov.map((v) => v * f), sigma: psd.sigma * Math.sqrt(f) };
}

/** Below this σ on the 8-bit scale a white-noise estimate sees no noise (pipeline.ts MIN_AUTO_SIGMA_8BIT). */
const ROUNDING_SIGMA_8BIT = 0.6;

/**
 * The pipeline's hook: decide the colour (not for tiles, and with a noise level given by the user only when
 * forced), and with correlated noise replace the white-noise σ of every work plane by the measured σ per pixel
 * (plane 0; the others scaled by the same ratio) unless it was given. On the Poisson–Gaussian path the guide is
 * the variance-stabilised plane: the transform is smooth, so it keeps the noise's correlation, and the
 * stabilised σ it was scaled to came from the fine-scale estimate, which correlated noise fools.
 */
export function noiseColour(
  guide: Float32Array,
  sigmas: number[],
  noiseSigma: number,
  o: {
    width: number;
    height: number;
    maxValue: number;
    colour: boolean;
    given: boolean;
    stabilised: boolean;
    settings: Pick<CleanMethodOptions, 'noiseColour' | 'method'>;
    /** The colour channels the guide was made from (stabilised on that path): where their noise clips. */
    source: Float32Array[];
  },
): NoiseColourPlan & { sigmas: number[]; noiseSigma: number } {
  const choice = o.settings.noiseColour ?? 'auto';
  const skip = (o.settings.method ?? 'groups') !== 'groups' || (o.given && choice !== 'measured');
  if (skip) {
    const why = o.given
      ? 'a given noise level is taken as white noise'
      : 'the tiles method takes the noise as white';
    const report = choice === 'auto' ? null : colourReport('white', 'forced', `not measured: ${why}`, null);
    return { psd: null, report, sigmas, noiseSigma };
  }
  const sigma8 = (sigmas[0] * 255) / o.maxValue;
  const channels = o.source.map((plane) => {
    const [low, high] = clipLevels(plane, o.maxValue, o.stabilised);
    return { plane, low, high };
  });
  const plan = planNoiseColour(
    guide,
    o,
    clipLevels(guide, o.maxValue, o.stabilised),
    choice,
    { sigma8, floor8: ROUNDING_SIGMA_8BIT, white: sigmas[0] },
    { channels, gain: o.colour ? NOISE_GAIN_YCBCR[0] : 1 },
  );
  const psd = plan.psd;
  const f = plan.whiteFactor;
  if (f !== undefined && f < 1 && !o.given)
    return { ...plan, sigmas: sigmas.map((v) => v * f), noiseSigma: noiseSigma * f };
  if (!psd || o.given) return { ...plan, sigmas, noiseSigma };
  const k = sigmas[0] > 0 ? psd.sigma / sigmas[0] : 1;
  return {
    ...plan,
    sigmas: sigmas.map((s, c) => (c === 0 ? psd.sigma : s * k)),
    noiseSigma: o.colour ? noiseSigma * k : psd.sigma,
  };
}

/**
 * The levels at which samples of `guide` are clipped and carry no noise: 0 and `maxValue`, or the extremes of a
 * variance-stabilised plane (whose values are no longer on the sample scale).
 */
export function clipLevels(guide: Float32Array, maxValue: number, stabilised: boolean): [number, number] {
  if (!stabilised) return [0, maxValue];
  let lo = Number.POSITIVE_INFINITY;
  let hi = Number.NEGATIVE_INFINITY;
  for (const v of guide) {
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  return [lo, hi];
}

/** The DCT noise spectrum for patches of side p, or undefined when p is beyond the measured lags. */
export function patchSpectrum(psd: NoisePsd | null, p: number): number[] | undefined {
  return psd && p <= PSD_LAG + 1 ? Array.from(dctNoiseVariances(psd, p)) : undefined;
}

function colourReport(
  colour: NoiseColourReport['colour'],
  source: NoiseColourReport['source'],
  reason: string,
  psd: NoisePsd | null,
): NoiseColourReport {
  return {
    colour,
    source,
    reason,
    sigma: psd?.sigma ?? null,
    flatness: psd?.flatness ?? null,
    highShare: psd?.highShare ?? null,
    lagOne: psd?.lagOne ?? null,
    blocks: psd?.blocks ?? 0,
  };
}
