/**
 * Lowest M eigenpairs of the real symmetric grid Hamiltonian H = k² + u(ξ) (natural units, physics.md §3).
 *
 * method 'lanczos' (default): Lanczos with the FFT matrix-vector product (Lanczos 1950; Golub & Van Loan,
 *   Matrix Computations, 4th ed. 2013, §10.1), full reorthogonalisation against the basis and against all
 *   locked vectors, and restarts from fresh random start vectors orthogonal to the locked ones (a fixed rng start
 *   value makes it reproducible). For N ≥ 128 the Lanczos operator is a Chebyshev filter p(H) (same eigenvectors,
 *   lowest levels mapped to the largest, well separated values; plain Lanczos needed ~N steps for the low
 *   continuum, whose gaps (2π/L)² are tiny against ‖H‖ ≈ k_max²). Measured (−6sech²ξ, L = 60, 12 levels):
 *   N = 256 0.16 s, 512 0.6 s, 1024 1.8 s; plain Lanczos 5.4 s at 512 and failed at 1024 within 400 steps. A single Krylov sequence holds only one vector of each exactly degenerate
 *   eigenspace, so the ±k continuum pairs of the periodic box are found across restarts: the loop ends only when a
 *   fresh run finds nothing new below the M-th level. Every locked vector passes ‖Hv − θv‖ ≤ residualTol.
 * method 'dense': the N×N matrix (circulant kinetic kernel + diagonal u) diagonalised by ml-matrix
 *   (Householder tridiagonalisation + QL, the EISPACK tred2/tql2 route). O(N³): ≈0.8 s at N = 512, ≈6 s at 1024.
 *
 * Eigenvectors are real, unit 2-norm (Σ_j v_j² = 1, no dx weight).
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { NumericalError } from '../core/errors.ts';
import { makeRng } from '../core/rng.ts';
import { FourierMultiplier } from '../spectral/real-operators.ts';
import { makeGrid, type Grid } from '../spectral/grid.ts';
import { resample, spectrum } from '../spectral/ops.ts';
import { sortedOrder, tridiagEigen } from '../linalg/tridiag.ts';
import { symmetricLowest } from '../linalg/symmetric-lowest.ts';

/** residual tolerance relative to ‖H‖ (~1e-10·‖H‖: well below the fidelity budgets of verify) */
const RESIDUAL_REL = 1e-10;
/** Lanczos dimension cap per run */
export const MAX_KRYLOV_DEFAULT = 400;
/** Ritz extraction is attempted at these fractions of growth (geometric checkpoints keep the QL cost low) */
const CHECK_GROWTH = 1.35;
/** restarts allowed before giving up */
const MAX_RESTARTS = 200;
/** default rng start value (any fixed value; common practice) */
const RNG_START_DEFAULT = 20260101;

/** 'lanczos': Chebyshev-filtered Lanczos (few levels); 'householder': dense tridiagonalisation for many levels
 *  (linalg/symmetric-lowest.ts); 'dense': ml-matrix's full eigendecomposition (a reference for small grids) */
export type EigenMethod = 'lanczos' | 'dense' | 'householder';

export interface EigenResult {
  method: EigenMethod;
  detail: string;
  energies: number[];
  /** real unit vectors, length N */
  vectors: Float64Array[];
  /** ‖Hv − θv‖₂ per vector */
  residuals: number[];
  /** bound used for ‖H‖: k_max² + max|u| */
  normH: number;
  residualTol: number;
  matvecs: number;
  restarts: number;
  wallMs: number;
}

export interface EigenOptions {
  method?: EigenMethod;
  rngStart?: number;
  /** absolute residual tolerance; default 1e-10·‖H‖ */
  residualTol?: number;
  maxKrylov?: number;
  /** Chebyshev filter degree (0 = plain Lanczos); default ≈1.5·k_max for N ≥ 128 */
  filterDegree?: number;
}


