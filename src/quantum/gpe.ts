/**
 * The 1-D Gross–Pitaevskii equation in natural units (physics.md §3, §10):
 *
 *     i ∂_s ψ = [k² + u(ξ, s) + g |ψ|²] ψ,   ∫|ψ|² dξ = 1,   g = g₁D N / (E₀ ℓ)
 *
 * (ħ = 1, 2m = 1, k = −i∂_ξ; physics.md §10 writes g₁D N |ψ|² with ∫|ψ|² = 1, so the one dimensionless coupling
 * g carries the atom number). Mean-field energy and chemical potential (Pitaevskii & Stringari, Bose–Einstein
 * Condensation, 2003):
 *
 *     E[ψ] = ∫ [ψ̄ k²ψ + u|ψ|² + (g/2)|ψ|⁴] dξ,   μ = ⟨ψ|k² + u + g|ψ|²|ψ⟩ = E + (g/2)∫|ψ|⁴ dξ.
 *
 * Periodic Fourier grid (spectral/grid.ts); ψ is sampled at x_j and normalised with the trapezoidal weight
 * Σ|ψ_j|² dξ = 1 (not the unit 2-norm of quantum/eigen.ts).
 *
 * Ground state (`gpeGroundState`): the continuous normalised gradient flow ∂_t ψ = −(H[ψ] − μ[ψ])ψ (Bao & Du,
 * SIAM J. Sci. Comput. 25, 1674, 2004) discretised Fourier semi-implicitly with a stabilising shift σ
 * (Bao, Chern & Lim, J. Comput. Phys. 219, 836, 2006), then normalised:
 *
 *     (k² + σ)(ψ′ − ψⁿ) = −(H[ψⁿ] − μ[ψⁿ]) ψⁿ,   ψⁿ⁺¹ = ψ′/‖ψ′‖,
 *
 * i.e. a projected gradient step preconditioned by (k² + σ)⁻¹ (Antoine, Levitt & Tang, J. Comput. Phys. 343, 92,
 * 2017). Its fixed points solve H[ψ]ψ = μψ exactly (the residual, not the step, decides convergence). The
 * linearised step multiplies a perturbation by 1 − (k² + b − μ)/(k² + σ) with b = u + 3gψ² (the real-perturbation
 * Hessian), so σ ≥ (max b − μ)/2 keeps every mode contracting; σ is re-chosen every iteration. ψ is real (the ground
 * state of a real potential is real and nodeless). Convergence: ‖H[ψ]ψ − μψ‖ ≤ residualTol, else NumericalError.
 *
 * Real time (`gpeEvolve`): Strang splitting in the time-extended system (kinetic part A = k², exact in Fourier
 * space, advances the time; B = u(ξ, s) + g|ψ|², exact pointwise as the phase e^{−ih(u + g|ψ|²)} because |ψ| is
 * constant under B) composed by Yoshida's triple jump (integrate/composition.ts) to order 4 (Yoshida, Phys. Lett.
 * A 150, 262, 1990; the splitting for the cubic Schrödinger equation: Taha & Ablowitz, J. Comput. Phys. 55, 203,
 * 1984; Hairer, Lubich & Wanner, Geometric Numerical Integration, 2nd ed. 2006, §II.4). Every sub-step is
 * unitary, so the norm is conserved to round-off. The step size is controlled by step doubling: one step h against
 * two of h/2, local error of the latter ≈ ‖ψ_{h/2,h/2} − ψ_h‖/(2⁴ − 1) (Hairer, Nørsett & Wanner, Solving ODEs I,
 * 1993, §II.4); the two-half-step result is kept (no extrapolation, which would break unitarity).
 */
import { NumericalError } from '../core/errors.ts';
import { ComplexFFT, RealFFT } from '../spectral/fft.ts';
import type { Grid } from '../spectral/grid.ts';
import { complexFromReal } from '../linalg/complex.ts';
import { TRIPLE_JUMP } from '../integrate/composition.ts';
import { errorExponent, stepFactor } from '../integrate/controller.ts';
import { lowestEigenpairs } from './eigen.ts';

