/**
 * Corrections a lab can paint: a momentum-linear correction λ̇·½{g, p} replaced by the purely local potential of
 * its gauge transform (physics.md §7; Masuda & Nakamura, Proc. R. Soc. A 466, 1135, 2010; Ibáñez, Chen,
 * Torrontegui, Muga & del Campo, PRL 109, 100403, 2012). Natural units of physics.md §3 (ħ = 1, m = ½, ℓ, E₀, t₀):
 *
 *     w = λ̇ g(ξ, λ),   W = ∫₀^ξ w dξ′ = λ̇ G,   G = ∫₀^ξ g dξ′
 *     k² + u + ½{w, k} = (k + w/2)² + u − w²/4,   ψ = e^{−iW/2} φ:
 *     i ∂_s φ = [k² + u + V_loc] φ,   V_loc = −w²/4 − ½ ∂_s W = −(λ̇g)²/4 − ½(λ̈ G + λ̇² ∂_λG)
 *
 * (lab units: V_loc = −(m/2)w² − m ∂_t W). ∂_s W uses the ramp's closed-form λ̇, λ̈ (protocol/ramp.ts) and the
 * field's ∂_λg. Gauge: G is integrated from the box centre ξ = 0 (a grid point), and the uniform constant
 * −(λ̇ g(0))²/4 is removed, so V_loc(0) = 0; any uniform shift changes only the global phase. ψ and φ agree where
 * W = 0: at the ends of the ramp when λ̇ = 0 there, and the painted potential is continuous at the ends (equal to
 * u) when also λ̈ = 0 there (`assertPaintableRamp`).
 *
 * Fields g(ξ, λ):
 *  - any caller's field (`VelocityField`), e.g. the variational ½{g, p} of check/painted.ts;
 *  - the one-state exact field of the ground state (`groundStateField`): the continuity equation
 *    ∂_λρ + ∂_ξ(ρ g) = 0 of the adiabatic density ρ = φ₀(ξ, λ)² (velocity operator i[H, ξ] = 2k + w, so the
 *    current of a real state under ½{w, k} is ρw) gives g = −(1/ρ)∫_{−∞}^ξ ∂_λρ dξ′, which carries φ₀ exactly
 *    (fast-forward; Masuda & Nakamura 2010; Torrontegui et al., PRA 86, 013601, 2012). ρ(ξ, λ) is a Chebyshev
 *    interpolant in λ (spectral/chebyshev.ts), so ∂_λρ and ∂²_λρ (for ∂_λg) are exact derivatives of one smooth
 *    function. Where ρ vanishes the quotient is round-off: it is clipped smoothly,
 *        g = −J ρ/(ρ² + ρ_c²),   J = ∫_{−∞}^ξ ∂_λρ,   ρ_c = CLIP_FLOOR · max ρ,
 *    equal to −J/ρ where ρ ≫ ρ_c and going to zero (a flat painted correction) where ρ ≪ ρ_c. Its cost: the
 *    weight of the state in the clipped region (`clippedWeight`); measured on the two-soliton split of −6sech²ξ
 *    (N = 256, L = 30, τ ∈ [0, 0.25] in T = 0.5 t₀, smooth ramp), the final infidelity of the painted drive was
 *    3.4e-6, 3.4e-9, 7e-12 at ρ_c/max ρ = 1e-6, 1e-9, 1e-12 (clipped weights 8.7e-7, 7.9e-10, 7.8e-13; bare ramp
 *    0.99996).
 *  - the same field of a condensate's nonlinear ground state (`groundStateField` with `coupling` g): φ solves
 *    (k² + u + g φ²)φ = μφ (quantum/gpe.ts), and since g|ψ|² sees only the density, the continuity field of ρ = φ²
 *    carries φ exactly under i∂_sψ = [k² + u + λ̇½{g, k} + g|ψ|²]ψ and its painted gauge partner (fast-forward of a
 *    Bose–Einstein condensate: Masuda, PRA 86, 063624, 2012; physics.md §7, §10).
 */