/** real symmetric H = k² + u applied with the real FFT; allocation-free after construction */
export class RealHamiltonian {
  readonly n: number;
  readonly normH: number;
  matvecs = 0;
  private readonly kinetic: FourierMultiplier;
  private readonly u: Float64Array;
  constructor(grid: Grid, u: Float64Array) {
    this.n = grid.n;
    this.kinetic = new FourierMultiplier(grid, (k) => k * k);
    this.u = u;
    let umax = 0;
    for (let j = 0; j < u.length; j++) umax = Math.max(umax, Math.abs(u[j]));
    this.normH = grid.kMax * grid.kMax + umax;
  }
  apply(x: Float64Array, y: Float64Array): void {
    this.matvecs++;
    this.kinetic.apply(x, y);
    const u = this.u;
    for (let j = 0; j < this.n; j++) y[j] += u[j] * x[j];
  }
}

function dot(a: Float64Array, b: Float64Array): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i] * b[i];
  return s;
}

/** ‖Hv − θv‖₂ from Hv already applied */
function residualOf(hv: Float64Array, v: Float64Array, theta: number): number {
  let s = 0;
  for (let i = 0; i < v.length; i++) {
    const r = hv[i] - theta * v[i];
    s += r * r;
  }
  return Math.sqrt(s);
}

function residual(h: RealHamiltonian, v: Float64Array, theta: number, scratch: Float64Array): number {
  h.apply(v, scratch);
  return residualOf(scratch, v, theta);
}

function checkArgs(grid: Grid, u: Float64Array, count: number): void {
  if (u.length !== grid.n) throw new RangeError(`eigen: potential length ${u.length} must equal grid points ${grid.n}`);
  if (!Number.isInteger(count) || count < 1 || count > grid.n) throw new RangeError(`eigen: states ${count} must be an integer in 1 … ${grid.n}`);
}

/** the first column of the circulant kinetic matrix: c = IDFT(k²), c_d = (1/N) Σ_m k_m² cos(2πmd/N) */
function kineticColumn(grid: Grid): Float64Array {
  const n = grid.n;
  const c = new Float64Array(n);
  for (let d = 0; d < n; d++) {
    let s = 0;
    for (let m = 0; m < n; m++) s += grid.k[m] * grid.k[m] * Math.cos((2 * Math.PI * m * d) / n);
    c[d] = s / n;
  }
  return c;
}

/** dense N×N matrix of k² + u in the position basis: H_jl = c[(j−l) mod N] + u_j δ_jl, c = IDFT(k²) */
export function denseHamiltonian(grid: Grid, u: Float64Array): Matrix {
  const n = grid.n;
  const c = kineticColumn(grid);
  const a = new Matrix(n, n);
  for (let j = 0; j < n; j++) for (let l = 0; l < n; l++) a.set(j, l, c[(j - l + n) % n] + (j === l ? u[j] : 0));
  return a;
}

/** Fourier amplitudes at or below this fraction of the largest count as absent (a few hundred ulps above the
 *  round-off floor of an FFT; common practice) */
const COARSE_TAIL_REL = 1e-13;

/** the highest mode index m (0 … N/2) of u whose amplitude exceeds COARSE_TAIL_REL of the largest (the band limit of u) */
function bandLimit(v: Float64Array): number {
  const s = spectrum(v);
  let peak = 0;
  for (let m = 0; m <= v.length / 2; m++) peak = Math.max(peak, Math.hypot(s[2 * m], s[2 * m + 1]));
  for (let m = v.length / 2; m > 0; m--) if (Math.hypot(s[2 * m], s[2 * m + 1]) > COARSE_TAIL_REL * peak) return m;
  return 0;
}

/** the dense symmetric matrix of k² + u on a grid (lower triangle, row-major), its lowest `count` pairs */
function householderOn(grid: Grid, u: Float64Array, count: number): { values: Float64Array; vectors: Float64Array[] } {
  const n = grid.n;
  const c = kineticColumn(grid);
  const a = new Float64Array(n * n);
  for (let j = 0; j < n; j++) {
    const row = j * n;
    for (let l = 0; l <= j; l++) a[row + l] = c[j - l];
    a[row + j] += u[j];
  }
  return symmetricLowest(a, n, count);
}

/** a lifted coarse pair must have an N-point residual this small relative to ‖H‖: as good as the N-point solve
 *  itself (measured 1e-14 … 1e-13·‖H‖), a hundredth of RESIDUAL_REL */
const COARSE_RESIDUAL_REL = 1e-12;

