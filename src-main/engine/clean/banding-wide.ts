/**
 * Wide bands: stripes wider than the narrow pass's running median can see (about 30 px and up, to the
 * whole line), removed as the same rank-one pattern b·1ᵀ or 1·sᵀ.
 *
 * A running median keeps edges, so a band wider than its window leaves no residual; and a wide window
 * would take smooth illumination and large content for bands. The wide pass therefore looks at the band
 * edges instead: a band profile s is piecewise constant, so its differences s(x+1) − s(x) are a few steps,
 * the same on every line.
 * 1. At each position, the 40 % trimmed mean over lines of the differences of neighbouring pixels
 *    estimates the step there (pairs with a clipped pixel are left out: a band that pushes paper past
 *    white leaves no difference). Content edges that cross a minority of lines fall in the trimmed tails;
 *    smooth illumination gives differences far below the significance threshold.
 * 2. Significant steps closer than GROUP_GAP px form one group: a band edge spread over a few pixels, a
 *    band edge that meets a thin feature (a ruled line, a fold crease), or a thin feature alone. A group's
 *    net step is measured between windows of WINDOW px on either side, so a thin feature inside cancels
 *    (less a slope the positions beside it share: band-group-step.ts slopeBeside).
 * 3. A group is a band edge when its net step is significant, at most MAX_STEP_8BIT grey levels, of the
 *    same sign and similar size in each quarter of the lines and in their densest half, and not spread more
 *    across lines than its surroundings (a content edge is rarely the same on every line), nor a ramp
 *    (band-ramp.ts). Opposite edges of similar size closer than MIN_BAND_WIDTH are a thin feature, not a
 *    band. The running sum of the edges is the profile.
 * 4. Guards (a missed or invented edge offsets a whole stretch and makes an image worse): the profile must
 *    explain the direct per-position levels and reach the lines' detection threshold (banding-wide-checks.ts;
 *    chains too; an uncut chain at least its variation half); each half of the lines is analysed alone: an
 *    edge one half finds and the whole missed (content on the other half hid it) is added when the other
 *    half shows a step of that sign and size.
 * 5. When these guards reject the profile, it is rebuilt as a chain (`chained`): edges must agree in each
 *    of CHAIN_PARTS slices of the lines, within their noise (partAgrees, lenient); a significant group that
 *    fails (content, which may hide a band edge) is bridged by the step most lines agree on, or cuts the
 *    chain (band-bridge.ts); an edge one half finds and the other does not confirm cuts it too. Between
 *    cuts the profile is made zero-mean on its own, so a doubtful stretch loses only its offset against
 *    the rest instead of vetoing the whole profile or offsetting everything after it. When the chain
 *    without its cuts passes the level check of step 4, the cuts were content and it is used instead.
 * 6. Ink, lanes and texture hide band edges: when this pass finds nothing on the whole lines, banding.ts
 *    calls it again with the steps measured on the background alone (on text pages, the paper, whose own
 *    levels may then pass step 4's check: the whole lines' follow the text; page.png rows, seed 6).
 * 7. The level check cannot see every missed edge on a busy image (camera.png's rows, seed 4: an edge of 11
 *    grey levels inside the coat, the other three found, the profile passed and made the scan 2.2 dB
 *    worse). So when the step sum passes, the chain is built too; when it holds more links, has no cut and
 *    passes the level check, its bridges found what the step sum missed, and it is used instead.
 *
 * References
 * - J. W. Tukey, "Exploratory Data Analysis", Addison-Wesley 1977: medians and trimmed means as robust
 *   summaries.
 * The grouped step-sum construction, its guards, bridges and cuts are this project's (no source).
 */
import { bridgeStep, chainProfile } from './band-bridge';
import { groupStep, MIN_BORDER, slopeBeside, WINDOW } from './band-group-step';
import { type BandAxis, bandAxis, type Lines, type PositionStats } from './band-lines';
import { carriesStep, thinPair } from './band-ramp';
import { removeMean, rms } from './band-stats';
import {
  densestAgrees,
  detectionThreshold,
  explainsLevels,
  partAgrees,
  robustStep,
  STEP_SE,
  standardError,
} from './banding-wide-checks';
import { medianInPlace } from './medians';