import { NumericalError } from '../core/errors.ts';
import type { Grid } from '../spectral/grid.ts';
import { cumulativeIntegral } from '../spectral/cumulative.ts';
import type { GaussianBlur } from '../spectral/blur.ts';
import { ChebyshevSeries, chebyshevPoints, PiecewiseChebyshev } from '../spectral/chebyshev.ts';
import { complexFromReal } from '../linalg/complex.ts';
import type { Ramp } from '../protocol/ramp.ts';
import { groundStateNear, groupDegenerate, lowestEigenpairs, type EigenMethod } from './eigen.ts';
import type { OperatorTerms } from './hamiltonian.ts';
import { eigenspaceFidelity, groupOf } from './observables.ts';
import { gpeGroundState } from './gpe.ts';
import { propagate, type DrivenHamiltonian, type PotentialFn, type PropagateOptions } from './propagator.ts';

/** offset from the ramp's ends (fraction of T) at which λ̇ and λ̈ are probed as one-sided limits: sin2 has
 *  λ̈ ≈ 4π²δ Λ/T² there, far below END_TOL */
export const END_PROBE = 1e-9;
/** |λ̇| ≤ END_TOL |Λ|/T and |λ̈| ≤ END_TOL |Λ|/T² count as zero at an end (Λ the ramp's span) */
export const END_TOL = 1e-6;
/** clip density ρ_c relative to max ρ: below it the ground state's weight is ~1e-9 per decay length, while
 *  J/ρ is still above the eigenvector round-off (~1e-15 of max ρ) by six orders */
export const CLIP_FLOOR = 1e-9;
/** first Chebyshev degree in λ of the ground-state density, and the largest one tried (doublings reuse samples) */
export const CHEBYSHEV_START = 16;
export const CHEBYSHEV_MAX = 256;
/** the density's Chebyshev tail (last two coefficients) must fall below this fraction of max ρ (a few hundred
 *  times the eigenvectors' round-off, so the doubling stops at the round-off plateau) */
export const CHEBYSHEV_TAIL = 1e-10;
/** the piecewise re-expansion of the density series and its λ-derivatives reproduces each to this fraction of its
 *  largest coefficient (well inside CHEBYSHEV_TAIL; common practice) */
export const PIECE_TAIL = 1e-13;

/** what evaluates a vector-valued function of λ */
type Evaluator = { evaluate(t: number, out: Float64Array, b1: Float64Array, b2: Float64Array): Float64Array };
/** levels closer than this (E₀) are one degenerate block when fidelities are measured (verify's value) */
const DEGENERACY_TOL = 1e-7;

/** a ramp whose λ̇ or λ̈ does not vanish at an end: the painted drive would not end in the corrected state */
export class RampNotPaintableError extends RangeError {
  readonly ramp: string;
  readonly reason: string;
  constructor(ramp: string, reason: string) {
    super(`painted correction: ramp "${ramp}" cannot be painted: ${reason}; the painted potential equals the ½{g, p} correction's final state only when λ̇ = λ̈ = 0 at both ends (the gauge W = λ̇G and the potential's −½λ̈G vanish there)`);
    this.name = 'RampNotPaintableError';
    this.ramp = ramp;
    this.reason = reason;
  }
}

/**
 * Refuses (RampNotPaintableError, naming the ramp and the reason) a ramp with λ̇ ≠ 0 or λ̈ ≠ 0 at either end,
 * probed as one-sided limits of its closed forms at END_PROBE·T inside the ends (module doc).
 */
export function assertPaintableRamp(ramp: Ramp): void {
  const T = ramp.duration;
  const span = Math.abs(ramp.lambdaEnd);
  const ends: [string, number][] = [['start', END_PROBE * T], ['end', (1 - END_PROBE) * T]];
  for (const [where, s] of ends) {
    const rate = ramp.rate(s), accel = ramp.accel(s);
    if (Math.abs(rate) > END_TOL * span / T) throw new RampNotPaintableError(ramp.kind, `λ̇ = ${rate} ≠ 0 at the ${where} (t₀⁻¹)`);
    if (Math.abs(accel) > END_TOL * span / (T * T)) throw new RampNotPaintableError(ramp.kind, `λ̈ = ${accel} ≠ 0 at the ${where} (t₀⁻²)`);
  }
}

