import { Matrix as MlMatrix, SVD as MlSVD } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { fromRows, jacobiSvd } from '../../src-main/engine/linalg';
import { reference } from '../helpers/fixtures';

// Source: test/fixtures/reference/svd_reference.json — numpy 1.24.2 linalg.svd (LAPACK dgesdd), Debian 12.
const ref = reference('svd_reference.json');

describe('one-sided Jacobi SVD against LAPACK', () => {
  it('int6x4: singular values match dgesdd to 1e-13 relative', () => {
    const c = ref.cases.find((x: any) => x.name === 'int6x4');
    const { s } = jacobiSvd(fromRows(c.matrix));
    c.singular_values_lapack.forEach((v: number, i: number) => {
      expect(Math.abs(s[i] - v) / v).toBeLessThan(1e-13);
    });
  });

  it('agrees with ml-matrix 6.x SVD on a random 30×20 matrix', () => {
    let seed = 7;
    const rnd = () => {
      seed = (seed * 1103515245 + 12345) % 2147483648;
      return seed / 2147483648 - 0.5;
    };
    const rows = Array.from({ length: 30 }, () => Array.from({ length: 20 }, rnd));
    const ours = jacobiSvd(fromRows(rows)).s;
    const theirs = new MlSVD(new MlMatrix(rows)).diagonal;
    theirs.forEach((v, i) => {
      expect(Math.abs(ours[i] - v)).toBeLessThan(1e-12 * theirs[0]);
    });
  });
});
