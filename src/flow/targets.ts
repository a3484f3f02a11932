/**
 * Exact N-soliton sequences built from the outcome a lab asks for (natural units, physics.md §3–§4).
 *
 * Every sequence is a Kay–Moses N-soliton (flow/solitons.ts) seen in a frame moving with the co-moving drift c
 * of the design flow u_τ = 6uu_ξ − u_ξξξ − c u_ξ (flow/kdv.ts, naturalFlowEquation): u(ξ, τ) = u_KM(ξ − cτ, τ).
 * Soliton n then travels along ξ = o_n + v_n τ with v_n = 4κ_n² + c; the offsets o_n before (τ → −∞) and after
 * (τ → +∞) the interaction differ by the pairwise phase shifts (1/κ_n) ln((κ_n + κ_m)/|κ_n − κ_m|)
 * (Drazin & Johnson, Solitons: an Introduction, 1989, §5; physics.md §4), which `solitonAsymptotes` gives.
 *
 * - Symmetric drift: the mean well position Σ_n(o_n + v_nτ)/N stays put when Σ v_n = 0, i.e.
 *   c = −(4/N) Σ κ_n²  (two wells: c = −2(κ₁² + κ₂²), equal and opposite speeds ±2(κ₁² − κ₂²)).
 * - Merged well: the N-soliton that is even about ξ_c (`mergedCentres`, flow/reflectionless.ts): each soliton's
 *   incoming and outgoing lines lie symmetrically about ξ_c.
 * - Split: the merged well at τ = 0; the wells separate at 4(κ_n² − κ_m²) per unit τ, so the positions reachable
 *   at any τ are (up to exponentially small overlaps) affine in κ_n²: p_n = A + 4τκ_n².
 * - Merge: the mirror image; separated wells at τ = 0 become the merged well at the final τ.
 * - Transport: one soliton moved by D; speed 4κ² + c.
 * - Collision: a deeper well starting behind a shallower one passes through it; both come out shifted.
 *
 * Equal depths cannot be had: the bound states of a 1-D potential are non-degenerate, and two solitons of one κ
 * would never separate (relative speed 4(κ_n² − κ_m²) = 0). Such requests fail with a RangeError naming the
 * nearest admissible κ (`nearestAdmissible`).
 */
import { NumericalError } from '../core/errors.ts';
import { nSolitonPotential, solitonAsymptotes, type SolitonSpec } from './solitons.ts';
import { mergedCentres } from './reflectionless.ts';

/** default smallest ratio of neighbouring κ offered for near-equal requests (depth ratio 1.1: wells separate
 *  at 4(κ₁² − κ₂²) ≈ 0.4κ² per unit τ) */
export const MIN_KAPPA_RATIO = 1.05;
/** well positions are refined to this fraction of the narrowest width 1/κ_max */
const POSITION_TOL = 1e-11;
/** the requested separation is met to this fraction of the narrowest width (secant on τ) */
const SEPARATION_TOL = 1e-9;
/** secant iterations on τ at most */
const MAX_SECANT = 60;

/** inverse widths of solitons of depth 2κ² */
export function kappasFromDepths(depths: readonly number[]): number[] {
  if (depths.some((d) => !(d > 0) || !Number.isFinite(d))) throw new RangeError(`target wells: depths must be positive and finite, got [${depths.join(', ')}]`);
  return depths.map((d) => Math.sqrt(d / 2));
}

/** the κ list sorted descending with every ratio κ_n/κ_{n+1} ≥ ratio, lowering the shallower wells only */
export function nearestAdmissible(kappas: readonly number[], ratio = MIN_KAPPA_RATIO): number[] {
  const out = [...kappas].sort((a, b) => b - a);
  for (let i = 1; i < out.length; i++) out[i] = Math.min(out[i], out[i - 1] / ratio);
  return out;
}

