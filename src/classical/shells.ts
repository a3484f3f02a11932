/**
 * Soliton trajectories for display: which wells of the last frame are separated solitons, and the straight
 * lines they travel along.
 *
 * Each bound state −κ² of the initial trap becomes a soliton of depth 2κ² moving at speed 4κ² in λ (natural
 * units; physics.md §3–§4; Gardner, Greene, Kruskal & Miura, Phys. Rev. Lett. 19, 1095, 1967). Far from the
 * others a soliton moves on the straight line x = x_end + v(λ − λ_end), with x_end its position in the last
 * frame. The phase shifts of soliton collisions bend the true path near the origin; the straight line is the
 * asymptote drawn in the space–time map.
 */

/** a well counts as a separated soliton when its depth is within this fraction of the predicted depth 2κ²: a
 * well still merged with its neighbours is noticeably shallower or deeper (common practice for the display) */
export const SOLITON_DEPTH_MATCH = 0.1;
/** points along each drawn trajectory (straight lines: any count ≥ 2 is exact; more keep the clip smooth) */
export const TRAJECTORY_POINTS = 51;

export interface PredictedSoliton {
  /** depth 2κ² */
  depth: number;
  /** speed 4κ² per unit λ */
  speed: number;
}

export interface Well {
  position: number;
  depth: number;
}

/**
 * Pair each well with the unused prediction of nearest depth, in well order; keep the pair when the depths
 * agree to SOLITON_DEPTH_MATCH of the predicted depth (otherwise the well is not yet a separated soliton).
 */
export function separatedSolitons<P extends PredictedSoliton>(predicted: readonly P[], wells: readonly Well[]): { well: Well; soliton: P }[] {
  const out: { well: Well; soliton: P }[] = [];
  const used = new Set<number>();
  for (const well of wells) {
    let best = -1;
    for (let i = 0; i < predicted.length; i++) {
      if (used.has(i)) continue;
      if (best < 0 || Math.abs(predicted[i].depth - well.depth) < Math.abs(predicted[best].depth - well.depth)) best = i;
    }
    if (best < 0) continue;
    const p = predicted[best];
    if (Math.abs(p.depth - well.depth) > SOLITON_DEPTH_MATCH * p.depth) continue;
    used.add(best);
    out.push({ well, soliton: p });
  }
  return out;
}

/** x = x_end + v(λ − λ_end) at TRAJECTORY_POINTS λ from 0 to λ_end, keeping the points with x in [xmin, xmax] */
export function straightTrajectory(xEnd: number, speed: number, lambdaEnd: number, xmin: number, xmax: number): { x: number[]; lambda: number[] } {
  const x: number[] = [];
  const lambda: number[] = [];
  const steps = TRAJECTORY_POINTS - 1;
  for (let i = 0; i <= steps; i++) {
    const l = (lambdaEnd * i) / steps;
    const xi = xEnd + speed * (l - lambdaEnd);
    if (xi >= xmin && xi <= xmax) {
      x.push(xi);
      lambda.push(l);
    }
  }
  return { x, lambda };
}
