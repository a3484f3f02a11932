/**
 * Sizes and sane ranges of a check (natural units ℓ, E₀ of physics.md §3), as pure functions, for the validation
 * before any fit starts.
 *
 * Amplitude. A grid of N points on a box of length L holds wave numbers up to k_max = πN/L, kinetic energies up to
 * k_max². A well of depth |u| has bound states with wave numbers up to √|u|, so beyond |u| ≈ k_max² its states are
 * not resolved, and the flow's nonlinear rate 6|u|·k_max outruns every step the grid supports; far below the box
 * energy (2π/L)² the nonlinear term 6uu_ξ is at round-off of the dispersive u_ξξξ (and its square underflows for
 * values near 1e-160): the frames then carry no KdV flow at all.
 *
 * Labels. Over the λ span of the frames the flow moves features by about λ·6·max|u|·k_cut in units of the grid's
 * fastest time; a span whose product is below LAMBDA_SPAN_MIN cannot label frames that differ at all in double
 * precision (flow/cost.ts gives the steps a span takes).
 *
 * Variational least squares (check/variational.ts): per frame a system of rows = M·N (M states) and P = K + 3
 * columns (k³, u, 1, P₁ … P_K) held as dense columns, solved by ordered Gram–Schmidt and Householder QR:
 *
 *     bytes ≈ (P + 1)·M·N·8 + K·N·8,        flops ≈ frames · 2·M·N·P².
 */

/** the largest |u| a check accepts, in units of k_max² (common practice: an order of magnitude beyond the deepest
 *  well the grid resolves leaves marginal frames to the fit's own verdict) */
export const AMPLITUDE_MAX_FACTOR = 10;
/** the smallest max|u| a check accepts, in units of the box energy (2π/L)² (nonlinear term at round-off below) */
export const AMPLITUDE_MIN_FACTOR = 1e-12;
/** the smallest λ span × 6·max|u|·k_cut (frames that differ by less than this relative amount are equal in
 *  double precision, common practice) */
export const LAMBDA_SPAN_MIN = 1e-12;
/** wall time per floating-point operation of the least squares on a 2-core laptop (scalar JavaScript loops run at
 *  about 1 GFLOP/s; common practice) */
export const SECONDS_PER_FLOP = 1e-9;

/** the range of max|u| (E₀) a grid of N points on a box of length L resolves (module comment) */
export function amplitudeRange(points: number, length: number): { min: number; max: number } {
  const kMax = (Math.PI * points) / length;
  const kBox = (2 * Math.PI) / length;
  return { min: AMPLITUDE_MIN_FACTOR * kBox * kBox, max: AMPLITUDE_MAX_FACTOR * kMax * kMax };
}

export interface VariationalCost {
  rows: number;
  columns: number;
  bytes: number;
  flops: number;
  seconds: number;
}

/** the least-squares size of the variational step (module comment) */
export function estimateVariationalCost(s: { points: number; states: number; legendre: number; frames: number }): VariationalCost {
  const columns = s.legendre + 3;
  const rows = s.states * s.points;
  const bytes = ((columns + 1) * rows + s.legendre * s.points) * Float64Array.BYTES_PER_ELEMENT;
  const flops = s.frames * 2 * rows * columns * columns;
  return { rows, columns, bytes, flops, seconds: flops * SECONDS_PER_FLOP };
}
