/**
 * Tight-binding Schrödinger equation  i dψ/ds = H_σ(s) ψ  on the lattice (natural units), with
 * H_σ(s) = lattice[k² + u(ξ, λ(s)) − σ λ′(s)(4k³ + 3{u, k})] (operators.ts), σ = 1 CD, 0 bare, −1 flipped.
 *
 * Time step: the fourth-order commutator-free Magnus integrator with two exponentials
 *     ψ(s + Δ) = exp(−iΔ(α₁H₁ + α₂H₂)) exp(−iΔ(α₂H₁ + α₁H₂)) ψ(s),
 *     H_{1,2} = H(s + c_{1,2}Δ),  c_{1,2} = ½ ∓ √3/6,  α_{1,2} = ¼ ∓ √3/6
 * (table in integrate/magnus.ts: Blanes & Moan, Appl. Numer. Math. 56, 1519, 2006). Each exponent is again a
 * lattice Hamiltonian (the terms are linear), applied by the Lanczos exponential of integrate/krylov.ts, so the
 * scheme is unitary up to the Krylov tolerance. Step size control by step doubling (Hairer, Nørsett & Wanner,
 * Solving ODEs I, 1993, §II.4): one step Δ against two steps Δ/2, local error ‖ψ_Δ − ψ_{Δ/2,Δ/2}‖/15 per state,
 * accepted when below tol·Δ/T, the finer result kept; the step factor comes from integrate/controller.ts.
 */
import { applyTerms, cdTerms, combineTerms, emptyTerms, normBound, type LatticeTerms } from './operators.ts';
import { NumericalError } from '../core/errors.ts';
import { errorExponent, stepFactor } from '../integrate/controller.ts';
import { KrylovExp } from '../integrate/krylov.ts';
import { CF_MAGNUS4 } from '../integrate/magnus.ts';
import type { LatticeSequence } from './sequence.ts';

/** order of the CF Magnus method: the step-doubling estimate scales as Δ⁵ */
const ORDER = 4;
/** Richardson factor 2⁴ − 1 of a fourth-order method */
const RICHARDSON = 15;
/** first step: at most this multiple of 1/‖H‖ (keeps the first Krylov space small) and at most T/FIRST_STEPS */
const FIRST_STEP_NORM = 20;
const FIRST_STEPS = 50;
/** Krylov tolerance as a fraction of the per-step error budget (keeps the exponentials well below the step error) */
const KRYLOV_FRACTION = 1e-2;
/** the largest Krylov dimension */
const KRYLOV_DIM = 40;
/** give up below this fraction of the duration (stalled controller) */
const MIN_STEP_FRACTION = 1e-10;

export interface LatticeDrive {
  sequence: LatticeSequence;
  /** λ(s) and λ′(s) */
  ramp: { value(s: number): number; rate(s: number): number };
  /** 1 CD, 0 bare, −1 flipped sign */
  sigma: number;
  h: number;
}

export interface PropagationStats {
  accepted: number;
  rejected: number;
  matvecs: number;
  maxKrylov: number;
  seconds: number;
}

/** Propagator of a set of states along one drive; buffers preallocated, `step` allocates nothing. */
export class LatticePropagator {
  readonly drive: LatticeDrive;
  readonly sites: number;
  private readonly u: Float64Array;
  private readonly t1: LatticeTerms;
  private readonly t2: LatticeTerms;
  private readonly ex: LatticeTerms;
  private readonly krylov: KrylovExp;
  private readonly op: (x: Float64Array, y: Float64Array) => void;
  private readonly tmpA: Float64Array;

  constructor(drive: LatticeDrive) {
    this.drive = drive;
    const M = drive.sequence.sites.length;
    this.sites = M;
    this.u = new Float64Array(M);
    this.t1 = emptyTerms(M, drive.h);
    this.t2 = emptyTerms(M, drive.h);
    this.ex = emptyTerms(M, drive.h);
    this.krylov = new KrylovExp(2 * M, KRYLOV_DIM);
    this.op = (x, y) => applyTerms(this.ex, x, y);
    this.tmpA = new Float64Array(2 * M);
  }