/** default residual budget ‖Hψ − μψ‖ (L² in ξ, natural units): the eigenvector error is ≈ residual/gap */
export const GPE_RESIDUAL_TOL = 1e-10;
/** iteration cap of the gradient flow (a step costs four real FFTs; typical runs take 10²–10⁴) */
const GROUND_MAX_ITERATIONS = 200_000;
/** σ = max(SIGMA_MIN, SIGMA_FRACTION·(max b − μ)): 0.55 > ½ keeps the stiffest mode contracting with margin */
const SIGMA_FRACTION = 0.55;
/** floor of the shift σ, in units of E₀ (keeps k² + σ well away from zero for the k = 0 mode) */
const SIGMA_MIN = 1;
/** the residual of a unit-norm ψ cannot fall below ≈ this multiple of ε·(k_max² + max|u| + |g| max ψ²): FFT
 *  round-off ε‖ψ‖ spread over all modes and multiplied by k² (common practice) */
const ROUNDOFF_FACTOR = 8;

/** default local error per step of the real-time propagation (L² in ξ) */
export const GPE_STEP_TOL = 1e-11;
/** order of the composed splitting (controller exponent) */
const SPLIT_ORDER = 4;
/** first trial step when none is given: a fraction of the kinetic period 1/k_max² */
const FIRST_STEP_FRACTION = 0.5;
/** step cap of one propagation */
const EVOLVE_MAX_STEPS = 1_000_000;

export interface GpeGroundOptions {
  /** start of the flow, real, length N (any normalisation); default the linear ground state of k² + u */
  guess?: Float64Array;
  /** residual budget ‖Hψ − μψ‖ (default GPE_RESIDUAL_TOL) */
  residualTol?: number;
  /** iteration cap (default 200 000) */
  maxIterations?: number;
  /** when given, the budget is max(residualTol, floorFactor × the round-off floor of Hψ on this grid) instead of a
   *  NumericalError when the floor lies above residualTol (fine grids: the floor grows as k_max²) */
  floorFactor?: number;
}

export interface GpeGroundState {
  /** real ψ_j at the grid points, Σψ_j² dξ = 1 */
  psi: Float64Array;
  /** chemical potential μ = ⟨ψ|H[ψ]|ψ⟩ */
  mu: number;
  /** mean-field energy E[ψ] (per particle) */
  energy: number;
  /** ‖H[ψ]ψ − μψ‖ reached */
  residual: number;
  iterations: number;
}

function checkProblem(grid: Grid, u: Float64Array, g: number): void {
  if (u.length !== grid.n) throw new RangeError(`gpe: potential length ${u.length} must equal grid points ${grid.n}`);
  if (!Number.isFinite(g)) throw new RangeError(`gpe: coupling g must be finite, got ${g}`);
}

/** real ψ → (k²ψ) by the real FFT (allocation-free with the given buffers) */
function kineticReal(fft: RealFFT, k2: Float64Array, spec: Float64Array, psi: Float64Array, out: Float64Array): void {
  fft.forward(psi, spec);
  for (let m = 0; m < k2.length; m++) {
    spec[2 * m] *= k2[m];
    spec[2 * m + 1] *= k2[m];
  }
  fft.inverse(spec, out);
}

/**
 * The ground state of k² + u + g|ψ|² by the preconditioned normalised gradient flow (module comment).
 * NumericalError when the residual budget is not met within the iteration cap or the budget lies below the
 * round-off floor of H[ψ]ψ; RangeError for inconsistent arguments.
 */