/** The lines are split into this many parts (chosen here)… */
const PARTS = 4;
/**
 * …and this many in the chained profile, whose slices must agree within their noise (chosen here: with 4,
 * the lanes of samples/gel-scan.tif, which stop at the wells in the top ~11 % of the rows, passed as bands).
 */
const CHAIN_PARTS = 8;
/** Minimum RMS of a chained profile in 8-bit grey levels (chosen here: as the narrow pass's floor). */
const MIN_CHAIN_STRENGTH_8BIT = 1;
/**
 * Across content, lines that agree on a step within this many typical spreads of zero show no band edge
 * (chosen here: half the noise of one line's window step, so the texture beside a content edge is not
 * bridged as a small band edge).
 */
const ZERO_FLOOR_SD = 0.5;
/**
 * Spread across lines of a group's net step over the larger of the image's typical spread and the spread
 * just beside the group: above this the edge is content (chosen here on the fixtures and samples).
 */
const MAX_STEP_SPREAD = 2;
/** Minimum RMS of a wide profile in 8-bit grey levels (as the narrow pass). */
const MIN_STRENGTH_8BIT = 0.3;
/**
 * A band has two edges; a single step across the whole image is as likely a horizon, a page edge or an
 * illumination boundary (content), so at least two are needed (chosen here), except on the paper of a
 * text page (wideBandProfile's `background`).
 */
const MIN_STEPS = 2;
/** Bands narrower than this are the narrow pass's (its window is 65 px; chosen here). */
const MIN_BAND_WIDTH = 24;
/** Steps closer to either end of the line than this share of it (or MIN_BORDER px) are ignored (chosen here). */
const BORDER_SHARE = 0.03;
/** Significant steps this close (px) form one group (chosen here; below the narrowest band of this pass). */
const GROUP_GAP = 6;
/** Distance (px) from a group to the windows that give its local spread (chosen here: 2·GROUP_GAP). */
const LOCAL_OFFSET = 12;
/** Positions sampled for the typical spread of a window step across lines (chosen here). */
const TYPICAL_SAMPLES = 128;
/** At least this share of the lines must give unclipped pixels at a position for a step there (chosen here). */
const MIN_VALID_SHARE = 0.5;
/**
 * The same on the paper of a text page, where a band edge inside a line of text keeps only the paper
 * between the letters (chosen here: with page.png's lines every ~18 px, an edge at a line of text had
 * 20–50 % of the lines left; 0.2 of 512 lines is still ~100 values).
 */
const MIN_VALID_SHARE_PAPER = 0.2;
/**
 * A step larger than this (8-bit grey levels) is content (a print edge, a plate border): the bands this
 * pass is for are a few grey levels (issue 16 asks for RMS 4, whose largest steps are about 15; chosen here).
 */
const MAX_STEP_8BIT = 24;
export interface WideBands {
  /** Offset per position (zero mean), grey levels. */
  profile: Float64Array;
  /** Band edges kept. */
  steps: number;
  strength: number;
  /** RMS error of the profile from the steps' standard errors. */
  noiseFloor: number;
  detected: boolean;
}

interface Edge {
  /** Position x of the step s(x+1) − s(x). */
  at: number;
  /** The group of differences a … b it was measured across. */
  a: number;
  b: number;
  step: number;
  se: number;
  /** The slope beside the group times the distance between its windows' centres (slopeBeside), taken off each line's window step. */
  tilt: number;
}

/**
 * The wide-band profile of one axis of `plane` ('columns': offsets per column; 'rows': per row). With
 * `background` (text pages) the steps are measured on the paper alone (banding-wide-checks.ts sampleLines),
 * and one edge is enough: a full-length step in the paper is the lamp or the sensor, not a horizon. With
 * `chain` the chained profile of step 5 is built instead (banding.ts asks for it only after the plain step
 * sum, on the whole lines and on the paper, was rejected). `shared` is the axis's view (band-lines.ts): pass
 * the same one to every candidate tried on one plane, so the lines and statistics are measured only once.
 * `paperLevels` (a text page, with `background`): the level check also accepts the paper's levels (step 6).
 */