/** the seam of the periodic box is closed in the outer band SEAM_START < |ξ|/(L/2) < 1: g is tapered to zero from
 *  SEAM_START to SEAM_END and its integral is returned by a bump beyond SEAM_END, where the design keeps the trap
 *  away (jobs/context.ts refuses potentials that reach the box edge) */
export const SEAM_START = 0.8;
export const SEAM_END = 0.9;

/** C^∞ step: 0 for t ≤ 0, 1 for t ≥ 1, e^{−1/t}/(e^{−1/t} + e^{−1/(1−t)}) between (common practice) */
export function smoothStep(t: number): number {
  if (t <= 0) return 0;
  if (t >= 1) return 1;
  const a = Math.exp(-1 / t), b = Math.exp(-1 / (1 - t));
  return a / (a + b);
}

/**
 * A field made periodic on the box: g̃ = χg − (∫χg / ∫β) β with χ the smooth taper (1 inside SEAM_START, 0 beyond
 * SEAM_END) and β a smooth bump in the outermost band. Then ∫g̃ = 0, so G̃ = ∫g̃ and with it the gauge W = λ̇G̃
 * and V_loc are smooth and periodic: without this a field with ∫g ≠ 0 (any transport or asymmetric split) leaves a
 * step in V_loc at the seam, which the Schrödinger time stepping cannot resolve (order reduction of the
 * exponential integrator). g̃ = g wherever |ξ| < SEAM_START·L/2, so states that vanish in the band see the same
 * correction; ∂_λg̃ follows by the same linear map. The integrals are those of cumulativeIntegral plus the closing
 * interval, so ∫g̃ vanishes in the rule V_loc is built with.
 */
export function seamlessField(field: VelocityField): VelocityField {
  const { grid } = field;
  const n = grid.n;
  const half = grid.length / 2;
  const chi = new Float64Array(n), beta = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    const r = Math.abs(grid.x[j]) / half;
    chi[j] = 1 - smoothStep((r - SEAM_START) / (SEAM_END - SEAM_START));
    const d = (1 - r) / (1 - SEAM_END);
    beta[j] = d < 1 ? Math.exp(-1 / (1 - d * d)) : 0;
  }
  const acc = new Float64Array(n);
  const total = (f: Float64Array): number => cumulativeIntegral(f, grid.dx, acc)[n - 1] + 0.5 * (f[n - 1] + f[0]) * grid.dx;
  const betaTotal = total(beta);
  const close = (f: Float64Array): void => {
    for (let j = 0; j < n; j++) f[j] *= chi[j];
    const c = total(f) / betaTotal;
    for (let j = 0; j < n; j++) f[j] -= c * beta[j];
  };
  return {
    grid,
    at(lambda: number, g: Float64Array, gLambda: Float64Array): void {
      field.at(lambda, g, gLambda);
      close(g);
      close(gLambda);
    },
  };
}

/** a velocity field g(ξ, λ) of the correction λ̇·½{g, k} with its λ-derivative, on a grid */
export interface VelocityField {
  readonly grid: Grid;
  /** g(·, λ) and ∂_λg(·, λ) into the given arrays */
  at(lambda: number, g: Float64Array, gLambda: Float64Array): void;
}

/** scratch of localPotential: G and ∂_λG */
export interface LocalPotentialScratch {
  G: Float64Array;
  GLambda: Float64Array;
}

export function localPotentialScratch(n: number): LocalPotentialScratch {
  return { G: new Float64Array(n), GLambda: new Float64Array(n) };
}

/**
 * V_loc = −(λ̇g)²/4 − ½(λ̈G + λ̇²∂_λG) + (λ̇g(0))²/4, G = ∫₀^ξ g (module doc; physics.md §7) into out, given g and
 * ∂_λg at the current λ and the ramp's λ̇ (rate) and λ̈ (accel). Allocation-free with a scratch.
 */
export function localPotential(grid: Grid, g: Float64Array, gLambda: Float64Array, rate: number, accel: number, out: Float64Array, scratch: LocalPotentialScratch = localPotentialScratch(grid.n)): Float64Array {
  const centre = grid.n / 2;
  const { G, GLambda } = scratch;
  cumulativeIntegral(g, grid.dx, G, centre);
  cumulativeIntegral(gLambda, grid.dx, GLambda, centre);
  const w0 = rate * g[centre];
  for (let j = 0; j < grid.n; j++) {
    const w = rate * g[j];
    out[j] = -0.25 * (w * w - w0 * w0) - 0.5 * (accel * G[j] + rate * rate * GLambda[j]);
  }
  return out;
}

