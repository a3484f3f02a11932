/**
 * The outcome a lab asks for (`initial: {kind: target, …}`) as an exact N-soliton sequence (flow/targets.ts), and
 * the flow settings it fixes: the end λ (the KdV time at which the outcome is reached) and the co-moving drift
 * (which point stays put). Depths are converted to κ by depth = 2κ² (physics.md §4) in natural units.
 *
 * Validation happens here, before any job runs: equal depths (impossible for distinct bound states) are refused
 * with the nearest admissible depths, final positions a split cannot reach (positions at one λ are affine in κ²)
 * with the nearest reachable ones, and wells that would leave the box with the box they need.
 */
import type { UnitSystem } from '../units/scales.ts';
import {
  collisionSequence, kappasFromDepths, nearestAdmissible, reachableSplit, splitSequence, symmetricDrift, transportSequence,
  type TargetSequence,
} from '../flow/targets.ts';

/** requested final positions are met, and checked after the flow, to this fraction of the narrowest well width 1/κ_max
 *  (a thousandth of a width is far below what optics place; common practice) */
export const TARGET_POSITION_TOL = 1e-3;
/** requested depths are checked after the flow to this fraction of each depth (common practice) */
export const TARGET_DEPTH_TOL = 1e-3;
/** every well must stay this many widths 1/κ_min inside the periodic box (sech² falls to 2.5e-5 of its depth) */
const BOX_MARGIN_WIDTHS = 6;

/** the validated `initial` section of kind target (user units) */
export interface TargetInitial {
  kind: 'target';
  outcome: 'split' | 'merge' | 'transport' | 'collision';
  depths: number[];
  separation?: number;
  positions?: number[];
  center: number;
  distance?: number;
  gap?: number;
  hold: 'center' | 'deepest' | 'shallowest';
}

/** the κ ratio of two depths is √ of their ratio: the nearest admissible list in depth, unit-free */
export function equalDepthsMessage(depths: readonly number[]): string | null {
  const sorted = [...depths].sort((a, b) => b - a);
  const kappas = sorted.map((d) => Math.sqrt(d / 2));
  for (let i = 1; i < kappas.length; i++) {
    if (kappas[i - 1] / kappas[i] < 1 + 1e-6) {
      const near = nearestAdmissible(kappas).map((k) => 2 * k * k);
      return `the depths must all differ: each well is a distinct bound state of the merged trap, and wells of one depth never separate; nearest admissible depths: [${near.map((d) => d.toPrecision(5)).join(', ')}]`;
    }
  }
  return null;
}

/** the keys each outcome needs and refuses, as [key, message] */
export function targetShapeIssues(t: Omit<TargetInitial, 'kind'>): [string, string][] {
  const issues: [string, string][] = [];
  const n = t.depths.length;
  const need = (key: keyof Omit<TargetInitial, 'kind'>, why: string) => {
    if (t[key] === undefined) issues.push([key, `required with outcome ${t.outcome}: ${why}`]);
  };
  const refuse = (key: keyof Omit<TargetInitial, 'kind'>) => {
    if (t[key] !== undefined) issues.push([key, `not used with outcome ${t.outcome} (it takes ${OUTCOME_KEYS[t.outcome]})`]);
  };
  if (t.outcome === 'transport') {
    if (n !== 1) issues.push(['depths', 'a transport moves one well: give one depth']);
    need('distance', 'how far the well moves, in the length unit');
    (['separation', 'positions', 'gap'] as const).forEach(refuse);
    if (t.hold !== 'center') issues.push(['hold', 'not used with outcome transport (the drift is set by distance / flow.lambda_end)']);
    return issues;
  }
  if (t.outcome === 'collision') {
    if (n !== 2) issues.push(['depths', 'a collision takes two wells: give two depths']);
    need('gap', 'distance between the wells before and after they pass');
    (['separation', 'positions', 'distance'] as const).forEach(refuse);
    return issues;
  }
  if (n < 2) issues.push(['depths', `a ${t.outcome} takes at least two wells: give two or more depths`]);
  refuse('distance');
  refuse('gap');
  if (t.outcome === 'merge') {
    need('separation', 'distance between the outermost wells at the start');
    refuse('positions');
  } else if ((t.separation === undefined) === (t.positions === undefined)) {
    issues.push(['separation', 'a split takes either separation (outermost wells at the end) or positions (one per depth), not both']);
  } else if (t.positions !== undefined) {
    if (t.positions.length !== n) issues.push(['positions', `must list one final position per depth (${n})`]);
    if (t.hold !== 'center') issues.push(['hold', 'positions are reached with hold center (the wells keep their mean position)']);
  }
  return issues;
}

const OUTCOME_KEYS: Record<TargetInitial['outcome'], string> = {
  split: 'depths, separation or positions, center, hold',
  merge: 'depths, separation, center, hold',
  transport: 'one depth, center (the start), distance, and flow.lambda_end (the time the move takes)',
  collision: 'two depths, gap, center, hold',
};

/** co-moving drift (natural) that keeps the chosen point still: Σv_n = 0, or v = 4κ² + c = 0 for one well */
function holdDrift(kappas: readonly number[], hold: TargetInitial['hold']): number {
  const sorted = [...kappas].sort((a, b) => b - a);
  if (hold === 'deepest') return -4 * sorted[0] ** 2;
  if (hold === 'shallowest') return -4 * sorted[sorted.length - 1] ** 2;
  return symmetricDrift(sorted);
}