export function gpeGroundState(grid: Grid, u: Float64Array, g: number, opts: GpeGroundOptions = {}): GpeGroundState {
  checkProblem(grid, u, g);
  const n = grid.n;
  const dx = grid.dx;
  const tol = opts.residualTol ?? GPE_RESIDUAL_TOL;
  const maxIt = opts.maxIterations ?? GROUND_MAX_ITERATIONS;
  if (!(tol > 0)) throw new RangeError(`gpe: residualTol must be positive, got ${tol}`);
  let psi: Float64Array;
  if (opts.guess) {
    if (opts.guess.length !== n) throw new RangeError(`gpe: guess length ${opts.guess.length} must equal grid points ${n}`);
    psi = Float64Array.from(opts.guess);
  } else {
    psi = Float64Array.from(lowestEigenpairs(grid, u, 1).vectors[0]);
  }
  normaliseReal(psi, dx);
  const fft = new RealFFT(n);
  const spec = new Float64Array(n + 2);
  const k2 = Float64Array.from(grid.kHalf, (k) => k * k);
  const hpsi = new Float64Array(n);
  const r = new Float64Array(n);
  const step = new Float64Array(n);
  let umax = 0;
  for (let j = 0; j < n; j++) umax = Math.max(umax, Math.abs(u[j]));
  let res = Infinity;
  let mu = NaN;
  for (let it = 0; it <= maxIt; it++) {
    kineticReal(fft, k2, spec, psi, hpsi);
    let bmax = -Infinity;
    let dmax = 0;
    for (let j = 0; j < n; j++) {
      const d = psi[j] * psi[j];
      hpsi[j] += (u[j] + g * d) * psi[j];
      bmax = Math.max(bmax, u[j] + 3 * g * d);
      dmax = Math.max(dmax, d);
    }
    mu = 0;
    for (let j = 0; j < n; j++) mu += psi[j] * hpsi[j];
    mu *= dx;
    let s2 = 0;
    for (let j = 0; j < n; j++) {
      r[j] = hpsi[j] - mu * psi[j];
      s2 += r[j] * r[j];
    }
    res = Math.sqrt(s2 * dx);
    if (!Number.isFinite(res)) throw new NumericalError(`gpe ground state: the gradient flow diverged at iteration ${it} (g = ${g}, N = ${n}, L = ${grid.length})`);
    const floor = ROUNDOFF_FACTOR * Number.EPSILON * (grid.kMax * grid.kMax + umax + Math.abs(g) * dmax);
    const budget = opts.floorFactor !== undefined ? Math.max(tol, opts.floorFactor * floor) : tol;
    if (res <= budget) return { psi, mu, energy: gpeEnergy(grid, u, g, complexFromReal(psi)), residual: res, iterations: it };
    if (floor > budget) throw new NumericalError(`gpe ground state: residual budget ${tol} is below the round-off floor ≈ ${floor.toExponential(2)} of Hψ on this grid (N = ${n}, L = ${grid.length}); allowed: residualTol > ${floor.toExponential(2)}`);
    if (it === maxIt) break;
    const sigma = Math.max(SIGMA_MIN, SIGMA_FRACTION * (bmax - mu));
    fft.forward(r, spec);
    for (let m = 0; m < k2.length; m++) {
      const f = 1 / (k2[m] + sigma);
      spec[2 * m] *= f;
      spec[2 * m + 1] *= f;
    }
    fft.inverse(spec, step);
    for (let j = 0; j < n; j++) psi[j] -= step[j];
    normaliseReal(psi, dx);
  }
  throw new NumericalError(`gpe ground state: residual ‖Hψ − μψ‖ = ${res.toExponential(2)} after ${maxIt} gradient-flow iterations, budget ${tol} (g = ${g}, μ ≈ ${mu}, N = ${n}, L = ${grid.length}); a guess closer to the ground state or a larger budget may help`);
}

function normaliseReal(psi: Float64Array, dx: number): void {
  let s = 0;
  for (let j = 0; j < psi.length; j++) s += psi[j] * psi[j];
  const f = 1 / Math.sqrt(s * dx);
  if (!Number.isFinite(f)) throw new RangeError('gpe: the state has zero or non-finite norm');
  for (let j = 0; j < psi.length; j++) psi[j] *= f;
}

/**
 * Mean-field energy E[ψ] = ∫ [ψ̄k²ψ + u|ψ|² + (g/2)|ψ|⁴] dξ of a complex state (interleaved re, im; length 2N).
 */