export function wideBandProfile(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  axis: 'rows' | 'columns',
  maxValue: number,
  background = false,
  chain = false,
  shared: BandAxis = bandAxis(plane, width, height, axis, maxValue),
  paperLevels = false,
): WideBands {
  const { lineLen, nLines } = shared;
  const lines = shared.lines(background, background ? MIN_VALID_SHARE_PAPER : MIN_VALID_SHARE);
  const explains = (s: Float64Array, variationOnly = false) =>
    explainsLevels(shared.levels(), s, variationOnly) ||
    (background && paperLevels && explainsLevels(shared.levels(true), s, variationOnly));
  if (chain) return chained(shared, lines, background, explains);
  const whole = edgeProfile(lines, 0, nLines, false);
  const { profile } = whole;
  let detected =
    whole.steps >= (background ? 1 : MIN_STEPS) &&
    rms(profile) >= Math.max((MIN_STRENGTH_8BIT * maxValue) / 255, 3 * whole.noiseFloor) &&
    rms(profile) >= detectionThreshold(whole.typicalSpread, nLines) &&
    explains(profile);
  // Each half of the lines, analysed alone, may find a band edge that content on the other half hid from
  // the whole; without it the profile would leave a whole stretch offset. Such an edge is added when the
  // other half shows a step of the same sign and at least PART_AGREEMENT of its size there; otherwise
  // nothing is removed.
  const half = nLines >> 1;
  const added: Edge[] = [];
  const col = new Float64Array(nLines);
  for (const [from, to, o0, o1] of [
    [0, half, half, nLines],
    [half, nLines, 0, half],
  ]) {
    if (!detected) break;
    for (const e of edgeProfile(lines, from, to, false).edges) {
      if ([...whole.edges, ...added].some((w) => Math.abs(w.at - e.at) <= GROUP_GAP)) continue;
      if (!partAgrees(groupStep(lines, e.a, e.b, o0, o1, col, e.tilt), e.step, false)) {
        detected = false;
        break;
      }
      const all = groupStep(lines, e.a, e.b, 0, nLines, col, e.tilt);
      added.push({ ...e, step: all.step, se: standardError(all) });
    }
  }
  for (const e of added) for (let x = e.at + 1; x < lineLen; x++) profile[x] += e.step;
  if (added.length) {
    removeMean(profile);
    detected &&= explains(profile);
  }
  const strength = rms(profile);
  const steps = whole.steps + added.length;
  const noiseFloor = Math.sqrt(whole.noiseFloor ** 2 + added.reduce((t, e) => t + e.se * e.se, 0));
  // Step 7 of the header: an uncut, level-checked chain with more links holds an edge the step sum missed.
  if (detected) {
    const richer = chained(shared, lines, background, explains);
    if (richer.detected && richer.whole && richer.links > steps) return richer;
  }
  return { profile, steps, strength, noiseFloor, detected };
}

/** What a chain without a single link returns (its profile is the zero one of the lines). */
const NONE = { steps: 0, strength: 0, noiseFloor: 0, detected: false, links: 0, whole: false };

/** The chained profile's edges and bridges on the whole lines hold at least one link. */
const edgeLike = (whole: { edges: Edge[]; bridges: Edge[] }) => whole.edges.length + whole.bridges.length > 0;

/** Something on the axis's whole lines resembles a band edge: the chain's lenient tests keep one (cached). */
function resemblesBandEdges(shared: BandAxis): boolean {
  return edgeLike(edgeProfile(shared.lines(false, MIN_VALID_SHARE), 0, shared.nLines, true));
}

/**
 * Step 5 of the header: the chained profile, with bridges across content and cuts where links are doubtful;
 * `links` counts its edges and bridges, and `whole` says that it has no cut and passes the level check.
 */