/**
 * The lowest `count` pairs from the coarse grid of M = N/2^j points, or null when it does not hold them exactly.
 * When u·v has no content beyond the coarse Nyquist mode, the M-point collocation is the restriction of the N-point
 * H to the lowest modes (no aliasing: Boyd, Chebyshev and Fourier Spectral Methods, 2nd ed. 2001, §11.4) and its
 * eigenvectors zero-padded in Fourier space (ops.ts resample) are N-point eigenvectors. What aliasing leaves out is
 * exactly the N-point residual of a lifted pair, which decides: each must pass ‖Hv − θv‖ ≤ COARSE_RESIDUAL_REL·‖H‖
 * (a cheap gate first: amplitudes in the coarse grid's two top modes ≤ COARSE_TAIL_REL); energies are the N-point
 * Rayleigh quotients, in ascending order.
 */
function coarseLowest(grid: Grid, u: Float64Array, count: number, points: number, h: RealHamiltonian, tol: number): { energies: number[]; vectors: Float64Array[]; residuals: number[] } | null {
  const stride = grid.n / points;
  const coarse = makeGrid(grid.length, points);
  const uc = new Float64Array(points);
  for (let j = 0; j < points; j++) uc[j] = u[j * stride];
  const { vectors: vc } = householderOn(coarse, uc, count);
  // the two top modes (the Nyquist one alone can vanish by symmetry)
  if (vc.some((v) => bandLimit(v) >= points / 2 - 1)) return null;
  const scale = Math.sqrt(points / grid.n);
  const hv = new Float64Array(grid.n);
  const energies: number[] = [];
  const vectors: Float64Array[] = [];
  const residuals: number[] = [];
  for (const v of vc) {
    const w = resample(v, grid.n);
    for (let j = 0; j < w.length; j++) w[j] *= scale;
    h.apply(w, hv);
    const theta = dot(w, hv) / dot(w, w);
    const r = residualOf(hv, w, theta);
    if (!(r <= Math.min(tol, COARSE_RESIDUAL_REL * h.normH))) return null;
    energies.push(theta);
    vectors.push(w);
    residuals.push(r);
  }
  // the N-point Rayleigh quotients can swap a pair closer than the residual: ascending order, as every solver returns
  const order = energies.map((_, i) => i).sort((a, b) => energies[a] - energies[b]);
  return { energies: order.map((i) => energies[i]), vectors: order.map((i) => vectors[i]), residuals: order.map((i) => residuals[i]) };
}

/** the first coarse grid householderLowest tries: the fewest points N/2^j with M/2 ≥ q_u + count/2 (room for u's band
 *  q_u and the levels' own modes) */
function coarsestPoints(n: number, uBand: number, count: number): number {
  let points = n;
  while (points / 4 >= 2 && points / 4 >= uBand + count / 2) points /= 2;
  return points;
}

/** the grid on which the dense solve of `count` levels of k² + u is expected to run (householderLowest; for cost
 *  estimates: a coarse attempt can still fail and fall back to all N points) */
export function densePointsFor(u: ArrayLike<number>, count: number): number {
  return coarsestPoints(u.length, bandLimit(Float64Array.from(u)), count);
}

/**
 * The lowest levels by Householder tridiagonalisation of the dense matrix (linalg/symmetric-lowest.ts), on the
 * coarsest grid M = N/2^j that holds them exactly (coarseLowest; O(M³) instead of O(N³)), else on the N-point grid.
 */
function householderLowest(grid: Grid, u: Float64Array, count: number, residualTol: number | undefined): EigenResult {
  const t0 = performance.now();
  const n = grid.n;
  const h = new RealHamiltonian(grid, u);
  const tol = residualTol ?? RESIDUAL_REL * h.normH;
  const uBand = bandLimit(u);
  for (let points = coarsestPoints(n, uBand, count); points < n; points *= 2) {
    const found = coarseLowest(grid, u, count, points, h, tol);
    if (found !== null) {
      return {
        method: 'householder', detail: `Householder tridiagonalisation of the dense matrix on the ${points}-point grid that holds the levels exactly (u band-limited to mode ${uBand}), Sturm bisection and inverse iteration, back-transformation, Fourier interpolation to ${n} points`,
        ...found, normH: h.normH, residualTol: tol, matvecs: h.matvecs, restarts: 0, wallMs: performance.now() - t0,
      };
    }
  }
  const { values, vectors } = householderOn(grid, u, count);
  const scratch = new Float64Array(n);
  const residuals = vectors.map((v, i) => residual(h, v, values[i], scratch));
  return {
    method: 'householder', detail: 'Householder tridiagonalisation of the dense N×N matrix, Sturm bisection and inverse iteration, back-transformation',
    energies: Array.from(values), vectors, residuals, normH: h.normH, residualTol: tol, matvecs: h.matvecs, restarts: 0,
    wallMs: performance.now() - t0,
  };
}

