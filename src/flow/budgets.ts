/**
 * Budgets of a sequence, as pure functions of sampled frames u(ξ_j) (natural units; any common sampling).
 *
 * - Depth (laser power): the deepest value −min u over all frames against the starting frame's; the optical power
 *   of a far-detuned dipole trap is proportional to its depth (the dipole potential U ∝ I/Δ; review in Adv. At.
 *   Mol. Opt. Phys. 42, 95, 2000, eq. 10), so the ratio is the power the sequence needs relative to the starting trap.
 * - Narrowest feature (optical resolution): the smallest full width at half depth of any well in any frame. A well
 *   is a local minimum u_m < 0 deeper than WELL_FLOOR of the frame's depth; its width runs between the points where
 *   u rises to u_m/2 (linear interpolation between samples), or to the neighbouring local maximum when u turns
 *   back before reaching u_m/2 (touching wells). For a soliton −2κ² sech²(κξ) it is 2 arccosh(√2)/κ ≈ 1.7627/κ.
 */

/** local minima shallower than this fraction of the frame's depth are ripples, not wells (common practice) */
export const WELL_FLOOR = 1e-3;

export interface DepthBudget {
  /** −min u of the first frame */
  startDepth: number;
  /** largest −min u over all frames, and where */
  deepest: number;
  frame: number;
  /** deepest / startDepth */
  ratio: number;
}

export function depthBudget(frames: readonly Float64Array[]): DepthBudget {
  if (frames.length === 0) throw new RangeError('budgets: no frames');
  const depthOf = (u: Float64Array) => {
    let m = 0;
    for (let j = 0; j < u.length; j++) m = Math.min(m, u[j]);
    return -m;
  };
  const startDepth = depthOf(frames[0]);
  let deepest = startDepth;
  let frame = 0;
  frames.forEach((u, i) => {
    const d = depthOf(u);
    if (d > deepest) {
      deepest = d;
      frame = i;
    }
  });
  return { startDepth, deepest, frame, ratio: startDepth > 0 ? deepest / startDepth : Infinity };
}

/** full widths at half depth of the wells of one frame sampled at ascending positions x */
export function wellWidths(x: ArrayLike<number>, u: ArrayLike<number>): { position: number; depth: number; width: number }[] {
  const n = u.length;
  if (x.length !== n || n < 3) throw new RangeError(`budgets: need ≥ 3 samples and as many positions, got ${n} and ${x.length}`);
  let frameDepth = 0;
  for (let j = 0; j < n; j++) frameDepth = Math.min(frameDepth, u[j]);
  const out: { position: number; depth: number; width: number }[] = [];
  for (let j = 1; j < n - 1; j++) {
    if (!(u[j] < u[j - 1] && u[j] <= u[j + 1] && u[j] < WELL_FLOOR * frameDepth)) continue;
    const half = u[j] / 2;
    const edge = (dir: 1 | -1): number => {
      let i = j;
      while (i + dir >= 0 && i + dir < n) {
        const next = u[i + dir];
        if (next >= half) return x[i] + ((half - u[i]) / (next - u[i])) * (x[i + dir] - x[i]);
        if (next < u[i]) return x[i]; // turned back: a touching well
        i += dir;
      }
      return x[i];
    };
    out.push({ position: x[j], depth: -u[j], width: edge(1) - edge(-1) });
  }
  return out;
}

export interface ResolutionBudget {
  /** smallest full width at half depth over all wells of all frames (Infinity when no frame has a well) */
  narrowest: number;
  frame: number;
  position: number;
}

export function narrowestFeature(x: ArrayLike<number>, frames: readonly Float64Array[]): ResolutionBudget {
  let best: ResolutionBudget = { narrowest: Infinity, frame: -1, position: NaN };
  frames.forEach((u, i) => {
    for (const w of wellWidths(x, u)) if (w.width < best.narrowest) best = { narrowest: w.width, frame: i, position: w.position };
  });
  return best;
}
