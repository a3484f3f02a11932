/**
 * Cost model of a lattice verification. The cubic CD term has a spectral radius ≈ 10.4 λ′/d³ (natural units), so
 * the Krylov work of one propagation grows like sites × λ_end/d³ (independent of the duration); `predictedWork`
 * budgets it, and lattices above MAX_SITE_PRODUCTS are skipped (study) or refused (the configured lattice).
 */

/** lattices larger than this are refused (memory and run time grow as sites × (sites/width)³) */
export const MAX_SITES = 20000;
/** fewer sites than this cannot hold a bound state and its tails */
export const MIN_SITES = 8;
/** lattice propagations predicted to cost more than this many site·products are skipped (≈ 2·10⁷ per second on
 * one core, measured: about a minute and a quarter) */
export const MAX_SITE_PRODUCTS = 1.5e9;
/** products per unit of ∫‖H‖ds per state and drive, plus a fixed overhead (measured: 5–14 per unit on the wide
 * two-soliton split at 3–6 sites per width, ≈ 13 on the ⁸⁷Rb split at 3 sites per width; rounded up) */
const WORK_PER_NORM = 15;
const WORK_OFFSET = 1000;
/** largest |symbol| of the lattice k³, (2 sin x − sin 2x) at x = 2π/3, times 4: 4 · 3√3/2 */
const CUBIC_SYMBOL_MAX = 6 * Math.sqrt(3);

/**
 * Predicted Lanczos products × sites of one lattice verification (states × {CD, bare}): the Krylov cost of
 * exp(−iHΔ) grows with ‖H‖Δ, and ∫‖H‖ds ≈ (4/h² + max|u|)·T + 4·(3√3/2)·λ_end/h³ (the cubic part depends on the
 * distance in λ only, not on the duration).
 */
export function predictedWork(sites: number, h: number, duration: number, lambdaEnd: number, uMax: number, states: number): number {
  const normIntegral = (4 / (h * h) + uMax) * duration + (CUBIC_SYMBOL_MAX * Math.abs(lambdaEnd)) / (h * h * h);
  return 2 * states * WORK_PER_NORM * (normIntegral + WORK_OFFSET) * sites;
}

/** why a chain of `count` sites at spacing h (ℓ) in a box of `boxLength` ℓ cannot be verified, or null when it can */
export function siteCountProblem(h: number, count: number, boxLength: number): string | null {
  if (count < MIN_SITES) return `lattice spacing ${h} ℓ leaves only ${count} sites in the box of ${boxLength} ℓ: at least ${MIN_SITES} are needed`;
  if (count > MAX_SITES) return `lattice spacing ${h} ℓ gives ${count} sites in the box (more than ${MAX_SITES}): choose a larger spacing or a smaller box`;
  return null;
}
