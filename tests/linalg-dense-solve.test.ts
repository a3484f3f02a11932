import { describe, expect, it } from 'vitest';
import { solveDenseInPlace } from '../src/linalg/dense-solve.ts';

describe('dense Gaussian elimination with partial pivoting (src/linalg/dense-solve.ts)', () => {
  it('solves 2x + y + z = 5, 4x − 6y = −2, −2x + 7y + 2z = 9 to x = (1, 1, 2) (closed form: check by substitution)', () => {
    const a = Float64Array.from([2, 1, 1, 4, -6, 0, -2, 7, 2]);
    const b = Float64Array.from([5, -2, 9]);
    solveDenseInPlace(a, 3, [b], 1);
    for (const [i, v] of [1, 1, 2].entries()) expect(b[i]).toBeCloseTo(v, 14);
  });

  it('needs the row interchange: A = [[0, 1], [1, 0]] has a zero first pivot; X = A⁻¹B = (row 2; row 1) of B for two blocks (closed form)', () => {
    const a = Float64Array.from([0, 1, 1, 0]);
    const b1 = Float64Array.from([1, 2, 3, 4]);
    const b2 = Float64Array.from([-5, 0.5, 7, 11]);
    solveDenseInPlace(a, 2, [b1, b2], 2);
    expect(Array.from(b1)).toEqual([3, 4, 1, 2]);
    expect(Array.from(b2)).toEqual([7, 11, -5, 0.5]);
  });

  it('solves a 4×4 system with several right-hand sides to round-off: A X = B reproduced (residual check, common practice)', () => {
    const n = 4;
    const A = Float64Array.from([1e-3, 2, 3, 4, 5, 6.5, 7, 8, 9, 10, -11, 12, 13, 14, 15, 16.25]);
    const B = Float64Array.from({ length: n * 3 }, (_, i) => Math.sin(i + 1));
    const a = Float64Array.from(A);
    const x = Float64Array.from(B);
    solveDenseInPlace(a, n, [x], 3);
    for (let i = 0; i < n; i++) {
      for (let c = 0; c < 3; c++) {
        let s = 0;
        for (let k = 0; k < n; k++) s += A[i * n + k] * x[k * 3 + c];
        expect(Math.abs(s - B[i * 3 + c])).toBeLessThan(1e-13);
      }
    }
  });
});