function chained(
  shared: BandAxis,
  lines: Lines,
  background: boolean,
  explains: (s: Float64Array, variationOnly?: boolean) => boolean,
): WideBands & { links: number; whole: boolean } {
  const { lineLen, nLines, maxValue } = lines;
  const whole = edgeProfile(lines, 0, nLines, true);
  // Nothing on the whole lines resembles a band edge (on the paper: nor on the whole lines of the plain
  // pass): the halves would have to find every edge alone. On the benchmark's 80 wide-band cases (seeds 1–8)
  // that happened once, on the paper with the plain lines showing a band edge (page.png's column bands,
  // seed 6); the halves' two passes cost a third of the banding time of a scan without bands, so the chain
  // ends here.
  if (!edgeLike(whole) && (!background || !resemblesBandEdges(shared)))
    return { ...NONE, profile: whole.profile };
  const edges = [...whole.edges];
  const links = [...edges, ...whole.bridges];
  const cuts = [...whole.cuts];
  const half = nLines >> 1;
  const col = new Float64Array(nLines);
  for (const [from, to, o0, o1] of [
    [0, half, half, nLines],
    [half, nLines, 0, half],
  ])
    for (const e of edgeProfile(lines, from, to, true).edges) {
      if (links.some((w) => e.b >= w.a - GROUP_GAP && e.a <= w.b + GROUP_GAP)) continue;
      if (!partAgrees(groupStep(lines, e.a, e.b, o0, o1, col, e.tilt), e.step, true)) {
        cuts.push(e.at);
        continue;
      }
      const added = { ...e, step: groupStep(lines, e.a, e.b, 0, nLines, col, e.tilt).step };
      edges.push(added);
      links.push(added);
    }
  const kept = cuts.filter((c) => !edges.some((e) => Math.abs(e.at - c) <= GROUP_GAP));
  const profile = chainProfile(lineLen, links, kept);
  const noiseFloor = Math.sqrt(links.reduce((t, e) => t + e.se * e.se, 0));
  const strength = rms(profile);
  const made = { steps: edges.length, noiseFloor, links: links.length };
  // An uncut chain, no cut to excuse it: the level check's variation half on the whole lines (banding-wide-
  // checks.ts MIN_TV_EXPLAINED_UNCUT); on the paper the whole lines' levels follow the text (step 6).
  const detected =
    edges.length >= (background ? 1 : MIN_STEPS) &&
    strength >= Math.max((MIN_CHAIN_STRENGTH_8BIT * maxValue) / 255, 3 * noiseFloor) &&
    strength >= detectionThreshold(whole.typicalSpread, nLines) &&
    (kept.length > 0 || background || explains(profile, true));
  // A cut leaves each stretch's offset against the others in place; where content, not a hidden band edge,
  // caused it, the uncut chain is right. It is kept when it passes the plain step sum's level check.
  if (detected && kept.length) {
    const uncut = chainProfile(lineLen, links, []);
    if (explains(uncut)) return { ...made, detected, profile: uncut, strength: rms(uncut), whole: true };
  }
  return { ...made, detected, profile, strength, whole: detected && !kept.length && explains(profile) };
}

/**
 * Step 1 of the header on the lines [from, to): the robust step at each position, whether it is significant,
 * and the typical spread of a window step (the same for every candidate on these lines: kept in `lines`).
 */
function positionStats(lines: Lines, from: number, to: number): PositionStats {
  const key = `${from}:${to}`;
  const known = lines.stats.get(key);
  if (known) return known;
  const { diffs, lineLen, nLines } = lines;
  const count = to - from;
  const col = new Float64Array(count);
  const n = Math.max(0, lineLen - 1);
  const step = new Float64Array(n);
  const significant = new Uint8Array(n);
  for (let x = 0; x < n; x++) {
    const all = robustStep(diffs, x * nLines + from, x * nLines + to, col);
    step[x] = all.step;
    const se = standardError(all);
    significant[x] = all.count >= lines.minValid * count && Math.abs(all.step) > STEP_SE * se ? 1 : 0;
  }
  const typical = new Float64Array(TYPICAL_SAMPLES);
  for (let i = 0; i < TYPICAL_SAMPLES; i++) {
    const x = WINDOW + Math.floor((i * Math.max(0, n - 2 * WINDOW)) / TYPICAL_SAMPLES);
    typical[i] = groupStep(lines, x, x, from, to, col).spread;
  }
  const made = { step, significant, typicalSpread: medianInPlace(typical, TYPICAL_SAMPLES) };
  lines.stats.set(key, made);
  return made;
}

/**
 * Steps 1–3 of the header on the lines [from, to): the zero-mean step-sum profile of the kept edges; when
 * `chain`, with the lenient slice test and the bridges and cuts of step 5.
 */
