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
 *
 * The fit sees g only through gψ_m of the occupied states: where they vanish, g is free (its Legendre terms grow
 * towards the box edges) and its painted potential −λ̇²g²/4 − ½λ̈G… would be huge where no atom is. So g is confined
 * to the states' support: g_w = χ g, ∂_λg_w = χ ∂_λg + g ∂_λχ, with χ a C^∞ step in log ρ_S of the fit's weighted
 * density ρ_S = Σ w_m ψ_m² at the frames (0 below WINDOW_LOW·max ρ_S, 1 above WINDOW_HIGH·max ρ_S), cubic-Hermite
 * interpolated in λ like θ. The states feel the change only where their density is below WINDOW_HIGH of its peak.
 */
import type { Grid } from '../spectral/grid.ts';
import { smoothStep, type VelocityField } from '../quantum/painted.ts';
import { SequenceInterpolant } from './drive.ts';
import { evaluateG, legendreTable, subspaceOf, subspaceWeights, variationalFit, type VariationalFit, type VariationalOptions } from './variational.ts';

/** the support window χ is 1 where the occupied density exceeds WINDOW_HIGH of its peak and 0 below WINDOW_LOW:
 *  the fidelity the window can cost is of the order of the weight below WINDOW_HIGH (common practice) */
export const WINDOW_HIGH = 1e-10;
export const WINDOW_LOW = 1e-14;

/** χ at one frame: the step in log₁₀ of the fit's weighted density (module doc) */
function supportWindow(grid: Grid, u: Float64Array, opts: Omit<VariationalOptions, 'cubic'>, states: number): Float64Array {
  const sub = subspaceOf(grid, u, states, opts.eigenMethod);
  const w = subspaceWeights(sub.energies, opts.temperature);
  const rho = new Float64Array(grid.n);
  sub.vectors.forEach((v, m) => { for (let j = 0; j < grid.n; j++) rho[j] += w[m] * v[j] * v[j]; });
  let peak = 0;
  for (const r of rho) peak = Math.max(peak, r);
  const lo = Math.log10(WINDOW_LOW), hi = Math.log10(WINDOW_HIGH);
  return rho.map((r) => smoothStep((Math.log10(r / peak + 1e-300) - lo) / (hi - lo)));
}

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
  const window = new SequenceInterpolant(lambda, frames.map((f) => supportWindow(grid, f, opts, fit.states)));
  const legendre = legendreTable(grid, fit.legendre);
  const n = grid.n;
  const u = new Float64Array(n), uLambda = new Float64Array(n), chi = new Float64Array(n), chiLambda = new Float64Array(n);
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
      window.at(l, chi);
      window.rateAt(l, chiLambda);
      for (let j = 0; j < n; j++) {
        const gl = gLambda[j] + th[0] * uLambda[j];
        gLambda[j] = chi[j] * gl + g[j] * chiLambda[j];
        g[j] *= chi[j];
      }
    },
  };
}
