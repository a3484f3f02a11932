/**
 * Vector-valued Chebyshev interpolation on an interval [a, b]: samples f(t_i) ∈ ℝ^N at the Chebyshev–Lobatto
 * points t_i = m + h cos(πi/n), i = 0 … n (m = (a + b)/2, h = (b − a)/2), the coefficients of
 * f(t) = Σ_{k=0}^{n} c_k T_k((t − m)/h) by the discrete cosine transform (type I, direct sums), derivatives by the
 * coefficient recurrence c′_{k−1} = c′_{k+1} + 2k c_k, evaluation by Clenshaw's recurrence, and the integral over
 * [a, b] from ∫T_k = 2/(1 − k²) (k even). Trefethen, Approximation Theory and Approximation Practice (SIAM 2013),
 * ch. 2–3 and 19; Clenshaw, Math. Tables Aids Comput. 9, 118 (1955). The Lobatto points of n are the even-indexed
 * points of 2n, so a doubling reuses every sample.
 */

/** the Chebyshev–Lobatto points of degree n on [a, b] (t_0 = b, t_n = a) */
export function chebyshevPoints(a: number, b: number, n: number): number[] {
  if (!Number.isInteger(n) || n < 1) throw new RangeError(`chebyshev: degree ${n} must be an integer ≥ 1`);
  if (!(b > a)) throw new RangeError(`chebyshev: interval [${a}, ${b}] must have b > a`);
  const m = 0.5 * (a + b), h = 0.5 * (b - a);
  return Array.from({ length: n + 1 }, (_, i) => (i === 0 ? b : i === n ? a : m + h * Math.cos((Math.PI * i) / n)));
}

export class ChebyshevSeries {
  readonly a: number;
  readonly b: number;
  /** c_k as vectors of length `size`, k = 0 … degree */
  readonly coefficients: Float64Array[];
  readonly size: number;
  private constructor(a: number, b: number, coefficients: Float64Array[]) {
    this.a = a;
    this.b = b;
    this.coefficients = coefficients;
    this.size = coefficients[0].length;
  }
  get degree(): number {
    return this.coefficients.length - 1;
  }

  /** the interpolant through samples at chebyshevPoints(a, b, n), n = samples.length − 1 */
  static fromSamples(a: number, b: number, samples: readonly Float64Array[]): ChebyshevSeries {
    const n = samples.length - 1;
    if (n < 1) throw new RangeError(`chebyshev: ${samples.length} samples, need at least 2`);
    const size = samples[0].length;
    const coefficients = Array.from({ length: n + 1 }, () => new Float64Array(size));
    for (let k = 0; k <= n; k++) {
      const c = coefficients[k];
      for (let i = 0; i <= n; i++) {
        const wt = (i === 0 || i === n ? 0.5 : 1) * Math.cos((Math.PI * i * k) / n) * (k === 0 || k === n ? 1 / n : 2 / n);
        const f = samples[i];
        for (let j = 0; j < size; j++) c[j] += wt * f[j];
      }
    }
    return new ChebyshevSeries(a, b, coefficients);
  }

  /** the series of d/dt (coefficient recurrence, module doc) */
  derivative(): ChebyshevSeries {
    const n = this.degree;
    const size = this.size;
    const scale = 2 / (this.b - this.a);
    const d = Array.from({ length: Math.max(n, 1) }, () => new Float64Array(size));
    for (let k = n; k >= 1; k--) {
      const ck = this.coefficients[k];
      const out = d[k - 1];
      const next = k + 1 <= n - 1 ? d[k + 1] : null;
      for (let j = 0; j < size; j++) out[j] = (next ? next[j] : 0) + 2 * k * ck[j];
    }
    for (let j = 0; j < size; j++) d[0][j] *= 0.5;
    for (const c of d) for (let j = 0; j < size; j++) c[j] *= scale;
    return new ChebyshevSeries(this.a, this.b, d);
  }