function edgeProfile(lines: Lines, from: number, to: number, chain: boolean) {
  const { lineLen } = lines;
  const count = to - from;
  const col = new Float64Array(count);
  const n = Math.max(0, lineLen - 1);
  const windowStep = (a: number, b: number, k0: number, k1: number, tilt = 0) =>
    groupStep(lines, a, b, k0, k1, col, tilt);
  const { step, significant, typicalSpread } = positionStats(lines, from, to);
  // The spread beside a group (windows LOCAL_OFFSET px before and after it): in texture, content edges and
  // band edges alike come with a larger spread than the image's typical one.
  const localSpread = (a: number, b: number) => {
    const near: number[] = [];
    for (const x of [a - LOCAL_OFFSET, b + LOCAL_OFFSET])
      if (x >= WINDOW && x + WINDOW < n) near.push(windowStep(x, x, from, to).spread);
    return near.length ? Math.min(...near) : 0;
  };
  const maxStep = (MAX_STEP_8BIT * lines.maxValue) / 255;
  // Steps next to the ends of the line are a plate rebate, a scan-bed edge or a page margin: content.
  const border = Math.max(MIN_BORDER, Math.round(BORDER_SHARE * lineLen));
  const parts = chain ? CHAIN_PARTS : PARTS;
  const slicesAgree = (a: number, b: number, s: number, tilt: number) => {
    for (let q = 0; q < parts; q++) {
      const k0 = from + Math.floor((q * count) / parts);
      const part = windowStep(a, b, k0, from + Math.floor(((q + 1) * count) / parts), tilt);
      if (!partAgrees(part, s, chain)) return false;
    }
    return true;
  };
  // The group's largest difference (of the sign of s, when s is not 0): where its step goes.
  const largest = (a: number, b: number, s: number) => {
    let at = a;
    for (let x = a; x <= b; x++)
      if ((s === 0 || Math.sign(step[x]) === Math.sign(s)) && Math.abs(step[x]) > Math.abs(step[at])) at = x;
    return at;
  };
  const edges: Edge[] = [];
  const bridges: Edge[] = [];
  const cuts: number[] = [];
  for (let a = 0; a < n; a++) {
    if (!significant[a]) continue;
    let b = a;
    for (let g = b + 1; g < n && g <= b + GROUP_GAP; g++) if (significant[g]) b = g;
    const first = a;
    a = b;
    if (first < border || b >= n - border) continue;
    // A shared gradient reads as a step across any group (color.png, σ 3: −1.2 dB): its slope is taken off.
    const tilt = slopeBeside(step, first, b, col);
    const all = windowStep(first, b, from, to, tilt);
    const se = standardError(all);
    if (
      all.count >= lines.minValid * count &&
      Math.abs(all.step) > STEP_SE * se &&
      Math.abs(all.step) <= maxStep &&
      all.spread <= MAX_STEP_SPREAD * Math.max(typicalSpread, localSpread(first, b)) &&
      slicesAgree(first, b, all.step, tilt) &&
      densestAgrees(all.perLine, all.step, col)
    ) {
      // A ramp is no band edge, nor content that hides one: the chain neither bridges nor cuts it.
      if (carriesStep(step, first, b, all.step, col))
        edges.push({ at: largest(first, b, all.step), a: first, b, step: all.step, se, tilt });
      continue;
    }
    if (!chain) continue;
    // Step 5 of the header: bridge the content, or cut the chain.
    let bridged = bridgeStep(all.perLine, typicalSpread, maxStep, ZERO_FLOOR_SD * typicalSpread);
    if (bridged !== null && bridged !== 0 && !slicesAgree(first, b, bridged, tilt)) bridged = null;
    const at = largest(first, b, bridged ?? 0);
    if (bridged === null) cuts.push(at);
    else if (bridged !== 0)
      bridges.push({ at, a: first, b, step: bridged, se: typicalSpread / Math.sqrt(count), tilt });
  }
  // A band has a width: a kept edge with a close partner is part of a thin feature (band-ramp.ts).
  const close = (i: number, j: number) =>
    j >= 0 && j < edges.length && thinPair(edges[i], edges[j], MIN_BAND_WIDTH);
  const profile = new Float64Array(lineLen);
  let steps = 0;
  let err2 = 0;
  const kept: typeof edges = [];
  edges.forEach((e, i) => {
    if (close(i, i - 1) || close(i, i + 1)) return;
    kept.push(e);
    steps++;
    err2 += e.se * e.se;
    for (let x = e.at + 1; x < lineLen; x++) profile[x] += e.step;
  });
  removeMean(profile);
  return { profile, steps, noiseFloor: Math.sqrt(err2), edges: kept, bridges, cuts, typicalSpread };
}