/**
 * The painted drive: a pure potential k² + u(λ(s)) + V_loc(s) with λ = λ₀ + ramp(s) (no momentum terms), V_loc of
 * the field closed at the box seam (seamlessField); with `blur`, the whole painted potential is blurred by the
 * optics' point-spread function (spectral/blur.ts) at every time, as a lab's projection would. Refuses
 * a ramp without λ̇ = λ̈ = 0 at both ends (assertPaintableRamp).
 */
export function paintedDrive(grid: Grid, potential: PotentialFn, raw: VelocityField, ramp: Ramp, lambda0 = 0, blur: GaussianBlur | null = null): DrivenHamiltonian {
  assertPaintableRamp(ramp);
  const field = seamlessField(raw);
  const n = grid.n;
  const u = new Float64Array(n), g = new Float64Array(n), gl = new Float64Array(n), vloc = new Float64Array(n);
  const scratch = localPotentialScratch(n);
  return {
    grid,
    terms(s: number, out: OperatorTerms): void {
      const lambda = lambda0 + ramp.value(s);
      potential(lambda, u);
      const rate = ramp.rate(s), accel = ramp.accel(s);
      if (rate !== 0 || accel !== 0) {
        field.at(lambda, g, gl);
        localPotential(grid, g, gl, rate, accel, vloc, scratch);
        for (let j = 0; j < n; j++) u[j] += vloc[j];
      }
      if (blur) blur.apply(u, u);
      out.c1 = 0; out.c2 = 1; out.c3 = 0; out.v = u; out.w = null; out.b = 0;
    },
  };
}

/** the momentum-linear drive k² + u(λ(s)) + λ̇ ½{g̃, k} of the same seam-closed field (the gauge partner of paintedDrive) */
export function velocityDrive(grid: Grid, potential: PotentialFn, raw: VelocityField, ramp: Ramp, lambda0 = 0): DrivenHamiltonian {
  const field = seamlessField(raw);
  const n = grid.n;
  const u = new Float64Array(n), g = new Float64Array(n), gl = new Float64Array(n);
  return {
    grid,
    terms(s: number, out: OperatorTerms): void {
      const lambda = lambda0 + ramp.value(s);
      potential(lambda, u);
      const rate = ramp.rate(s);
      out.c1 = 0; out.c2 = 1; out.c3 = 0; out.v = u;
      if (rate === 0) {
        out.w = null; out.b = 0;
        return;
      }
      field.at(lambda, g, gl);
      out.w = g; out.b = 0.5 * rate;
    },
  };
}

/** the drive with every potential it hands out folded into range (the painted potential's extremes) */
export function recordRange(H: DrivenHamiltonian, range: { min: number; max: number }): DrivenHamiltonian {
  return {
    grid: H.grid,
    terms(s: number, out: OperatorTerms): void {
      H.terms(s, out);
      const v = out.v;
      if (v) for (let j = 0; j < v.length; j++) { if (v[j] < range.min) range.min = v[j]; if (v[j] > range.max) range.max = v[j]; }
    },
  };
}

export interface GroundStateFieldOptions {
  /** ρ_c / max ρ (default CLIP_FLOOR) */
  clipFloor?: number;
  eigenMethod?: EigenMethod;
  /** mean-field coupling g (natural units, ∫|ψ|² dξ = 1): the density is that of the nonlinear ground state */
  coupling?: number;
}

/** residual budget of the nonlinear ground states behind a condensate's density series: the density then carries
 *  an error ≈ residual/gap ≈ 1e-12 of max ρ, below CHEBYSHEV_TAIL (common practice) */
export const GPE_FIELD_RESIDUAL = 1e-11;
/** on fine grids the round-off floor of Hψ (gpe.ts, ∝ k_max²) exceeds GPE_FIELD_RESIDUAL: the budget is then this
 *  multiple of the floor (common practice) */
export const GPE_FLOOR_FACTOR = 4;

