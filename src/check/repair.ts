/**
 * The admissible sequence nearest to a given one under its own flow fit (physics.md §9): start from the first
 * frame and apply each interval's fitted map, u_{k+1} = S_{s_k} Φ_{Δτ_k}(u_k) (check/flowfit.ts), so the
 * repaired frames follow the KdV flow of physics.md §3 with the fitted time steps and drifts. For an admissible
 * input every map carries frame k to frame k+1 to its residual, and the repaired sequence equals the input to the
 * flow's tolerance.
 */
import type { Grid } from '../spectral/grid.ts';
import { applyIntervalMap } from './flowfit.ts';

/** local error per step of the repair flow, relative to max|u| (the fit's flow tolerance: the same maps) */
export { FLOW_TOLERANCE as REPAIR_TOLERANCE } from './flowfit.ts';

export interface Repair {
  frames: Float64Array[];
  /** max |u_in − u_rep| over frames and points, E₀ */
  maxDistance: number;
  /** sqrt(Σ|u_in − u_rep|²) / sqrt(Σ|u_in|²) over all frames */
  relativeL2: number;
  /** per frame relative L² distance */
  frameRelative: number[];
  steps: number;
}

/** Integrate from frames[0] through the fitted maps (Δτ_k, shift s_k) of every interval (see module doc). */
export function repairSequence(grid: Grid, frames: readonly Float64Array[], maps: readonly { dtau: number; shift: number }[], tolerance?: number): Repair {
  if (maps.length !== frames.length - 1) throw new RangeError(`repair: ${maps.length} interval maps for ${frames.length} frames`);
  const out: Float64Array[] = [Float64Array.from(frames[0])];
  let steps = 0;
  for (const [k, m] of maps.entries()) {
    const next = applyIntervalMap(grid, out[k], frames[k + 1], m.dtau, m.shift, tolerance);
    steps += next.steps;
    out.push(next.frame);
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
  return { frames: out, maxDistance, relativeL2: den > 0 ? Math.sqrt(num / den) : Math.sqrt(num), frameRelative, steps };
}
