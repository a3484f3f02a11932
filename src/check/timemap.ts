/**
 * Lab time → KdV time: the monotone map τ(t) through fitted frame values (t_k, τ_k) (physics.md §9), and its
 * derivative λ̇(t) = dτ/dt, the rate the cubic counterdiabatic correction is scaled by (physics.md §3).
 *
 * Piecewise cubic Hermite interpolation with the monotonicity-preserving slopes of F. N. Fritsch and
 * R. E. Carlson, Monotone piecewise cubic interpolation, SIAM J. Numer. Anal. 17, 238 (1980):
 *  - initial slopes: the derivative of the parabola through three neighbouring points (interior), the
 *    one-sided three-point parabola at the ends (set to 0 when its sign differs from the first secant, as in
 *    C. Moler, Numerical Computing with MATLAB, SIAM 2004, §3.4);
 *  - a zero secant δ_k forces m_k = m_{k+1} = 0 (Fritsch & Carlson, step 3);
 *  - otherwise α = m_k/δ_k, β = m_{k+1}/δ_k are scaled back onto the circle α² + β² = 9 when outside it, a
 *    sufficient condition for a monotone cubic (Fritsch & Carlson, region S₂ of Fig. 2).
 * On a linear τ(t) the interpolant is exact; its derivative is first order in the frame spacing only where the
 * limiter acts, second order elsewhere.
 */
import { intervalIndex } from '../spectral/ops.ts';

/** Fritsch–Carlson monotonicity radius: α² + β² ≤ 9 */
const FC_RADIUS2 = 9;

export interface TimeMap {
  readonly times: readonly number[];
  readonly taus: readonly number[];
  /** Hermite slopes dτ/dt at the knots */
  readonly slopes: Float64Array;
  /** τ(t) for t in [t_0, t_last] */
  tau(t: number): number;
  /** λ̇(t) = dτ/dt for t in [t_0, t_last] */
  rate(t: number): number;
}

/** Fritsch–Carlson slopes for nondecreasing data (see the module comment) */
function monotoneSlopes(t: readonly number[], y: readonly number[]): Float64Array {
  const n = t.length;
  const h = Array.from({ length: n - 1 }, (_, i) => t[i + 1] - t[i]);
  const d = Array.from({ length: n - 1 }, (_, i) => (y[i + 1] - y[i]) / h[i]);
  const m = new Float64Array(n);
  if (n === 2) {
    m[0] = d[0];
    m[1] = d[0];
    return m;
  }
  for (let i = 1; i < n - 1; i++) m[i] = (h[i] * d[i - 1] + h[i - 1] * d[i]) / (h[i - 1] + h[i]);
  const end = (h0: number, h1: number, d0: number, d1: number) => {
    const s = ((2 * h0 + h1) * d0 - h0 * d1) / (h0 + h1);
    return Math.sign(s) !== Math.sign(d0) ? 0 : s;
  };
  m[0] = end(h[0], h[1], d[0], d[1]);
  m[n - 1] = end(h[n - 2], h[n - 3], d[n - 2], d[n - 3]);
  for (let i = 0; i < n - 1; i++) {
    if (d[i] === 0) {
      m[i] = 0;
      m[i + 1] = 0;
      continue;
    }
    const a = m[i] / d[i];
    const b = m[i + 1] / d[i];
    const r2 = a * a + b * b;
    if (r2 > FC_RADIUS2) {
      const s = 3 / Math.sqrt(r2);
      m[i] = s * a * d[i];
      m[i + 1] = s * b * d[i];
    }
  }
  return m;
}

/**
 * τ(t) through the frames' lab times t_k (strictly increasing, any unit, e.g. ms) and fitted τ_k
 * (nondecreasing). Throws RangeError for fewer than two knots, non-increasing times or decreasing τ.
 */
export function monotoneTimeMap(times: readonly number[], taus: readonly number[]): TimeMap {
  const n = times.length;
  if (n < 2 || taus.length !== n) throw new RangeError(`time map: need at least two (t, τ) pairs of equal length, got ${n} times and ${taus.length} τ values`);
  for (let i = 0; i + 1 < n; i++) {
    if (!(times[i + 1] > times[i])) throw new RangeError(`time map: frame times must increase strictly, t[${i}] = ${times[i]}, t[${i + 1}] = ${times[i + 1]}`);
    if (!(taus[i + 1] >= taus[i])) throw new RangeError(`time map: τ must not decrease, τ[${i}] = ${taus[i]}, τ[${i + 1}] = ${taus[i + 1]}`);
  }
  const slopes = monotoneSlopes(times, taus);
  const locate = (t: number): number => {
    if (!(t >= times[0] && t <= times[n - 1])) throw new RangeError(`time map: t = ${t} is outside [${times[0]}, ${times[n - 1]}]`);
    return intervalIndex(times, t);
  };
  return {
    times: [...times],
    taus: [...taus],
    slopes,
    tau(t: number): number {
      const i = locate(t);
      const h = times[i + 1] - times[i];
      const s = (t - times[i]) / h;
      const s2 = s * s, s3 = s2 * s;
      return (2 * s3 - 3 * s2 + 1) * taus[i] + (s3 - 2 * s2 + s) * h * slopes[i] + (-2 * s3 + 3 * s2) * taus[i + 1] + (s3 - s2) * h * slopes[i + 1];
    },
    rate(t: number): number {
      const i = locate(t);
      const h = times[i + 1] - times[i];
      const s = (t - times[i]) / h;
      const s2 = s * s;
      return ((6 * s2 - 6 * s) * (taus[i] - taus[i + 1])) / h + (3 * s2 - 4 * s + 1) * slopes[i] + (3 * s2 - 2 * s) * slopes[i + 1];
    },
  };
}