export interface GroundStateField extends VelocityField {
  lambdaStart: number;
  lambdaEnd: number;
  /** Chebyshev degree in λ reached */
  degree: number;
  /** ρ_c (ℓ⁻¹) */
  clipDensity: number;
  /** largest over the λ samples of ∫ρ·ρ_c²/(ρ² + ρ_c²) dξ: the ground state's weight where the clip acts */
  clippedWeight: number;
}

/**
 * Chebyshev interpolant in λ of the ground-state density, doubled until its tail meets CHEBYSHEV_TAIL. The points
 * run monotonically in λ and each new one lies beside a solved one, so every state after the first is found from
 * its neighbour's (eigen.ts groundStateNear; gpe.ts gpeGroundState with the neighbour as guess when `coupling` is
 * given). States are kept as ψ with density ψ²·scale: unit vectors (scale 1/dξ) or ∫ψ² dξ = 1 (scale 1).
 */
function densitySeries(grid: Grid, potential: PotentialFn, a: number, b: number, method?: EigenMethod, coupling?: number): { series: ChebyshevSeries; samples: Float64Array[] } {
  const u = new Float64Array(grid.n);
  const nonlinear = coupling !== undefined;
  const scale = nonlinear ? 1 : 1 / grid.dx;
  const solve = (lambda: number, guess: Float64Array | null): Float64Array => {
    potential(lambda, u);
    if (nonlinear) return gpeGroundState(grid, u, coupling, { guess: guess ?? undefined, residualTol: GPE_FIELD_RESIDUAL, floorFactor: GPE_FLOOR_FACTOR }).psi;
    return guess ? groundStateNear(grid, u, guess).vector : lowestEigenpairs(grid, u, 1, { method }).vectors[0];
  };
  let states: Float64Array[] = [];
  for (const l of chebyshevPoints(a, b, CHEBYSHEV_START)) states.push(solve(l, states[states.length - 1] ?? null));
  for (let n = CHEBYSHEV_START; ; n *= 2) {
    const samples = states.map((psi) => Float64Array.from(psi, (v) => v * v * scale));
    const series = ChebyshevSeries.fromSamples(a, b, samples);
    let maxRho = 0;
    for (const r of samples) for (const v of r) maxRho = Math.max(maxRho, v);
    if (series.tail() <= CHEBYSHEV_TAIL * maxRho) return { series, samples };
    if (2 * n > CHEBYSHEV_MAX) throw new NumericalError(`painted ground state: the density's Chebyshev interpolant in λ on [${a}, ${b}] did not converge by degree ${n} (tail ${series.tail() / maxRho} of max ρ, budget ${CHEBYSHEV_TAIL}); the ground state changes too abruptly (a near-degenerate level?)`);
    const pts = chebyshevPoints(a, b, 2 * n);
    const old = states;
    states = pts.map((l, i) => (i % 2 === 0 ? old[i / 2] : solve(l, old[(i - 1) / 2])));
  }
}

/**
 * The one-state exact field of the ground state on [λ_start, λ_end] (module doc): g = −Jρ/(ρ² + ρ_c²) and its
 * exact λ-derivative from the Chebyshev interpolant of ρ. NumericalError when the interpolant does not converge.
 */