  /** H_σ(s) terms into out */
  hamiltonianAt(s: number, out: LatticeTerms): LatticeTerms {
    const d = this.drive;
    d.sequence.at(d.ramp.value(s), this.u);
    return cdTerms(this.u, d.ramp.rate(s), d.sigma, out);
  }

  /** ψ_out = CF4 step of length dt from s for each state (in and out may be the same arrays) */
  step(s: number, dt: number, states: readonly Float64Array[], out: readonly Float64Array[], tol: number): void {
    const [c1, c2] = CF_MAGNUS4.nodes;
    const [[a11, a12], [a21, a22]] = CF_MAGNUS4.exponents;
    this.hamiltonianAt(s + c1 * dt, this.t1);
    this.hamiltonianAt(s + c2 * dt, this.t2);
    for (let k = 0; k < states.length; k++) {
      combineTerms(a11, this.t1, a12, this.t2, this.ex);
      this.krylov.expm(this.op, states[k], dt, tol, this.tmpA);
      combineTerms(a21, this.t1, a22, this.t2, this.ex);
      this.krylov.expm(this.op, this.tmpA, dt, tol, out[k]);
    }
  }

  /**
   * Propagate `states` (interleaved complex, modified in place) from s0 to s1 with local error per unit time
   * below tol (absolute, per unit-norm state).
   */
  run(states: Float64Array[], s0: number, s1: number, tol: number, onStep?: (s: number) => void): PropagationStats {
    const start = performance.now();
    const duration = s1 - s0;
    const n = states.length;
    const big = states.map((v) => new Float64Array(v.length));
    const half = states.map((v) => new Float64Array(v.length));
    const stats: PropagationStats = { accepted: 0, rejected: 0, matvecs: 0, maxKrylov: 0, seconds: 0 };
    let norm = normBound(this.hamiltonianAt(s0 + 0.5 * duration, this.t1));
    norm = Math.max(norm, normBound(this.hamiltonianAt(s0 + 0.25 * duration, this.t2)));
    let dt = Math.min(duration / FIRST_STEPS, FIRST_STEP_NORM / norm);
    let s = s0;
    const minStep = MIN_STEP_FRACTION * duration;
    while (s < s1 - 1e-14 * duration) {
      if (s + dt > s1) dt = s1 - s;
      const budget = (tol * dt) / duration;
      const ktol = budget * KRYLOV_FRACTION;
      this.step(s, dt, states, big, ktol);
      this.step(s, dt / 2, states, half, ktol);
      this.step(s + dt / 2, dt / 2, half, half, ktol);
      let err = 0;
      for (let k = 0; k < n; k++) {
        let e2 = 0;
        const a = big[k], b = half[k];
        for (let i = 0; i < a.length; i++) e2 += (a[i] - b[i]) * (a[i] - b[i]);
        err = Math.max(err, Math.sqrt(e2) / RICHARDSON);
      }
      const factor = stepFactor(err / budget, errorExponent(ORDER));
      if (err <= budget) {
        for (let k = 0; k < n; k++) states[k].set(half[k]);
        s += dt;
        stats.accepted++;
        onStep?.(s);
      } else {
        stats.rejected++;
      }
      dt *= factor;
      if (dt < minStep) throw new NumericalError(`lattice propagation stalled at s = ${s} (step ${dt})`);
    }
    stats.matvecs = this.krylov.stats.matvecs;
    stats.maxKrylov = this.krylov.stats.maxDimUsed;
    stats.seconds = (performance.now() - start) / 1000;
    return stats;
  }
}

/** the complex-vector helpers live in linalg/complex.ts (`complexOf` is the real-to-complex copy) */
