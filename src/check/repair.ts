/**
 * The admissible sequence nearest in spirit to a given one: integrate (★ₙ)
 *     u_λ = â (−(3/2) u u_ξ + ¼ u_ξξξ) − ĉ u_ξ
 * from the first frame with fitted coefficients, using the flow integrator of flow/kdv.ts
 * (u_t + αuu_x + βu_xxx + c u_x = 0 with α = (3/2)â, β = −â/4, drift ĉ; Fourier pseudo-spectral ETDRK4,
 * Kassam & Trefethen, SIAM J. Sci. Comput. 26, 1214, 2005). Two modes:
 *  - 'median':    constant â, ĉ = medians over the fitted frames (robust against a few bad frames);
 *  - 'piecewise': on each interval [λ_k, λ_{k+1}] the mean of the two frames' fits (λ-dependent a(λ), c(λ),
 *                 piecewise constant, so second order in the frame spacing for smooth a(λ), c(λ)).
 */
import { integrateFlow, type FlowEquation } from '../flow/kdv.ts';
import type { Grid } from '../spectral/grid.ts';
import type { FrameFit } from './admissibility.ts';

/** local error per step of the repair flow, relative to max|u| (the design default, common practice) */
export const REPAIR_TOLERANCE = 1e-10;

export type RepairMode = 'median' | 'piecewise';

/** (★ₙ) with coefficients â, ĉ as the flow integrator's equation */
export function flowEquationOf(aHat: number, cHat: number): FlowEquation {
  return { alpha: 1.5 * aHat, beta: -0.25 * aHat, drift: cHat };
}

export interface Repair {
  mode: RepairMode;
  /** coefficients used on each interval k → k+1 (one entry per interval) */
  aHat: number[];
  cHat: number[];
  frames: Float64Array[];
  /** max |u_in − u_rep| over frames and points, E₀ */
  maxDistance: number;
  /** sqrt(Σ|u_in − u_rep|²) / sqrt(Σ|u_in|²) over all frames */
  relativeL2: number;
  /** per frame relative L² distance */
  frameRelative: number[];
  steps: number;
}

function median(v: number[]): number {
  const s = [...v].sort((a, b) => a - b);
  const h = s.length >> 1;
  return s.length === 0 ? 0 : s.length % 2 ? s[h] : 0.5 * (s[h - 1] + s[h]);
}

/** Integrate (★ₙ) from frames[0] through the sequence's λ values (see module doc). */
export function repairSequence(grid: Grid, lambda: readonly number[], frames: readonly Float64Array[], fits: readonly FrameFit[], mode: RepairMode, tolerance = REPAIR_TOLERANCE): Repair {
  const intervals = lambda.length - 1;
  const aHat: number[] = [];
  const cHat: number[] = [];
  const out: Float64Array[] = [Float64Array.from(frames[0])];
  let steps = 0;
  const usable = fits.filter((f) => !f.static);
  if (mode === 'median') {
    const a = median(usable.filter((f) => !f.degenerate).map((f) => f.aHat));
    const c = median((usable.some((f) => !f.degenerate) ? usable.filter((f) => !f.degenerate) : usable).map((f) => f.cHat));
    for (let k = 0; k < intervals; k++) {
      aHat.push(a);
      cHat.push(c);
    }
    if (a !== 0 || c !== 0) {
      const run = integrateFlow(grid, flowEquationOf(a, c), frames[0], { tolerance, frames: lambda.map((l) => l - lambda[0]), detectBreaking: false });
      steps = run.stats.accepted;
      for (let k = 1; k <= intervals; k++) out.push(run.frames[k]);
    } else for (let k = 1; k <= intervals; k++) out.push(Float64Array.from(frames[0]));
  } else {
    let u = out[0];
    for (let k = 0; k < intervals; k++) {
      const a = 0.5 * (fits[k].aHat + fits[k + 1].aHat);
      const c = 0.5 * (fits[k].cHat + fits[k + 1].cHat);
      aHat.push(a);
      cHat.push(c);
      if (a !== 0 || c !== 0) {
        const run = integrateFlow(grid, flowEquationOf(a, c), u, { tolerance, frames: [lambda[k + 1] - lambda[k]], detectBreaking: false });
        steps += run.stats.accepted;
        u = run.frames[0];
      } else u = Float64Array.from(u);
      out.push(u);
    }
  }
  let maxDistance = 0, num = 0, den = 0;
  const frameRelative: number[] = [];
  for (let k = 0; k < frames.length; k++) {
    let fn = 0, fd = 0;
    const a = frames[k], b = out[k];
    for (let j = 0; j < a.length; j++) {
      const d = a[j] - b[j];
      maxDistance = Math.max(maxDistance, Math.abs(d));
      fn += d * d;
      fd += a[j] * a[j];
    }
    num += fn;
    den += fd;
    frameRelative.push(fd > 0 ? Math.sqrt(fn / fd) : Math.sqrt(fn));
  }
  return { mode, aHat, cHat, frames: out, maxDistance, relativeL2: den > 0 ? Math.sqrt(num / den) : Math.sqrt(num), frameRelative, steps };
}