export function gpeEnergy(grid: Grid, u: Float64Array, g: number, psi: Float64Array): number {
  checkProblem(grid, u, g);
  if (psi.length !== 2 * grid.n) throw new RangeError(`gpe: state length ${psi.length} must be 2N = ${2 * grid.n} (interleaved complex)`);
  const n = grid.n;
  const fft = new ComplexFFT(n);
  const spec = new Float64Array(2 * n);
  fft.forward(psi, spec);
  // Parseval: Σ_j ψ̄_j (k²ψ)_j = (1/N) Σ_m k_m² |ψ̂_m|²
  let kin = 0;
  for (let m = 0; m < n; m++) kin += grid.k[m] * grid.k[m] * (spec[2 * m] ** 2 + spec[2 * m + 1] ** 2);
  kin /= n;
  let pot = 0;
  for (let j = 0; j < n; j++) {
    const d = psi[2 * j] ** 2 + psi[2 * j + 1] ** 2;
    pot += u[j] * d + 0.5 * g * d * d;
  }
  return (kin + pot) * grid.dx;
}

/** ∫|ψ|² dξ of a complex state (interleaved) */
export function gpeNorm(grid: Grid, psi: Float64Array): number {
  let s = 0;
  for (let j = 0; j < psi.length; j++) s += psi[j] * psi[j];
  return s * grid.dx;
}

/** a static potential (length N) or out ← u(ξ_j, s) */
export type GpePotential = Float64Array | ((s: number, out: Float64Array) => void);

export interface GpeEvolveOptions {
  /** local error budget per step, L² in ξ (default GPE_STEP_TOL) */
  tol?: number;
  /** first trial step (default FIRST_STEP_FRACTION/k_max²) */
  firstStep?: number;
  /** step cap (default 1 000 000) */
  maxSteps?: number;
}

export interface GpeEvolution {
  /** ψ at s1, interleaved complex, length 2N */
  psi: Float64Array;
  steps: number;
  rejected: number;
  /** sum of the accepted local error estimates (a rough bound on the global error) */
  errorSum: number;
  /** the last accepted step */
  lastStep: number;
}

/** buffers of one propagation: allocated once, reused by every sub-step */
class SplitBuffers {
  readonly fft: ComplexFFT;
  readonly spec: Float64Array;
  readonly k2: Float64Array;
  readonly u: Float64Array;
  readonly full: Float64Array;
  readonly half: Float64Array;
  constructor(readonly grid: Grid, readonly potential: GpePotential, readonly g: number) {
    const n = grid.n;
    this.fft = new ComplexFFT(n);
    this.spec = new Float64Array(2 * n);
    this.k2 = Float64Array.from(grid.k, (k) => k * k);
    this.u = typeof potential === 'function' ? new Float64Array(n) : potential;
    this.full = new Float64Array(2 * n);
    this.half = new Float64Array(2 * n);
  }
}

/** ψ ← e^{−ih(u(s) + g|ψ|²)} ψ pointwise (exact flow of B; |ψ| is constant under it) */
function potentialFlow(b: SplitBuffers, psi: Float64Array, s: number, h: number): void {
  if (typeof b.potential === 'function') b.potential(s, b.u);
  const u = b.u;
  const g = b.g;
  for (let j = 0; j < u.length; j++) {
    const re = psi[2 * j], im = psi[2 * j + 1];
    const ph = -h * (u[j] + g * (re * re + im * im));
    const c = Math.cos(ph), sn = Math.sin(ph);
    psi[2 * j] = c * re - sn * im;
    psi[2 * j + 1] = c * im + sn * re;
  }
}

/** ψ ← e^{−ihk²} ψ, exact in Fourier space */
function kineticFlow(b: SplitBuffers, psi: Float64Array, h: number): void {
  const { fft, spec, k2 } = b;
  fft.forward(psi, spec);
  for (let m = 0; m < k2.length; m++) {
    const ph = -h * k2[m];
    const c = Math.cos(ph), sn = Math.sin(ph);
    const re = spec[2 * m], im = spec[2 * m + 1];
    spec[2 * m] = c * re - sn * im;
    spec[2 * m + 1] = c * im + sn * re;
  }
  fft.inverse(spec, psi);
}