function checkKappas(kappas: readonly number[]): number[] {
  if (kappas.length === 0 || kappas.some((k) => !(k > 0) || !Number.isFinite(k))) throw new RangeError(`target wells: κ must be a non-empty list of positive numbers, got [${kappas.join(', ')}]`);
  const sorted = [...kappas].sort((a, b) => b - a);
  for (let i = 1; i < sorted.length; i++) {
    if (sorted[i - 1] / sorted[i] < 1 + 1e-6) {
      const near = nearestAdmissible(sorted);
      throw new RangeError(
        `target wells: κ = ${sorted[i - 1]} and ${sorted[i]} are (nearly) equal; equal depths are impossible for distinct ` +
          `bound states and such wells never separate. Nearest admissible κ (ratio ≥ ${MIN_KAPPA_RATIO}): [${near.map((k) => k.toPrecision(6)).join(', ')}]`,
      );
    }
  }
  return sorted;
}

/** drift c that keeps the mean well position fixed: c = −(4/N) Σ κ² */
export function symmetricDrift(kappas: readonly number[]): number {
  return (-4 / kappas.length) * kappas.reduce((s, k) => s + k * k, 0);
}

export interface TargetSequence {
  /** κ descending, centres in the Kay–Moses convention of flow/solitons.ts */
  solitons: SolitonSpec[];
  /** co-moving drift c of the flow (pass to naturalFlowEquation('quantum', drift)) */
  drift: number;
  /** τ at which the requested configuration is reached */
  tauEnd: number;
  /** u(ξ, τ) on the given points */
  potential(x: ArrayLike<number>, tau: number): Float64Array;
  /** frames at the given τ values */
  frames(x: ArrayLike<number>, taus: readonly number[]): Float64Array[];
  /** positions of the well minima at τ (one per soliton, in the order of `solitons`; near a collision two may merge) */
  positionsAt(tau: number): number[];
  /** what was chosen and why, one line each */
  notes: string[];
}

function makeSequence(solitons: SolitonSpec[], drift: number, tauEnd: number, notes: string[]): TargetSequence {
  const potential = (x: ArrayLike<number>, tau: number) => nSolitonPotential(solitons, Float64Array.from(x, (v) => v - drift * tau), tau);
  return {
    solitons, drift, tauEnd, potential, notes,
    frames: (x, taus) => taus.map((t) => potential(x, t)),
    positionsAt: (tau) => wellPositions(solitons, drift, tau),
  };
}

/** asymptotic lab position of each soliton at τ (outgoing lines for τ ≥ 0 after the interaction; `side` chooses) */
function asymptoticPositions(solitons: readonly SolitonSpec[], drift: number, tau: number, side: 'minus' | 'plus'): number[] {
  return solitonAsymptotes(solitons).map((a) => (side === 'plus' ? a.offsetPlus : a.offsetMinus) + (a.speed + drift) * tau);
}

/**
 * Minima of u near each soliton's asymptotic position, by golden-section search (Kiefer 1953; Press et al.,
 * Numerical Recipes, 3rd ed. 2007, §10.2) in a bracket of ±0.75 widths about the nearer asymptote.
 */
export function wellPositions(solitons: readonly SolitonSpec[], drift: number, tau: number): number[] {
  const plus = asymptoticPositions(solitons, drift, tau, 'plus');
  const minus = asymptoticPositions(solitons, drift, tau, 'minus');
  const kMax = Math.max(...solitons.map((s) => s.kappa));
  const at = (xi: number) => nSolitonPotential(solitons, [xi - drift * tau], tau)[0];
  const g = (Math.sqrt(5) - 1) / 2;
  return solitons.map((s, i) => {
    // before the interaction the incoming line holds the well, after it the outgoing one: take the deeper point
    const guess = Math.abs(at(plus[i])) >= Math.abs(at(minus[i])) ? plus[i] : minus[i];
    let a = guess - 0.75 / s.kappa;
    let b = guess + 0.75 / s.kappa;
    let c = b - g * (b - a);
    let d = a + g * (b - a);
    let fc = at(c);
    let fd = at(d);
    while (b - a > POSITION_TOL / kMax) {
      if (fc < fd) {
        b = d; d = c; fd = fc; c = b - g * (b - a); fc = at(c);
      } else {
        a = c; c = d; fc = fd; d = a + g * (b - a); fd = at(d);
      }
    }
    return 0.5 * (a + b);
  });
}