  /** f(t) into out by Clenshaw's recurrence (t clamped to [a, b]); b1, b2 are scratch vectors of the same size */
  evaluate(t: number, out: Float64Array, b1: Float64Array, b2: Float64Array): Float64Array {
    const x = Math.min(1, Math.max(-1, (2 * t - this.a - this.b) / (this.b - this.a)));
    const n = this.degree;
    b1.fill(0);
    b2.fill(0);
    for (let k = n; k >= 1; k--) {
      const c = this.coefficients[k];
      for (let j = 0; j < this.size; j++) {
        const v = 2 * x * b1[j] - b2[j] + c[j];
        b2[j] = b1[j];
        b1[j] = v;
      }
    }
    const c0 = this.coefficients[0];
    for (let j = 0; j < this.size; j++) out[j] = x * b1[j] - b2[j] + c0[j];
    return out;
  }

  /** max over components of |c_k| for the last `count` coefficients: the truncation tail */
  tail(count = 2): number {
    let m = 0;
    for (let k = Math.max(0, this.degree - count + 1); k <= this.degree; k++) {
      for (const v of this.coefficients[k]) m = Math.max(m, Math.abs(v));
    }
    return m;
  }
}

/** ∫_a^b of the scalar Chebyshev interpolant through samples at chebyshevPoints(a, b, n) (Clenshaw–Curtis) */
export function chebyshevIntegral(a: number, b: number, samples: readonly number[]): number {
  const series = ChebyshevSeries.fromSamples(a, b, samples.map((v) => Float64Array.of(v)));
  let s = 0;
  series.coefficients.forEach((c, k) => {
    if (k % 2 === 0) s += (c[0] * 2) / (1 - k * k);
  });
  return 0.5 * (b - a) * s;
}

/** degree of each piece of a PiecewiseChebyshev (common practice: low enough that a piece costs an eighth of a
 *  degree-256 series, high enough that few pieces are needed for a smooth function) */
export const PIECE_DEGREE = 24;
/** deepest bisection of a piece before the piecewise form gives up (the global series is used instead) */
const PIECE_MAX_DEPTH = 8;

/**
 * A vector-valued series re-expanded on pieces of [a, b], each the degree-d interpolant through the series' values at
 * the piece's Lobatto points, bisected until the piece's tail (two last coefficients, as ChebyshevSeries.tail) is ≤
 * tol. Evaluation costs O(d·size) instead of O(n·size) (Trefethen 2013, ch. 8: a smooth function restricted to a
 * shorter interval needs a lower degree). `of` returns null when some piece does not converge.
 */
export class PiecewiseChebyshev {
  private constructor(private readonly breaks: number[], private readonly pieces: ChebyshevSeries[]) {}
  static of(series: ChebyshevSeries, tol: number, degree = PIECE_DEGREE): PiecewiseChebyshev | null {
    const size = series.size;
    const b1 = new Float64Array(size), b2 = new Float64Array(size);
    const breaks: number[] = [];
    const pieces: ChebyshevSeries[] = [];
    const build = (lo: number, hi: number, depth: number): boolean => {
      const samples = chebyshevPoints(lo, hi, degree).map((t) => series.evaluate(t, new Float64Array(size), b1, b2));
      const piece = ChebyshevSeries.fromSamples(lo, hi, samples);
      if (piece.tail() <= tol) {
        breaks.push(lo);
        pieces.push(piece);
        return true;
      }
      if (depth >= PIECE_MAX_DEPTH) return false;
      const mid = 0.5 * (lo + hi);
      return build(lo, mid, depth + 1) && build(mid, hi, depth + 1);
    };
    // start from as many pieces as the degree ratio suggests
    const start = Math.max(1, Math.ceil(series.degree / degree));
    for (let i = 0; i < start; i++) {
      const lo = series.a + ((series.b - series.a) * i) / start;
      const hi = i === start - 1 ? series.b : series.a + ((series.b - series.a) * (i + 1)) / start;
      if (!build(lo, hi, 0)) return null;
    }
    return new PiecewiseChebyshev(breaks, pieces);
  }
  get count(): number {
    return this.pieces.length;
  }
  /** f(t) into out (t clamped to [a, b]); b1, b2 scratch of the series' size */
  evaluate(t: number, out: Float64Array, b1: Float64Array, b2: Float64Array): Float64Array {
    const br = this.breaks;
    let lo = 0, hi = br.length - 1;
    while (lo < hi) {
      const mid = (lo + hi + 1) >> 1;
      if (br[mid] <= t) lo = mid;
      else hi = mid - 1;
    }
    return this.pieces[lo].evaluate(t, out, b1, b2);
  }
}