function denseLowest(grid: Grid, u: Float64Array, count: number, residualTol: number | undefined): EigenResult {
  const t0 = performance.now();
  const a = denseHamiltonian(grid, u);
  const evd = new EigenvalueDecomposition(a, { assumeSymmetric: true });
  const vals = evd.realEigenvalues;
  const vecs = evd.eigenvectorMatrix;
  const order = vals.map((_, i) => i).sort((p, q) => vals[p] - vals[q]);
  const h = new RealHamiltonian(grid, u);
  const scratch = new Float64Array(grid.n);
  const energies: number[] = [];
  const vectors: Float64Array[] = [];
  const residuals: number[] = [];
  for (let i = 0; i < count; i++) {
    const col = order[i];
    const v = new Float64Array(grid.n);
    for (let j = 0; j < grid.n; j++) v[j] = vecs.get(j, col);
    const nv = Math.sqrt(dot(v, v));
    for (let j = 0; j < grid.n; j++) v[j] /= nv;
    energies.push(vals[col]);
    vectors.push(v);
    residuals.push(residual(h, v, vals[col], scratch));
  }
  return {
    method: 'dense', detail: 'ml-matrix EigenvalueDecomposition of the dense N×N matrix', energies, vectors, residuals, normH: h.normH, residualTol: residualTol ?? RESIDUAL_REL * h.normH,
    matvecs: h.matvecs, restarts: 0, wallMs: performance.now() - t0,
  };
}

/** orthogonalise x against the vectors in `against` (two passes of classical Gram–Schmidt) */
function project(x: Float64Array, against: Float64Array[], count: number): void {
  for (let pass = 0; pass < 2; pass++) {
    for (let l = 0; l < count; l++) {
      const q = against[l];
      const s = dot(q, x);
      for (let i = 0; i < x.length; i++) x[i] -= s * q[i];
    }
  }
}

/**
 * Chebyshev filter p(H) = T_d((H − c)/e) with e < 0, [c − |e|, c + |e|] = [E_cut, E_max]: |p| ≤ 1 on the damped interval and
 * p grows monotonically below E_cut, so the lowest levels of H become the largest, well separated levels of p(H)
 * (Zhou & Saad, J. Comput. Phys. 219, 172, 2006, Chebyshev-filtered subspace iteration). Same eigenvectors.
 */
class ChebyshevFilter {
  private readonly a: Float64Array;
  private readonly b: Float64Array;
  private readonly t: Float64Array;
  constructor(private readonly h: RealHamiltonian, private readonly degree: number, private readonly c: number, private readonly e: number) {
    this.a = new Float64Array(h.n);
    this.b = new Float64Array(h.n);
    this.t = new Float64Array(h.n);
  }
  apply(x: Float64Array, y: Float64Array): void {
    const { h, c, e, degree } = this;
    let prev = this.a;
    let cur = this.b;
    const t = this.t;
    prev.set(x);
    h.apply(x, t);
    for (let i = 0; i < x.length; i++) cur[i] = (t[i] - c * x[i]) / e;
    for (let k = 2; k <= degree; k++) {
      h.apply(cur, t);
      for (let i = 0; i < x.length; i++) prev[i] = (2 * (t[i] - c * cur[i])) / e - prev[i];
      const sw = prev;
      prev = cur;
      cur = sw;
    }
    y.set(degree === 0 ? x : cur);
  }
}

/** Chebyshev filter degree ∝ k_max = sqrt(E_max) (the filter's separation grows like d·sqrt(gap/E_max)); tuned by hand */
const FILTER_DEGREE_PER_K = 1.5;
const FILTER_DEGREE_MIN = 20;
const FILTER_DEGREE_MAX = 120;
const FILTER_MIN_N = 128;
/** plain Lanczos steps used to place the filter cut E_cut (Ritz values bound the levels from above) */
const CUT_PROBE_STEPS = 60;
/** convergence estimate for the filtered operator, relative to its largest Ritz value (the true H residual is checked after) */
const FILTER_REL_TOL = 1e-12;

