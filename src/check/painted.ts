/**
 * The painted correction of a sequence u(ξ, λ_k): the best momentum-linear correction ½{g, k} (the variational
 * fit of check/variational.ts with the k³ column left out, a = 0, on the occupied low-energy subspace; variational
 * gauge potentials, PNAS 114, E3909, 2017; physics.md §7), as a velocity field g(ξ, λ) that quantum/painted.ts turns
 * into the local potential V_loc. It lives at the check layer because the fit does. Natural units (physics.md §3).
 *
 *     g(ξ, λ) = Σ_c θ_c(λ) φ_c(ξ, λ),   φ = [u(·, λ), 1, P₁(2ξ/L), …],
 *     ∂_λg = Σ_c θ′_c(λ) φ_c + θ_u(λ) ∂_λu
 *
 * u(ξ, λ) and θ(λ) are cubic Hermite interpolants in λ through the frames and their λ-derivatives (check/drive.ts
 * SequenceInterpolant: the given rates or Fornberg derivatives for u, Fornberg derivatives for θ), so ∂_λg is the
 * exact derivative of a C¹ interpolant and the painted potential is continuous in time.
 */
import type { Grid } from '../spectral/grid.ts';
import type { VelocityField } from '../quantum/painted.ts';
import { SequenceInterpolant } from './drive.ts';
import { evaluateG, legendreTable, variationalFit, type VariationalFit, type VariationalOptions } from './variational.ts';

export interface PaintedVariationalField extends VelocityField {
  /** the a = 0 fit at the frames */
  fit: VariationalFit;
  /** u(ξ, λ) between the frames (the potential the painted drive adds V_loc to) */
  sequence: SequenceInterpolant;
}

/**
 * The variational ½{g, k} (a = 0) of a sequence as a velocity field (module doc). `rates`: ∂_λu at the frames
 * (default Fornberg); options as variationalFit (the `cubic` option is fixed to false).
 */
export function paintedVariationalField(grid: Grid, lambda: readonly number[], frames: readonly Float64Array[], opts: Omit<VariationalOptions, 'cubic'> = {}, rates?: readonly Float64Array[]): PaintedVariationalField {
  const sequence = new SequenceInterpolant(lambda, frames, rates);
  const fit = variationalFit(grid, lambda, frames, { ...opts, cubic: false }, sequence.rates);
  const theta = new SequenceInterpolant(lambda, fit.frames.map((f) => Float64Array.from(f.coefficients)));
  const legendre = legendreTable(grid, fit.legendre);
  const n = grid.n;
  const u = new Float64Array(n), uLambda = new Float64Array(n);
  const th = new Float64Array(fit.basis.length), thLambda = new Float64Array(fit.basis.length);
  return {
    grid, fit, sequence,
    at(l: number, g: Float64Array, gLambda: Float64Array): void {
      sequence.at(l, u);
      sequence.rateAt(l, uLambda);
      theta.at(l, th);
      theta.rateAt(l, thLambda);
      evaluateG(th, u, legendre, g);
      evaluateG(thLambda, u, legendre, gLambda);
      for (let j = 0; j < n; j++) gLambda[j] += th[0] * uLambda[j];
    },
  };
}
