/**
 * The sampled lines of one axis of a plane, read once and shared by every candidate profile the wide-band
 * pass tries on it (banding-wide.ts: on the whole lines and on the background, step sums and chains), with
 * the per-position statistics those candidates have in common. Before, each candidate read the plane, took
 * the differences, ran the background's running medians, the robust step at every position and the direct
 * levels of the level check again: on a 2000×1500 scan without bands that was most of the banding time.
 */
import { gatherLines, type LineResiduals, lineShape } from './band-gather';
import { directLevels, sampleLines } from './banding-wide-checks';

/** Lines sampled per axis (as band-profile.ts: enough for a median error of ~0.06σ). */
const MAX_SAMPLE_LINES = 512;

export interface Lines {
  /** Sampled lines, line-major (levels[k·lineLen + x]); clipped pixels are NaN. */
  levels: Float64Array;
  /** Neighbour differences, position-major (diffs[x·nLines + k]); NaN where a pixel is clipped. */
  diffs: Float64Array;
  lineLen: number;
  nLines: number;
  maxValue: number;
  /** Share of the lines that must give unclipped pixels at a position (banding-wide.ts MIN_VALID_SHARE or _PAPER). */
  minValid: number;
  /** Per-position statistics of the lines [from, to), by `${from}:${to}` (banding-wide.ts positionStats). */
  stats: Map<string, PositionStats>;
}

/** What banding-wide.ts edgeProfile measures at every position before it groups and tests edges. */
export interface PositionStats {
  /** Robust step s(x+1) − s(x) at each position. */
  step: Float64Array;
  /** 1 where that step is significant. */
  significant: Uint8Array;
  /** Typical spread across lines of a window step. */
  typicalSpread: number;
}

/** One axis of one plane, as the wide-band pass sees it; `lines` and `levels` are computed on first use. */
export interface BandAxis {
  lineLen: number;
  nLines: number;
  /** The lines (`background`: the paper or ground alone, ink and content set to NaN). */
  lines(background: boolean, minValid: number): Lines;
  /**
   * The direct per-position levels of the level check (banding-wide-checks.ts explainsLevels); with
   * `background`, of the background lines alone (call lines(true, …) first).
   */
  levels(background?: boolean): Float64Array;
}

/**
 * The shared view of one axis of `plane` (nothing is read until a candidate asks); `known`: the narrow
 * pass's running-median residuals of the same plane, if it had them.
 */
export function bandAxis(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  axis: 'rows' | 'columns',
  maxValue: number,
  known: LineResiduals | null = null,
): BandAxis {
  const { lineLen, lineCount } = lineShape(width, height, axis);
  const nLines = Math.min(lineCount, MAX_SAMPLE_LINES);
  const memo = new Map<boolean, Lines>();
  let direct: Float64Array | null = null;
  let directPaper: Float64Array | null = null;
  let gathered = known?.lines.length === lineLen * nLines ? known.lines : null;
  const raw = () => {
    gathered ??= gatherLines(plane, width, height, axis, nLines);
    return gathered;
  };
  return {
    lineLen,
    nLines,
    lines(background, minValid) {
      const done = memo.get(background);
      if (done) return done;
      const levels = sampleLines(raw(), lineLen, nLines, maxValue, background, known);
      const diffs = new Float64Array(Math.max(0, lineLen - 1) * nLines);
      for (let k = 0; k < nLines; k++)
        for (let x = 0; x + 1 < lineLen; x++)
          diffs[x * nLines + k] = levels[k * lineLen + x + 1] - levels[k * lineLen + x];
      const made = { levels, diffs, lineLen, nLines, maxValue, minValid, stats: new Map() };
      memo.set(background, made);
      return made;
    },
    levels(background = false) {
      const paper = background ? memo.get(true) : undefined;
      if (paper) {
        directPaper ??= directLevels(paper.levels, lineLen, nLines);
        return directPaper;
      }
      direct ??= directLevels(raw(), lineLen, nLines);
      return direct;
    },
  };
}
