/**
 * Evenly spaced lines of one axis of a plane, copied out as they are (the narrow and wide banding passes
 * both sample 512 of them).
 */

/**
 * nLines evenly spaced lines of the axis, line-major (out[k·lineLen + x]). Row bands' lines are columns:
 * they are read row by row, so the plane is walked in memory order rather than a row's stride apart.
 */
export function gatherLines(
  plane: ArrayLike<number>,
  width: number,
  height: number,
  axis: 'rows' | 'columns',
  nLines: number,
): Float64Array {
  const { lineLen, lineCount } = lineShape(width, height, axis);
  const out = new Float64Array(lineLen * nLines);
  const at = Int32Array.from({ length: nLines }, (_, k) =>
    nLines === lineCount ? k : Math.floor(((k + 0.5) * lineCount) / nLines),
  );
  if (axis === 'columns')
    for (let k = 0; k < nLines; k++) {
      const o = at[k] * width;
      for (let x = 0; x < lineLen; x++) out[k * lineLen + x] = plane[o + x];
    }
  else
    for (let y = 0; y < height; y++) {
      const o = y * width;
      for (let k = 0; k < nLines; k++) out[k * lineLen + y] = plane[o + at[k]];
    }
  return out;
}

/** Length and count of the lines of an axis: column bands are measured along rows, row bands along columns. */
export function lineShape(width: number, height: number, axis: 'rows' | 'columns') {
  return axis === 'columns' ? { lineLen: width, lineCount: height } : { lineLen: height, lineCount: width };
}

/**
 * The narrow pass's sampled lines and their residuals from their running medians, position-major
 * (resid[x·nLines + k]), and the half-width used: the wide pass's background lines need the same ones when
 * it looks at the same plane (banding.ts), so they are handed over instead of computed again.
 */
export interface LineResiduals {
  /** The sampled lines themselves, line-major (gatherLines). */
  lines: Float64Array;
  resid: Float64Array;
  halfWindow: number;
}