/** secant on τ for f(τ) = 0 from two starting values; NumericalError when it does not converge */
function secant(f: (tau: number) => number, t0: number, t1: number, tol: number): number {
  let [a, b] = [t0, t1];
  let [fa, fb] = [f(a), f(b)];
  for (let it = 0; it < MAX_SECANT; it++) {
    if (Math.abs(fb) <= tol) return b;
    const next = b - (fb * (b - a)) / (fb - fa);
    [a, fa] = [b, fb];
    b = next;
    fb = f(b);
  }
  throw new NumericalError(`target wells: the requested separation was not met to ${tol} after ${MAX_SECANT} secant steps`);
}

export interface SplitRequest {
  /** inverse widths (or use kappasFromDepths); distinct */
  kappas: readonly number[];
  /** distance between the outermost wells at the end (split) or at the start (merge) */
  separation: number;
  /** mean position of the separated wells (fixed in time under the symmetric drift); the merged well sits at
   *  centre + the mean of the phase shifts (see notes) */
  centre?: number;
  /** 'split' (default): one merged well at τ = 0 separates; 'merge': separated wells meet at the end */
  direction?: 'split' | 'merge';
  /** co-moving drift; default the symmetric drift −(4/N)Σκ² */
  drift?: number;
}

/**
 * Split one well into N (or merge N into one) so that the outermost wells are `separation` apart at the end
 * (split) or at the start (merge). The merged instant (τ = 0 for a split, the end for a merge) shows the even
 * N-soliton of `mergedCentres`. The separation is met on the actual minima of u, not the asymptotes, by a
 * secant on τ.
 */
export function splitSequence(req: SplitRequest): TargetSequence {
  const kappas = checkKappas(req.kappas);
  if (kappas.length < 2) throw new RangeError('target wells: a split or merge needs at least two wells');
  if (!(req.separation > 0)) throw new RangeError(`target wells: separation must be positive, got ${req.separation}`);
  const centre = req.centre ?? 0;
  const drift = req.drift ?? symmetricDrift(kappas);
  const direction = req.direction ?? 'split';
  // ξ_c of the merged well such that the mean of the asymptotic lines on the separated side is `centre`
  const side = solitonAsymptotes(mergedCentres(kappas, 0)).map((a) => (direction === 'split' ? a.offsetPlus : a.offsetMinus));
  const offset = side.reduce((acc, v) => acc + v, 0) / side.length;
  const merged = mergedCentres(kappas, centre - offset);
  const spread = 4 * (kappas[0] ** 2 - kappas[kappas.length - 1] ** 2);
  const outer = (sol: SolitonSpec[], tau: number) => {
    const p = wellPositions(sol, drift, tau);
    return Math.abs(p[0] - p[p.length - 1]);
  };
  const width = 1 / kappas[0];
  if (direction === 'split') {
    const solitons = merged;
    const tauEnd = secant((t) => outer(solitons, t) - req.separation, req.separation / spread, 1.01 * req.separation / spread, SEPARATION_TOL * width);
    return makeSequence(solitons, drift, tauEnd, [
      `split of ${kappas.length} wells from one merged well at ξ = ${centre - offset} (τ = 0); drift c = ${drift}; ` +
        `the wells' mean position ${centre} is fixed when c is the symmetric drift`,
      `outermost wells ${req.separation} apart at τ = ${tauEnd} (asymptotic estimate ${req.separation / spread})`,
    ]);
  }
  // merge: the merged well at τ_m; u_KM with centres x_n at τ equals u_KM with centres x_n + 4κ_n²τ at 0
  const build = (tauM: number) => merged.map((s) => ({ kappa: s.kappa, center: s.center - (4 * s.kappa * s.kappa + drift) * tauM }));
  const tauEnd = secant((t) => outer(build(t), 0) - req.separation, req.separation / spread, 1.01 * req.separation / spread, SEPARATION_TOL * width);
  return makeSequence(build(tauEnd), drift, tauEnd, [
    `merge of ${kappas.length} wells ${req.separation} apart at τ = 0 (mean position ${centre}) into one well at ξ = ${centre - offset} (τ = ${tauEnd}); drift c = ${drift}`,
  ]);
}

