/**
 * Action J = ∮ p dx of the bound orbit through a phase-space point of H = p² + u(x) (natural units, m = ½:
 * p = √(E − u)), by turning-point quadrature (Landau & Lifshitz, Mechanics, §49):
 *
 *     J(E) = 2 ∫_{x₁}^{x₂} √(E − u(x)) dx,    u(x₁) = u(x₂) = E.
 *
 * The turning points are bracketed by scanning outward from the point and refined by safeguarded Newton
 * iteration. The substitution x = c + r sin θ (c, r: centre and half-length of [x₁, x₂]) turns the integrand
 * into r²cos²θ · √g(x(θ)) with g = (E − u)/((x − x₁)(x₂ − x)) smooth and positive, so Gauss–Legendre in θ
 * converges exponentially (common practice for turning-point integrals; cf. Press et al., Numerical Recipes,
 * 3rd ed. 2007, §4.5 on removing endpoint singularities by a change of variables).
 */
import type { Profile1D } from './field.ts';

/** Gauss–Legendre nodes in θ: the integrand is analytic in θ, so 96 nodes reach round-off for smooth wells */
export const ACTION_NODES = 96;
/** Newton iterations refining a turning point */
export const TURNING_ITERATIONS = 60;
/** longest outward scan for a turning point, in scan steps (an orbit longer than this is treated as unbounded) */
export const MAX_SCAN_STEPS = 200000;

export interface OrbitAction {
  /** ∮p dx (units of ħ in natural units) */
  action: number;
  left: number;
  right: number;
  energy: number;
}

/** Gauss–Legendre nodes and weights on [−1, 1] (Golub–Welsch-free Newton iteration on P_n, Numerical Recipes §4.6). */
export function gaussLegendre(n: number): { nodes: Float64Array; weights: Float64Array } {
  const nodes = new Float64Array(n);
  const weights = new Float64Array(n);
  for (let i = 0; i < Math.ceil(n / 2); i++) {
    let z = Math.cos((Math.PI * (i + 0.75)) / (n + 0.5));
    let dp = 0;
    for (let it = 0; it < 100; it++) {
      let p1 = 1, p2 = 0;
      for (let j = 1; j <= n; j++) {
        const p3 = p2;
        p2 = p1;
        p1 = ((2 * j - 1) * z * p2 - (j - 1) * p3) / j;
      }
      dp = (n * (z * p1 - p2)) / (z * z - 1);
      const dz = p1 / dp;
      z -= dz;
      if (Math.abs(dz) < 1e-16) break;
    }
    nodes[i] = -z;
    nodes[n - 1 - i] = z;
    const w = 2 / ((1 - z * z) * dp * dp);
    weights[i] = w;
    weights[n - 1 - i] = w;
  }
  return { nodes, weights };
}

const GL = gaussLegendre(ACTION_NODES);

/** refine u(x) = E between a (u < E) and b (u ≥ E) */
function refineTurning(u: Profile1D, E: number, inside: number, outside: number, buf: Float64Array): number {
  let a = inside, b = outside;
  let x = 0.5 * (a + b);
  for (let it = 0; it < TURNING_ITERATIONS; it++) {
    u.evaluate(x, buf);
    const g = buf[0] - E;
    if (g < 0) a = x;
    else b = x;
    if (g === 0) return x;
    const newton = buf[1] !== 0 ? -g / buf[1] : NaN;
    if (Math.abs(newton) <= 1e-15 * (1 + Math.abs(x))) return x + newton;
    let next = x + newton;
    const lo = Math.min(a, b), hi = Math.max(a, b);
    if (!(next >= lo && next <= hi)) next = 0.5 * (a + b);
    if (Math.abs(hi - lo) <= 4e-16 * (1 + Math.abs(x))) return next;
    x = next;
  }
  return x;
}

/**
 * Action of the orbit at energy E through x (u(x) ≤ E) in the profile u, scanning outward with `step` within
 * [xMin, xMax]. Returns NaN values when the orbit is not closed inside that interval.
 */
export function orbitAction(u: Profile1D, x: number, E: number, step: number, xMin: number, xMax: number): OrbitAction {
  const buf = new Float64Array(4);
  u.evaluate(x, buf);
  let start = x;
  if (buf[0] >= E) {
    // the point sits on a turning point: move a little downhill into the classically allowed region
    const dir = buf[1] > 0 ? -1 : 1;
    let s = start;
    for (let i = 0; i < 60 && buf[0] >= E; i++) {
      s = start + dir * step * Math.pow(2, -40 + i);
      u.evaluate(s, buf);
    }
    if (buf[0] >= E) return { action: NaN, left: NaN, right: NaN, energy: E };
    start = s;
  }
  const scan = (dir: number): number => {
    let prev = start;
    for (let i = 1; i < MAX_SCAN_STEPS; i++) {
      const xi = start + dir * i * step;
      if (xi < xMin || xi > xMax) return NaN;
      u.evaluate(xi, buf);
      if (buf[0] >= E) return refineTurning(u, E, prev, xi, buf);
      prev = xi;
    }
    return NaN;
  };
  const left = scan(-1);
  const right = scan(1);
  if (!Number.isFinite(left) || !Number.isFinite(right)) return { action: NaN, left, right, energy: E };
  const c = 0.5 * (left + right);
  const r = 0.5 * (right - left);
  let sum = 0;
  for (let i = 0; i < ACTION_NODES; i++) {
    const th = (Math.PI / 2) * GL.nodes[i];
    const cos = Math.cos(th);
    u.evaluate(c + r * Math.sin(th), buf);
    sum += GL.weights[i] * Math.sqrt(Math.max(E - buf[0], 0)) * r * cos;
  }
  return { action: 2 * (Math.PI / 2) * sum, left, right, energy: E };
}