interface RitzRun {
  /** Lanczos dimension reached */
  m: number;
  /** Ritz indices, wanted end first */
  order: number[];
  /** leading Ritz pairs whose estimate met the tolerance */
  conv: number;
  breakdown: boolean;
}

/**
 * Lanczos with full reorthogonalisation, locking and fresh random restarts (module comment); the state of one solve.
 * `run` is one Lanczos sequence, `lock` keeps its converged Ritz pairs, `solve` restarts until nothing new appears
 * below the count-th level.
 */
class LanczosSolver {
  readonly h: RealHamiltonian;
  readonly tolRes: number;
  private readonly n: number;
  private readonly rng: () => number;
  private readonly maxK: number;
  private readonly degree: number;
  readonly lockedV: Float64Array[] = [];
  readonly lockedE: number[] = [];
  private readonly q: Float64Array[];
  private readonly r: Float64Array;
  readonly scratch: Float64Array;
  private readonly alpha: Float64Array;
  private readonly beta: Float64Array;
  private readonly d: Float64Array;
  private readonly e: Float64Array;
  private z = new Float64Array(0);
  private op: (x: Float64Array, y: Float64Array) => void;
  filterInfo = 'none';

  constructor(grid: Grid, u: Float64Array, private readonly count: number, opts: EigenOptions) {
    const n = grid.n;
    this.n = n;
    this.h = new RealHamiltonian(grid, u);
    this.tolRes = opts.residualTol ?? RESIDUAL_REL * this.h.normH;
    this.rng = makeRng(opts.rngStart ?? RNG_START_DEFAULT);
    const maxK = Math.min(n, opts.maxKrylov ?? MAX_KRYLOV_DEFAULT);
    this.maxK = maxK;
    this.q = Array.from({ length: maxK + 1 }, () => new Float64Array(n));
    this.r = new Float64Array(n);
    this.scratch = new Float64Array(n);
    this.alpha = new Float64Array(maxK + 1);
    this.beta = new Float64Array(maxK + 1);
    this.d = new Float64Array(maxK + 1);
    this.e = new Float64Array(maxK + 1);
    this.degree = opts.filterDegree ?? (n >= FILTER_MIN_N ? Math.min(FILTER_DEGREE_MAX, Math.max(FILTER_DEGREE_MIN, Math.ceil(FILTER_DEGREE_PER_K * grid.kMax))) : 0);
    const h = this.h;
    this.op = (x, y) => h.apply(x, y);
  }

  /** q₀ = a fresh random unit vector orthogonal to the locked ones */
  private randomStart(): void {
    const { n, rng } = this;
    const q0 = this.q[0];
    for (let i = 0; i < n; i++) q0[i] = rng() - 0.5;
    project(q0, this.lockedV, this.lockedV.length);
    const nq = Math.sqrt(dot(q0, q0));
    for (let i = 0; i < n; i++) q0[i] /= nq;
  }

  /** Lanczos run from a fresh random start; returns Ritz data of the current operator */
  run(dim: number, stopWhenConverged: number, tolOp: number): RitzRun {
    const { n, q, r, alpha, beta } = this;
    this.randomStart();
    let m = 0;
    let nextCheck = Math.min(dim, Math.max(16, 2 * stopWhenConverged));
    for (let j = 0; j < dim; j++) {
      this.op(q[j], r);
      alpha[j] = dot(q[j], r);
      project(r, this.lockedV, this.lockedV.length);
      project(r, q, j + 1);
      const b = Math.sqrt(dot(r, r));
      beta[j] = b;
      m = j + 1;
      const breakdown = b <= 1e-13 * Math.max(1, Math.abs(alpha[0]));
      if (!breakdown) for (let i = 0; i < n; i++) q[j + 1][i] = r[i] / b;
      if (m === nextCheck || m === dim || breakdown) {
        nextCheck = Math.min(dim, Math.ceil(m * CHECK_GROWTH));
        const { order, conv } = this.ritz(m, b, breakdown, stopWhenConverged, tolOp);
        if (breakdown || m === dim || conv >= stopWhenConverged) return { m, order, conv, breakdown };
      }
    }
    return { m, order: [], conv: 0, breakdown: false };
  }

