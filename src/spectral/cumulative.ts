/**
 * Cumulative integral F(x_j) = ∫_{x_0}^{x_j} f dx of samples on a uniform grid, for functions that need not be
 * periodic (velocity fields g(ξ) of a correction, which grow linearly for a dilation). Composite interpolatory
 * quadrature: each interval [x_j, x_{j+1}] is integrated exactly for the polynomial of degree STENCIL − 1 through
 * the STENCIL nearest samples (centred inside, shifted to stay on the grid at the ends); error O(h^STENCIL)
 * (Davis & Rabinowitz, Methods of Numerical Integration, 2nd ed. 1984, §2.1–2.2, interpolatory rules).
 */

/** points of each local interpolant: exact for polynomials of degree 9, error O(h¹⁰); measured on ∫sech² = tanh
 *  at 8.5 points per unit width: 3e-9 (8 points: 3e-8) */
export const CUMULATIVE_STENCIL = 10;

/** ∫₀¹ ℓ_i(t) dt for the Lagrange basis on the integer offsets `offsets` (interval [0, 1]) */
function intervalWeights(offsets: readonly number[]): number[] {
  return offsets.map((oi, i) => {
    // coefficients of Π_{m≠i}(t − o_m), lowest power first
    let poly = [1];
    let denom = 1;
    offsets.forEach((om, m) => {
      if (m === i) return;
      const next = new Array<number>(poly.length + 1).fill(0);
      poly.forEach((c, k) => {
        next[k + 1] += c;
        next[k] -= om * c;
      });
      poly = next;
      denom *= oi - om;
    });
    return poly.reduce((s, c, k) => s + c / (k + 1), 0) / denom;
  });
}

/** weights by the offset of the stencil start from the interval's left point: 0, −1, …, −(STENCIL − 2) */
const WEIGHTS: number[][] = Array.from({ length: CUMULATIVE_STENCIL - 1 }, (_, back) =>
  intervalWeights(Array.from({ length: CUMULATIVE_STENCIL }, (_, i) => i - back)));

/**
 * out[j] = ∫_{x_0}^{x_j} f dx on a uniform grid of spacing dx (module doc), then minus out[ref] so that the
 * integral is taken from x_ref. RangeError for fewer than CUMULATIVE_STENCIL points. Allocation-free.
 */
export function cumulativeIntegral(f: ArrayLike<number>, dx: number, out: Float64Array, ref = 0): Float64Array {
  const n = f.length;
  if (n < CUMULATIVE_STENCIL || out.length !== n) throw new RangeError(`cumulative integral: ${n} samples into ${out.length}: need equal lengths ≥ ${CUMULATIVE_STENCIL}`);
  if (!Number.isInteger(ref) || ref < 0 || ref >= n) throw new RangeError(`cumulative integral: reference index ${ref} is not in 0 … ${n - 1}`);
  const half = CUMULATIVE_STENCIL / 2 - 1;
  out[0] = 0;
  for (let j = 0; j < n - 1; j++) {
    const start = Math.min(Math.max(j - half, 0), n - CUMULATIVE_STENCIL);
    const w = WEIGHTS[j - start];
    let s = 0;
    for (let i = 0; i < CUMULATIVE_STENCIL; i++) s += w[i] * f[start + i];
    out[j + 1] = out[j] + s * dx;
  }
  const base = out[ref];
  for (let j = 0; j < n; j++) out[j] -= base;
  return out;
}