/**
 * The exact sequence of a target, in natural units. `lambdaEnd` is used by a transport only (the time it takes).
 * RangeError from flow/targets.ts when a request cannot be had; `targetFlowIssues` turns those into key messages.
 */
export function targetSequenceOf(t: TargetInitial, units: UnitSystem, lambdaEnd: number): TargetSequence {
  const L = units.lengthToNatural;
  const kappas = kappasFromDepths(t.depths.map((d) => units.energyToNatural(d)));
  const drift = holdDrift(kappas, t.hold);
  switch (t.outcome) {
    case 'split': {
      if (t.positions) {
        const width = 1 / Math.max(...kappas);
        const reach = reachableSplit(kappas, t.positions.map(L), TARGET_POSITION_TOL * width);
        return splitSequence({ kappas, separation: reach.separation, centre: reach.centre, drift });
      }
      return splitSequence({ kappas, separation: L(t.separation ?? Number.NaN), centre: L(t.center), drift });
    }
    case 'merge':
      return splitSequence({ kappas, separation: L(t.separation ?? Number.NaN), centre: L(t.center), drift, direction: 'merge' });
    case 'transport':
      return transportSequence(kappas[0], L(t.center), L(t.distance ?? Number.NaN), lambdaEnd);
    case 'collision':
      return collisionSequence([kappas[0], kappas[1]], L(t.gap ?? Number.NaN), L(t.center), drift);
  }
}

interface SettleInput {
  initial: { kind: string };
  flow: { lambda_end: number; drift: number; dispersion: string };
  grid: { length: number };
}

/**
 * Set `flow.lambda_end` and `flow.drift` of a target from its sequence (they must then be left out, except the
 * lambda_end of a transport) and require `flow.lambda_end` otherwise. Returns problem lines `<key> = … is not
 * allowed: …` / `<key> is missing: …` (no source prefix); mutates `data.flow` only when there are none.
 */
export function settleFlow(data: SettleInput, present: (path: string[]) => boolean, units: UnitSystem): string[] {
  const init = data.initial;
  const endGiven = present(['flow', 'lambda_end']);
  if ((init.kind === 'target' || init.kind === 'reflectionless') && data.flow.dispersion === 'classical') {
    return [`flow.dispersion = classical is not allowed: initial.kind ${init.kind} builds an exact KdV (quantum) sequence; use quantum`];
  }
  if (init.kind !== 'target') {
    return endGiven ? [] : ['flow.lambda_end is missing: required, must be a number > 0 (final KdV time λ, dimensionless)'];
  }
  const t = init as TargetInitial;
  const lines: string[] = [];
  if (t.outcome === 'transport' && !endGiven) lines.push('flow.lambda_end is missing: required with outcome transport, the KdV time λ the move takes (a number > 0)');
  if (t.outcome !== 'transport' && endGiven) lines.push(`flow.lambda_end = ${data.flow.lambda_end} is not allowed: initial.kind target with outcome ${t.outcome} sets it (the λ at which the outcome is reached); leave it out`);
  if (present(['flow', 'drift'])) lines.push(`flow.drift = ${data.flow.drift} is not allowed: initial.kind target sets it (initial.hold chooses which point stays put); leave it out`);
  if (lines.length > 0) return lines;
  let seq: TargetSequence;
  try {
    seq = targetSequenceOf(t, units, data.flow.lambda_end);
  } catch (err) {
    if (!(err instanceof RangeError)) throw err;
    return [unreachableLine(t, units, err)];
  }
  const half = units.lengthToNatural(data.grid.length) / 2;
  const margin = BOX_MARGIN_WIDTHS / Math.min(...seq.solitons.map((s) => s.kappa));
  const extent = Math.max(...[0, seq.tauEnd].flatMap((tau) => seq.positionsAt(tau).map(Math.abs)));
  if (extent + margin > half) {
    const need = units.lengthFromNatural(2 * (extent + margin));
    return [`grid.length = ${data.grid.length} is not allowed: the wells of initial (kind target) reach ${units.lengthFromNatural(extent).toPrecision(4)} from the box centre and need ${BOX_MARGIN_WIDTHS} widths of room; use grid.length ≥ ${need.toPrecision(4)}`];
  }
  data.flow.lambda_end = seq.tauEnd;
  data.flow.drift = units.lengthFromNatural(seq.drift);
  return [];
}

/** a request flow/targets.ts refused, stated in the user's units with what can be had */
function unreachableLine(t: TargetInitial, units: UnitSystem, err: RangeError): string {
  if (t.outcome === 'split' && t.positions) {
    const L = units.lengthToNatural;
    const kappas = kappasFromDepths(t.depths.map((d) => units.energyToNatural(d)));
    let near = '';
    try {
      near = reachableSplit(kappas, t.positions.map(L), Infinity).positions.map((p) => units.lengthFromNatural(p).toPrecision(6)).join(', ');
    } catch {
      near = 'none: the positions must differ';
    }
    return `initial.positions = [${t.positions.join(', ')}] is not allowed: a split cannot reach them (each well moves at a speed set by its depth, so final positions are affine in the depths); nearest reachable (deepest first): [${near}]`;
  }
  return `initial (kind target, outcome ${t.outcome}) is not allowed: ${err.message}`;
}