  /** Ritz values (in d) and vectors (in z) of the m×m tridiagonal matrix; leading pairs meeting tolOp */
  private ritz(m: number, b: number, breakdown: boolean, stopWhenConverged: number, tolOp: number): { order: number[]; conv: number } {
    const { d, e, alpha, beta } = this;
    if (this.z.length < m * m) this.z = new Float64Array(m * m);
    const z = this.z;
    for (let i = 0; i < m; i++) {
      d[i] = alpha[i];
      e[i] = i < m - 1 ? beta[i] : 0;
    }
    tridiagEigen(d, e, m, z);
    // wanted end: lowest of H, i.e. largest of the filter
    const order = sortedOrder(d, m);
    if (this.degree > 0) order.reverse();
    let conv = 0;
    while (conv < order.length && conv < stopWhenConverged) {
      const est = breakdown ? 0 : b * Math.abs(z[(m - 1) * m + order[conv]]);
      if (est > tolOp * (this.degree > 0 ? Math.abs(d[order[0]]) : 1)) break;
      conv++;
    }
    return { order, conv };
  }

  /** unit Ritz vector i of the last run, orthogonal to the locked vectors */
  ritzVector(m: number, i: number): Float64Array {
    const { n, q, z } = this;
    const y = new Float64Array(n);
    for (let l = 0; l < m; l++) {
      const zl = z[l * m + i];
      const ql = q[l];
      for (let t = 0; t < n; t++) y[t] += zl * ql[t];
    }
    project(y, this.lockedV, this.lockedV.length);
    const nq = Math.sqrt(dot(y, y));
    for (let t = 0; t < n; t++) y[t] /= nq;
    return y;
  }

  /** switch the operator to the Chebyshev filter, with the cut placed by a short plain run */
  placeFilter(): void {
    const { degree, count, n, h } = this;
    if (degree <= 0) return;
    // the (count+2)-th Ritz value of a short plain run bounds λ_{count+2} from above
    const probe = this.run(Math.min(CUT_PROBE_STEPS, n), n + 1, 0);
    // ascending whatever end `ritz` puts first
    const sortedRitz = probe.order.map((i) => this.d[i]).sort((p, q) => p - q);
    const eCut = sortedRitz[Math.min(count + 1, sortedRitz.length - 1)];
    const eMax = h.normH;
    const c = 0.5 * (eCut + eMax);
    const half = 0.5 * (eMax - eCut);
    // argument (c − H)/half > 1 below the cut, so p(H) is large and positive there for every degree
    const f = new ChebyshevFilter(h, degree, c, -half);
    this.op = (x, y) => f.apply(x, y);
    this.filterInfo = `chebyshev(d=${degree}, cut=${eCut.toPrecision(6)})`;
  }

  /** the count-th locked level (∞ while fewer are locked) */
  private levelCount(): number {
    return this.lockedV.length >= this.count ? [...this.lockedE].sort((p, qq) => p - qq)[this.count - 1] : Infinity;
  }

  /** lock the converged Ritz pairs of a run that pass the true residual test; true if one lies at or below the count-th level */
  private lock(res: RitzRun): boolean {
    const { h, scratch, tolRes } = this;
    const eM = this.levelCount();
    let newBelow = false;
    for (let c = 0; c < res.conv; c++) {
      const y = this.ritzVector(res.m, res.order[c]);
      h.apply(y, scratch);
      const theta = dot(y, scratch);
      const rr = residual(h, y, theta, scratch);
      if (rr <= tolRes) {
        this.lockedV.push(y);
        this.lockedE.push(theta);
        if (theta <= eM + tolRes) newBelow = true;
      }
    }
    return newBelow;
  }

  /** Rayleigh quotient of the best unconverged direction of the run (∞ if none) */
  private lowestLeft(res: RitzRun): number {
    if (res.order.length <= res.conv) return Infinity;
    const y = this.ritzVector(res.m, res.order[res.conv]);
    this.h.apply(y, this.scratch);
    return dot(y, this.scratch);
  }