/**
 * One fourth-order step in place: Strang steps B(γh/2) A(γh) B(γh/2) for γ in the triple jump, the adjacent
 * B half-steps at the same time merged; B is evaluated at the time the A flows have reached.
 */
function compositionStep(b: SplitBuffers, psi: Float64Array, s: number, h: number): void {
  const w = TRIPLE_JUMP;
  let t = s;
  potentialFlow(b, psi, t, 0.5 * w[0] * h);
  for (let i = 0; i < w.length; i++) {
    kineticFlow(b, psi, w[i] * h);
    t += w[i] * h;
    potentialFlow(b, psi, t, 0.5 * (w[i] + (i + 1 < w.length ? w[i + 1] : 0)) * h);
  }
}

/**
 * ψ(s1) from ψ(s0) under i∂_sψ = (k² + u(ξ, s) + g|ψ|²)ψ by the composed Strang splitting with step-doubling
 * control (module comment). psi0 is interleaved complex (length 2N) and is not modified. NumericalError when the
 * step cap is reached or the step underflows; RangeError for inconsistent arguments.
 */
export function gpeEvolve(grid: Grid, potential: GpePotential, g: number, psi0: Float64Array, s0: number, s1: number, opts: GpeEvolveOptions = {}): GpeEvolution {
  const n = grid.n;
  if (typeof potential !== 'function') checkProblem(grid, potential, g);
  else if (!Number.isFinite(g)) throw new RangeError(`gpe: coupling g must be finite, got ${g}`);
  if (psi0.length !== 2 * n) throw new RangeError(`gpe: state length ${psi0.length} must be 2N = ${2 * n} (interleaved complex)`);
  if (!Number.isFinite(s0) || !Number.isFinite(s1) || s1 < s0) throw new RangeError(`gpe: times must be finite with s1 ≥ s0, got ${s0} → ${s1}`);
  const tol = opts.tol ?? GPE_STEP_TOL;
  if (!(tol > 0)) throw new RangeError(`gpe: tol must be positive, got ${tol}`);
  const maxSteps = opts.maxSteps ?? EVOLVE_MAX_STEPS;
  const b = new SplitBuffers(grid, potential, g);
  const psi = Float64Array.from(psi0);
  const expo = errorExponent(SPLIT_ORDER);
  const scale = 1 / (Math.pow(2, SPLIT_ORDER) - 1);
  let h = opts.firstStep ?? FIRST_STEP_FRACTION / (grid.kMax * grid.kMax);
  let s = s0;
  let steps = 0, rejected = 0, errorSum = 0, lastStep = 0;
  while (s < s1) {
    if (steps + rejected >= maxSteps) throw new NumericalError(`gpe evolve: ${maxSteps} step attempts reached at s = ${s} of ${s1} (tol ${tol}, last step ${h})`);
    const hh = Math.min(h, s1 - s);
    if (!(s + hh > s)) throw new NumericalError(`gpe evolve: step size underflow at s = ${s} (tol ${tol})`);
    b.full.set(psi);
    compositionStep(b, b.full, s, hh);
    b.half.set(psi);
    compositionStep(b, b.half, s, 0.5 * hh);
    compositionStep(b, b.half, s + 0.5 * hh, 0.5 * hh);
    let d2 = 0;
    for (let j = 0; j < 2 * n; j++) {
      const d = b.half[j] - b.full[j];
      d2 += d * d;
    }
    const err = Math.sqrt(d2 * grid.dx) * scale;
    const ratio = err / tol;
    if (ratio <= 1) {
      psi.set(b.half);
      s = hh === s1 - s ? s1 : s + hh;
      steps++;
      errorSum += err;
      lastStep = hh;
    } else {
      rejected++;
    }
    h = hh * stepFactor(ratio, expo);
  }
  return { psi, steps, rejected, errorSum, lastStep };
}
