/**
 * Row-major dense matrix views over Float32Array or Float64Array.
 * Element (i, j) lives at data[i * cols + j]. Views never copy unless a function says so.
 */
export type FloatArray = Float32Array | Float64Array;

export interface Matrix<T extends FloatArray = FloatArray> {
  readonly rows: number;
  readonly cols: number;
  readonly data: T;
}

export type Precision = 'f32' | 'f64';

/** Make a matrix view; allocates zeros when `data` is omitted. */
export function matrix<T extends FloatArray = Float64Array>(rows: number, cols: number, data?: T): Matrix<T> {
  const d = data ?? (new Float64Array(rows * cols) as unknown as T);
  if (d.length < rows * cols)
    throw new RangeError(`matrix ${rows}×${cols} needs ${rows * cols} elements, got ${d.length}`);
  return { rows, cols, data: d };
}

function zeros(rows: number, cols: number, precision: Precision = 'f64'): Matrix {
  return {
    rows,
    cols,
    data: precision === 'f32' ? new Float32Array(rows * cols) : new Float64Array(rows * cols),
  };
}

/** Build from nested arrays (tests and small chores). */
export function fromRows(rows: ArrayLike<ArrayLike<number>>, precision: Precision = 'f64'): Matrix {
  const m = rows.length;
  const n = m ? rows[0].length : 0;
  const out = zeros(m, n, precision);
  for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) out.data[i * n + j] = rows[i][j];
  return out;
}

export function transpose(a: Matrix): Matrix {
  const out = {
    rows: a.cols,
    cols: a.rows,
    data: new (a.data.constructor as Float64ArrayConstructor)(a.data.length),
  };
  const { rows: m, cols: n, data } = a;
  const B = 32;
  for (let i0 = 0; i0 < m; i0 += B)
    for (let j0 = 0; j0 < n; j0 += B) {
      const i1 = Math.min(m, i0 + B);
      const j1 = Math.min(n, j0 + B);
      for (let i = i0; i < i1; i++) for (let j = j0; j < j1; j++) out.data[j * m + i] = data[i * n + j];
    }
  return out;
}

/** Truncated SVD A ≈ U·diag(s)·Vᵀ. U is m×k, V is n×k (columns are singular vectors), s is non-increasing. */
export interface SvdResult {
  s: Float64Array;
  U: Matrix;
  V: Matrix;
}