  /** restart until a fresh run finds nothing new below the count-th level; returns the number of runs */
  solve(): number {
    const { n, count, tolRes } = this;
    this.placeFilter();
    let restarts = 0;
    for (; restarts < MAX_RESTARTS; restarts++) {
      const room = n - this.lockedV.length;
      if (room <= 0) break;
      const needed = Math.max(count - this.lockedV.length, 1);
      const res = this.run(Math.min(this.maxK, room), needed + 2, this.degree > 0 ? FILTER_REL_TOL : tolRes);
      const newBelow = this.lock(res);
      if (this.lockedV.length >= count) {
        // the best unconverged direction of this fresh run: is anything left below the count-th level?
        const left = this.lowestLeft(res);
        if (!newBelow && left > this.levelCount() + tolRes) break;
      }
    }
    if (this.lockedV.length < count) throw new NumericalError(`eigen: Lanczos found only ${this.lockedV.length} of ${count} levels after ${restarts} restarts`);
    return restarts + 1;
  }
}

function lanczosLowest(grid: Grid, u: Float64Array, count: number, opts: EigenOptions): EigenResult {
  const t0 = performance.now();
  const solver = new LanczosSolver(grid, u, count, opts);
  const runs = solver.solve();
  const { lockedE, lockedV, h, scratch } = solver;
  const order = lockedE.map((_, i) => i).sort((p, qq) => lockedE[p] - lockedE[qq]).slice(0, count);
  const vectors = order.map((i) => lockedV[i]);
  const energies = order.map((i) => lockedE[i]);
  const residuals = vectors.map((v, i) => residual(h, v, energies[i], scratch));
  return {
    method: 'lanczos', detail: `full reorthogonalisation, locking, ${runs} fresh random starts, filter ${solver.filterInfo}`,
    energies, vectors, residuals, normH: h.normH, residualTol: solver.tolRes,
    matvecs: h.matvecs, restarts: runs, wallMs: performance.now() - t0,
  };
}

/** lowest `count` eigenpairs of k² + u on the grid */
export function lowestEigenpairs(grid: Grid, u: Float64Array, count: number, opts: EigenOptions = {}): EigenResult {
  checkArgs(grid, u, count);
  const method = opts.method ?? 'lanczos';
  if (method === 'dense') return denseLowest(grid, u, count, opts.residualTol);
  if (method === 'householder') return householderLowest(grid, u, count, opts.residualTol);
  if (method === 'lanczos') return lanczosLowest(grid, u, count, opts);
  throw new RangeError(`eigen: method "${String(method)}" is not known; allowed: lanczos, householder, dense`);
}

/**
 * Group sorted energies into degenerate sets: consecutive levels closer than tol share a group.
 * Returns index lists into `energies` (which must be ascending).
 */
export function groupDegenerate(energies: readonly number[], tol: number): number[][] {
  const groups: number[][] = [];
  for (let i = 0; i < energies.length; i++) {
    const g = groups[groups.length - 1];
    if (g && Math.abs(energies[i] - energies[g[g.length - 1]]) <= tol) g.push(i);
    else groups.push([i]);
  }
  return groups;
}

/** residual target of `groundStateNear`, relative to ‖H‖: the eigenvector error is ≈ residual/gap, so a density
 *  interpolated in λ (quantum/painted.ts) keeps its tail budget (~1e-10 of max ρ) */
export const GROUND_RESIDUAL_REL = 1e-13;
/** iterations allowed to `groundStateNear` (it converges in ~10–40 from a neighbouring λ's state) */
const GROUND_MAX_ITERATIONS = 300;
/** a search direction whose orthogonalised norm falls below this fraction of its own is dropped (it adds nothing) */
const GROUND_DROP = 1e-10;

/**
 * The ground state of k² + u from a nearby guess (e.g. the ground state at a neighbouring λ): single-vector LOBPCG
 * (Knyazev, SIAM J. Sci. Comput. 23, 517, 2001, Algorithm 4.1) with the kinetic preconditioner (k² + σ)⁻¹,
 * σ = max(1, −min u): Rayleigh–Ritz on span{x, T r, p} each iteration, so the rate does not degrade with k_max
 * as plain Lanczos does. The 1-D ground state is non-degenerate, so the guess's large overlap makes the lowest Ritz
 * pair the ground state. NumericalError when ‖Hv − θv‖ does not reach GROUND_RESIDUAL_REL·‖H‖ (round-off floor
 * included) within GROUND_MAX_ITERATIONS.
 */
