/**
 * Exact solution of the dispersionless (Hopf, inviscid Burgers) flow u_τ = 6uu_ξ before breaking, by the method
 * of characteristics (physics.md §4; Whitham, Linear and Nonlinear Waves, 1974, §2.1): u is constant along
 * ξ + 6uτ = const, so
 *
 *     u(ξ, τ) = u₀(ζ),   ζ − 6τ u₀(ζ) = ξ                                           (characteristic foot ζ)
 *     u_ξ = u₀′/(1 − 6τu₀′),  u_ξξ = u₀″/(1 − 6τu₀′)³,
 *     u_ξξξ = u₀‴/(1 − 6τu₀′)⁴ + 18τ u₀″²/(1 − 6τu₀′)⁵            (all at ζ)
 *
 * The map ζ ↦ ζ − 6τu₀(ζ) is increasing while 1 − 6τu₀′ > 0 everywhere, i.e. for τ < τ_b = 1/max(6u₀′)
 * (first crossing of characteristics), so the foot is unique and is found per point by safeguarded Newton
 * iteration inside the bracket ζ ∈ ξ + 6τ[min u₀, max u₀] (bisection when Newton leaves it).
 */
import type { Profile1D, SequenceField } from './field.ts';
import { FourierProfile } from './field.ts';
import type { Grid } from '../spectral/grid.ts';
import { breakingTime } from '../flow/breaking.ts';

/** Newton stops when its step is below this (relative to 1 + |ζ|): round-off level */
export const FOOT_TOLERANCE = 1e-15;
/** iteration cap of the foot solver (bisection alone halves a bracket of width ≤ 1e3 to ε in ~60 steps) */
export const FOOT_MAX_ITERATIONS = 100;
/** the bracket is widened by this fraction of the value range: the interpolant may overshoot the samples */
export const BRACKET_MARGIN = 0.05;
/** Newton iterations refining the steepest point u₀″ = 0 of the initial profile */
export const STEEPEST_ITERATIONS = 20;

export class BreakingError extends RangeError {}

/** foot ζ of the characteristic through (x, τ): ζ − 6τu₀(ζ) = x. `buf` receives u₀ … u₀‴ at ζ. */
export function characteristicFoot(u0: Profile1D, x: number, tau: number, buf: Float64Array, guess?: number): number {
  if (tau === 0) {
    u0.evaluate(x, buf);
    return x;
  }
  const margin = BRACKET_MARGIN * (u0.max - u0.min) + 1e-12;
  const a = x + 6 * tau * (u0.min - margin);
  const b = x + 6 * tau * (u0.max + margin);
  let lo = Math.min(a, b), hi = Math.max(a, b);
  let z = guess ?? x;
  if (!(z > lo && z < hi)) {
    u0.evaluate(x, buf);
    z = Math.min(hi, Math.max(lo, x + 6 * tau * buf[0]));
  }
  for (let it = 0; it < FOOT_MAX_ITERATIONS; it++) {
    u0.evaluate(z, buf);
    const g = z - 6 * tau * buf[0] - x;
    const dg = 1 - 6 * tau * buf[1];
    if (!(dg > 0)) throw new BreakingError(`characteristics have crossed at ξ ≈ ${x} (τ = ${tau} is past breaking: 1 − 6τu₀′ = ${dg})`);
    if (g === 0) return z;
    if (g > 0) hi = Math.min(hi, z);
    else lo = Math.max(lo, z);
    const newton = -g / dg;
    if (Math.abs(newton) <= FOOT_TOLERANCE * (1 + Math.abs(z))) {
      z += newton;
      u0.evaluate(z, buf);
      return z;
    }
    let next = z + newton;
    if (!(next >= lo && next <= hi)) next = 0.5 * (lo + hi);
    z = next;
  }
  u0.evaluate(z, buf);
  return z;
}

/**
 * u(x_j, τ) of the Hopf flow by characteristics, for every x_j. Throws BreakingError when τ is at or past the
 * first breaking 1/max(6u₀′) (the maximum taken over the x_j and refined, `profileBreaking`), where the foot is no
 * longer unique. `breaking` skips that search when the caller knows τ_b.
 */
