/**
 * Tight-binding Schrödinger equation  i dψ/ds = H_σ(s) ψ  on the lattice (natural units), with
 * H_σ(s) = lattice[k² + u(ξ, λ(s)) − σ λ′(s)(4k³ + 3{u, k})] (operators.ts), σ = 1 CD, 0 bare, −1 flipped.
 *
 * Time step: the fourth-order commutator-free Magnus integrator with two exponentials
 *     ψ(s + Δ) = exp(−iΔ(α₁H₁ + α₂H₂)) exp(−iΔ(α₂H₁ + α₁H₂)) ψ(s),
 *     H_{1,2} = H(s + c_{1,2}Δ),  c_{1,2} = ½ ∓ √3/6,  α_{1,2} = ¼ ∓ √3/6
 * (Blanes & Moan, Appl. Numer. Math. 56, 1519, 2006; Alvermann & Fehske, J. Comput. Phys. 230, 5930, 2011,
 * "CF4:2"). Each exponent is again a lattice Hamiltonian (the terms are linear), applied by the Lanczos
 * exponential of linalg.ts, so the scheme is unitary up to the Krylov tolerance. Step size control by step
 * doubling (Hairer, Nørsett & Wanner, Solving ODEs I, 1993, §II.4): one step Δ against two steps Δ/2, local error
 * ‖ψ_Δ − ψ_{Δ/2,Δ/2}‖/15 per state, accepted when below tol·Δ/T (error per unit time), the finer result kept.
 */
import { applyTerms, cdTerms, combineTerms, emptyTerms, normBound, type LatticeTerms } from './operators.ts';
import { KrylovExp } from '../integrate/krylov.ts';
import type { LatticeSequence } from './sequence.ts';

/** controller safety factor, largest growth and shrink per step (common practice, cf. scipy.integrate: 0.9, 5, 0.2) */
const SAFETY = 0.9;
const GROW_MAX = 4;
const SHRINK_MIN = 0.2;
/** fourth-order method: the step-doubling estimate scales as Δ⁵ */
const ERROR_EXPONENT = 1 / 5;
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

const SQ3 = Math.sqrt(3);
const C1 = 0.5 - SQ3 / 6;
const C2 = 0.5 + SQ3 / 6;
const A1 = 0.25 - SQ3 / 6;
const A2 = 0.25 + SQ3 / 6;

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
  private readonly tmpB: Float64Array;

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
    this.tmpB = new Float64Array(2 * M);
  }

  /** H_σ(s) terms into out */
  hamiltonianAt(s: number, out: LatticeTerms): LatticeTerms {
    const d = this.drive;
    d.sequence.at(d.ramp.value(s), this.u);
    return cdTerms(this.u, d.ramp.rate(s), d.sigma, out);
  }

  /** ψ_out = CF4 step of length dt from s for each state (in and out may be the same arrays) */
  step(s: number, dt: number, states: readonly Float64Array[], out: readonly Float64Array[], tol: number): void {
    this.hamiltonianAt(s + C1 * dt, this.t1);
    this.hamiltonianAt(s + C2 * dt, this.t2);
    for (let k = 0; k < states.length; k++) {
      combineTerms(A2, this.t1, A1, this.t2, this.ex);
      this.krylov.expm(this.op, states[k], dt, tol, this.tmpA);
      combineTerms(A1, this.t1, A2, this.t2, this.ex);
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
      const factor = err === 0 ? GROW_MAX : Math.min(GROW_MAX, Math.max(SHRINK_MIN, SAFETY * Math.pow(budget / err, ERROR_EXPONENT)));
      if (err <= budget) {
        for (let k = 0; k < n; k++) states[k].set(half[k]);
        s += dt;
        stats.accepted++;
        onStep?.(s);
      } else {
        stats.rejected++;
      }
      dt *= factor;
      if (dt < minStep) throw new Error(`lattice propagation stalled at s = ${s} (step ${dt})`);
    }
    stats.matvecs = this.krylov.stats.matvecs;
    stats.maxKrylov = this.krylov.stats.maxDimUsed;
    stats.seconds = (performance.now() - start) / 1000;
    return stats;
  }
}

/** |⟨a|b⟩|² of interleaved complex vectors */
export function overlap2(a: Float64Array, b: Float64Array): number {
  let re = 0;
  let im = 0;
  for (let i = 0; i < a.length; i += 2) {
    re += a[i] * b[i] + a[i + 1] * b[i + 1];
    im += a[i] * b[i + 1] - a[i + 1] * b[i];
  }
  return re * re + im * im;
}

/** interleaved complex copy of a real vector */
export function complexOf(v: Float64Array): Float64Array {
  const out = new Float64Array(2 * v.length);
  for (let i = 0; i < v.length; i++) out[2 * i] = v[i];
  return out;
}