export function groundStateField(grid: Grid, potential: PotentialFn, lambdaStart: number, lambdaEnd: number, opts: GroundStateFieldOptions = {}): GroundStateField {
  const floor = opts.clipFloor ?? CLIP_FLOOR;
  if (!(floor > 0 && floor < 1)) throw new RangeError(`painted ground state: clipFloor = ${floor} must be in (0, 1)`);
  const a = Math.min(lambdaStart, lambdaEnd), b = Math.max(lambdaStart, lambdaEnd);
  const { series, samples } = densitySeries(grid, potential, a, b, opts.eigenMethod, opts.coupling);
  const d1 = series.derivative(), d2 = d1.derivative();
  let maxRho = 0;
  for (const r of samples) for (const v of r) maxRho = Math.max(maxRho, v);
  const rc = floor * maxRho, rc2 = rc * rc;
  let clippedWeight = 0;
  for (const r of samples) {
    let s = 0;
    for (const v of r) s += (v * rc2) / (v * v + rc2);
    clippedWeight = Math.max(clippedWeight, s * grid.dx);
  }
  const n = grid.n;
  const rho = new Float64Array(n), rl = new Float64Array(n), rll = new Float64Array(n);
  const J = new Float64Array(n), JL = new Float64Array(n), b1 = new Float64Array(n), b2 = new Float64Array(n);
  // every evaluation in a drive reads the three series: their piecewise forms, where they converge, cost a fraction
  const fast = (c: ChebyshevSeries): Evaluator => {
    let scale = 0;
    for (const ck of c.coefficients) for (const v of ck) scale = Math.max(scale, Math.abs(v));
    return PiecewiseChebyshev.of(c, PIECE_TAIL * scale) ?? c;
  };
  const [fRho, fD1, fD2] = [fast(series), fast(d1), fast(d2)];
  return {
    grid, lambdaStart, lambdaEnd, degree: series.degree, clipDensity: rc, clippedWeight,
    at(lambda: number, g: Float64Array, gLambda: Float64Array): void {
      fRho.evaluate(lambda, rho, b1, b2);
      fD1.evaluate(lambda, rl, b1, b2);
      fD2.evaluate(lambda, rll, b1, b2);
      cumulativeIntegral(rl, grid.dx, J);
      cumulativeIntegral(rll, grid.dx, JL);
      for (let j = 0; j < n; j++) {
        const den = rho[j] * rho[j] + rc2;
        g[j] = (-J[j] * rho[j]) / den;
        gLambda[j] = -(JL[j] * rho[j] + J[j] * rl[j]) / den + (2 * J[j] * rho[j] * rho[j] * rl[j]) / (den * den);
      }
    },
  };
}

export interface GaugeCheckOptions {
  grid: Grid;
  potential: PotentialFn;
  field: VelocityField;
  ramp: Ramp;
  lambda0?: number;
  /** the lowest `states` levels of the first frame are propagated */
  states: number;
  eigenMethod?: EigenMethod;
  /** options of the propagator (default: its defaults) */
  propagate?: PropagateOptions;
}

export interface GaugeCheck {
  /** final fidelities (eigenspaces of the last frame) under λ̇½{g, k} */
  velocity: number[];
  /** the same under the painted potential k² + u + V_loc */
  painted: number[];
  /** max over states of |painted − velocity|: zero up to discretisation when the gauge transform is exact */
  maxDifference: number;
}

/**
 * The gauge check of physics.md §7: the lowest levels of the first frame propagated under the momentum drive
 * λ̇½{g, k} and under its painted potential; the final fidelities must agree (module doc). On the periodic box
 * the gauge factor e^{−iW/2} is periodic only when ∫g dξ over the box vanishes, so the check holds for states
 * that vanish at the box edges (bound states); box continuum levels feel the seam (measured on the two-soliton
 * split: bound states agree to 5e-10, the first continuum level differs by 0.07). The time-stepping budget must
 * lie well below the compared difference.
 */
export function gaugeCheck(opts: GaugeCheckOptions): GaugeCheck {
  const { grid, potential, field, ramp } = opts;
  const l0 = opts.lambda0 ?? 0;
  const M = opts.states;
  if (!Number.isInteger(M) || M < 1 || M + 2 > grid.n) throw new RangeError(`gauge check: states = ${M} must be an integer in 1 … ${grid.n - 2}`);
  const u = new Float64Array(grid.n);
  potential(l0, u);
  const start = lowestEigenpairs(grid, u, M, { method: opts.eigenMethod });
  potential(l0 + ramp.lambdaEnd, u);
  const end = lowestEigenpairs(grid, u, M + 2, { method: opts.eigenMethod });
  const groups = groupDegenerate(end.energies, DEGENERACY_TOL);
  const init = start.vectors.map(complexFromReal);
  const fidelities = (H: DrivenHamiltonian): number[] =>
    propagate(H, init, 0, ramp.duration, opts.propagate).states.map((p, i) => eigenspaceFidelity(p, end.vectors, groupOf(groups, i)));
  const painted = fidelities(paintedDrive(grid, potential, field, ramp, l0));
  const velocity = fidelities(velocityDrive(grid, potential, field, ramp, l0));
  return { velocity, painted, maxDifference: Math.max(...painted.map((f, i) => Math.abs(f - velocity[i]))) };
}