export function hopfCharacteristics(u0: Profile1D, xs: Float64Array, tau: number, out: Float64Array = new Float64Array(xs.length), breaking?: number): Float64Array {
  const tb = breaking ?? profileBreaking(u0, xs).lambda;
  if (tau >= tb) throw new BreakingError(`τ = ${tau} is at or past the first breaking τ_b = 1/max(6u₀′) = ${tb}: characteristics have crossed`);
  const buf = new Float64Array(4);
  let guess: number | undefined;
  for (let j = 0; j < xs.length; j++) {
    guess = characteristicFoot(u0, xs[j], tau, buf, guess === undefined ? undefined : guess + (j > 0 ? xs[j] - xs[j - 1] : 0));
    out[j] = buf[0];
  }
  return out;
}

/**
 * First breaking λ of the Hopf flow, τ_b = 1/max(6u₀′) over u₀′ > 0 (flow/breaking.ts), for a profile sampled at
 * ascending xs: the largest sampled slope refined between the samples by Newton's method on u₀″ = 0. Returns the
 * steepest point and slope too; Infinity when u₀′ ≤ 0 at every sample.
 */
export function profileBreaking(u0: Profile1D, xs: Float64Array): { lambda: number; position: number; slope: number } {
  const buf = new Float64Array(4);
  let j0 = 0;
  let best = -Infinity;
  for (let j = 0; j < xs.length; j++) {
    u0.evaluate(xs[j], buf);
    if (buf[1] > best) {
      best = buf[1];
      j0 = j;
    }
  }
  if (!(best > 0)) return { lambda: Infinity, position: NaN, slope: 0 };
  const dx = xs.length > 1 ? Math.abs(xs[1] - xs[0]) : 1;
  let x = xs[j0];
  for (let it = 0; it < STEEPEST_ITERATIONS; it++) {
    u0.evaluate(x, buf);
    if (!(buf[3] < 0)) break; // not a maximum of u₀′ under Newton: keep the sampled value
    const step = buf[2] / buf[3];
    if (Math.abs(step) > dx) break;
    x -= step;
    if (Math.abs(step) < 1e-15 * (1 + Math.abs(x))) break;
  }
  u0.evaluate(x, buf);
  const slope = Math.max(buf[1], best);
  return { lambda: breakingTime(slope), position: buf[1] >= best ? x : xs[j0], slope };
}

/**
 * Growth of the curvature of the Hopf sequence at λ before breaking: from the characteristics formulas of the
 * module doc u_ξξ = u₀″q³ with q = 1/(1 − λ/λ_b) at the steepest point, so the curvature grows by q³.
 */
export function hopfCurvatureGrowth(lambda: number, lambdaBreak: number): number {
  const q = 1 / (1 - lambda / lambdaBreak);
  return q * q * q;
}

/** `profileBreaking` of grid samples u₀ (Fourier interpolant). */
export function hopfBreaking(grid: Grid, u0: Float64Array): { lambda: number; position: number; slope: number } {
  return profileBreaking(new FourierProfile(grid, u0), grid.x);
}

/**
 * The exact Hopf sequence u(x, λ) from an initial profile (characteristics), with u, u_x, u_xx, u_xxx, as a
 * SequenceField (for trajectories under the classical CD Hamiltonian and for tests). A co-moving drift c
 * (u_λ = 6uu_x − cu_x) shifts the solution: u(x, λ) = w(x − cλ, λ) with w the driftless solution.
 */
export function characteristicsSequence(u0: Profile1D, drift = 0): SequenceField {
  let tau = 0;
  const buf = new Float64Array(4);
  return {
    get lambda() {
      return tau;
    },
    min: u0.min,
    max: u0.max,
    select(lambda: number) {
      tau = lambda;
    },
    evaluate(x: number, out: Float64Array) {
      characteristicFoot(u0, x - drift * tau, tau, buf);
      const q = 1 / (1 - 6 * tau * buf[1]);
      const q2 = q * q;
      out[0] = buf[0];
      out[1] = buf[1] * q;
      out[2] = buf[2] * q2 * q;
      out[3] = buf[3] * q2 * q2 + 18 * tau * buf[2] * buf[2] * q2 * q2 * q;
    },
  };
}