export function groundStateNear(grid: Grid, u: Float64Array, guess: Float64Array): { energy: number; vector: Float64Array; residual: number; iterations: number } {
  checkArgs(grid, u, 1);
  if (guess.length !== grid.n) throw new RangeError(`eigen: guess length ${guess.length} must equal grid points ${grid.n}`);
  const n = grid.n;
  const h = new RealHamiltonian(grid, u);
  let umin = 0;
  for (let j = 0; j < n; j++) umin = Math.min(umin, u[j]);
  // the kinetic preconditioner y = (k² + σ)⁻¹x
  const sigma = Math.max(1, -umin);
  const pre = new FourierMultiplier(grid, (k) => 1 / (k * k + sigma));
  const tol = Math.max(GROUND_RESIDUAL_REL * h.normH, 8 * Number.EPSILON * h.normH * Math.sqrt(n));
  // columns x, w, p and their images under H
  const S = [Float64Array.from(guess), new Float64Array(n), new Float64Array(n)];
  const HS = [new Float64Array(n), new Float64Array(n), new Float64Array(n)];
  const r = new Float64Array(n);
  const scale = (a: Float64Array, b: Float64Array, f: number): void => { for (let i = 0; i < n; i++) { a[i] *= f; b[i] *= f; } };
  scale(S[0], HS[0], 1 / Math.sqrt(dot(S[0], S[0])));
  h.apply(S[0], HS[0]);
  let theta = dot(S[0], HS[0]);
  let hasP = false;
  let res = Infinity;
  for (let it = 0; it < GROUND_MAX_ITERATIONS; it++) {
    for (let i = 0; i < n; i++) r[i] = HS[0][i] - theta * S[0][i];
    res = Math.sqrt(dot(r, r));
    if (res <= tol) return { energy: theta, vector: S[0], residual: res, iterations: it };
    pre.apply(r, S[1]);
    // orthonormal basis of span{x, w, p} by Gram–Schmidt (twice), the same combinations applied to H·columns
    const cols = hasP ? [0, 1, 2] : [0, 1];
    const kept: number[] = [0];
    for (const c of cols.slice(1)) {
      if (c === 1) h.apply(S[1], HS[1]);
      const before = Math.sqrt(dot(S[c], S[c]));
      for (let pass = 0; pass < 2; pass++) {
        for (const k of kept) {
          const f = dot(S[k], S[c]);
          for (let i = 0; i < n; i++) { S[c][i] -= f * S[k][i]; HS[c][i] -= f * HS[k][i]; }
        }
      }
      const after = Math.sqrt(dot(S[c], S[c]));
      if (after <= GROUND_DROP * before) continue;
      scale(S[c], HS[c], 1 / after);
      kept.push(c);
    }
    const m = kept.length;
    const A = new Matrix(m, m);
    for (let a = 0; a < m; a++) for (let b = a; b < m; b++) { const v = dot(S[kept[a]], HS[kept[b]]); A.set(a, b, v); A.set(b, a, v); }
    const eig = new EigenvalueDecomposition(A, { assumeSymmetric: true });
    const vals = eig.realEigenvalues;
    let lo = 0;
    for (let i = 1; i < m; i++) if (vals[i] < vals[lo]) lo = i;
    const c = kept.map((_, a) => eig.eigenvectorMatrix.get(a, lo));
    // p = the new x's component outside the old x; x = Σ c_a S_a
    const p = new Float64Array(n), hp = new Float64Array(n);
    for (let a = 1; a < m; a++) for (let i = 0; i < n; i++) { p[i] += c[a] * S[kept[a]][i]; hp[i] += c[a] * HS[kept[a]][i]; }
    for (let i = 0; i < n; i++) { S[0][i] = c[0] * S[0][i] + p[i]; HS[0][i] = c[0] * HS[0][i] + hp[i]; }
    scale(S[0], HS[0], 1 / Math.sqrt(dot(S[0], S[0])));
    S[2].set(p); HS[2].set(hp);
    hasP = m > 1;
    theta = dot(S[0], HS[0]);
  }
  throw new NumericalError(`eigen: the ground state from a nearby guess did not converge within ${GROUND_MAX_ITERATIONS} iterations (residual ${res.toExponential(2)}, budget ${tol.toExponential(2)})`);
}