/**
 * Positions reachable by a split at one τ are affine in κ²: p_n = A + 4τκ_n² (drift absorbed in A). Fit A and τ to
 * requested positions (least squares) and refuse, with the nearest reachable positions, when they miss by more
 * than `tol`. Returns the separation of the outermost wells and the centre (the mean position: symmetric drift)
 * to pass to `splitSequence`.
 */
export function reachableSplit(kappas: readonly number[], positions: readonly number[], tol: number): { separation: number; centre: number; positions: number[] } {
  const k = checkKappas(kappas);
  if (positions.length !== k.length) throw new RangeError(`target wells: ${positions.length} positions for ${k.length} wells`);
  const p = [...positions].sort((a, b) => b - a); // deepest (fastest) ends rightmost
  const x = k.map((v) => 4 * v * v);
  const mx = x.reduce((s, v) => s + v, 0) / x.length;
  const mp = p.reduce((s, v) => s + v, 0) / p.length;
  let sxy = 0;
  let sxx = 0;
  for (let i = 0; i < x.length; i++) {
    sxy += (x[i] - mx) * (p[i] - mp);
    sxx += (x[i] - mx) ** 2;
  }
  const tau = sxy / sxx;
  const fitted = x.map((v) => mp + tau * (v - mx));
  const miss = Math.max(...fitted.map((v, i) => Math.abs(v - p[i])));
  if (!(tau > 0) || miss > tol) {
    throw new RangeError(
      `target wells: positions [${p.join(', ')}] cannot be reached by a split (positions at one τ are affine in κ²); ` +
        `nearest reachable: [${fitted.map((v) => v.toPrecision(6)).join(', ')}]`,
    );
  }
  // with the symmetric drift the mean position is the centre
  return { separation: fitted[0] - fitted[fitted.length - 1], centre: mp, positions: fitted };
}

/** one well of inverse width κ moved by `distance` in τ = `tauEnd` (drift c = distance/τ − 4κ²), from ξ₀ */
export function transportSequence(kappa: number, start: number, distance: number, tauEnd: number): TargetSequence {
  checkKappas([kappa]);
  if (!(tauEnd > 0)) throw new RangeError(`target wells: transport time must be positive, got ${tauEnd}`);
  const drift = distance / tauEnd - 4 * kappa * kappa;
  return makeSequence([{ kappa, center: start }], drift, tauEnd, [`one well moved by ${distance} in τ = ${tauEnd}; drift c = ${drift}`]);
}

/**
 * Pass-through collision: the deeper well (κ₁ > κ₂) starts `gap` behind (left of) the shallower one, centred on
 * ξ_c, and the sequence ends when it is `gap` ahead. Both come out shifted (Drazin & Johnson 1989): the deeper one
 * forward by (1/κ₁) ln((κ₁+κ₂)/(κ₁−κ₂)), the shallower one back by (1/κ₂) ln(…); `notes` states both.
 */
export function collisionSequence(kappas: readonly [number, number], gap: number, centre = 0, drift?: number): TargetSequence {
  const [k1, k2] = checkKappas(kappas);
  if (!(gap > 0)) throw new RangeError(`target wells: collision gap must be positive, got ${gap}`);
  const c = drift ?? symmetricDrift([k1, k2]);
  const rel = 4 * (k1 * k1 - k2 * k2);
  // incoming lines: deeper at ξ_c − gap/2, shallower at ξ_c + gap/2, at τ = 0
  const base = [{ kappa: k1, center: 0 }, { kappa: k2, center: 0 }];
  const minus = solitonAsymptotes(base).map((a) => a.offsetMinus);
  const solitons = [
    { kappa: k1, center: centre - gap / 2 - minus[0] },
    { kappa: k2, center: centre + gap / 2 - minus[1] },
  ];
  const shift = Math.log((k1 + k2) / (k1 - k2));
  // deeper − shallower = −gap + shift/κ₁ + shift/κ₂ + 4(κ₁² − κ₂²)τ along the outgoing lines; = gap at the end
  const tauEnd = (2 * gap - shift / k1 - shift / k2) / rel;
  return makeSequence(solitons, c, tauEnd, [
    `collision: the κ = ${k1} well passes the κ = ${k2} well; drift c = ${c}`,
    `phase shifts: +${shift / k1} (deeper), −${shift / k2} (shallower) (Drazin & Johnson 1989)`,
  ]);
}
