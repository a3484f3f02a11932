/**
 * check.json, written by `isotrap check` (jobs/check.ts): per interval the KdV flow fit (Δτ, drift, residual,
 * verdict; physics.md §9), per frame the fitted τ and the bound-state spectrum (isospectrality), the time map when
 * frames carry lab times, the repaired sequence and, on request, the variational correction with its side-by-side
 * comparison. Units as named in `units`.
 */
import { z } from 'zod';
import { num, numOrNull, nums, readFormat, str, strOrNull } from './read.ts';

export const CHECK_FORMAT = 'isotrap-check/2';

export interface VariationalReport {
  method: string;
  basis: string[];
  states: number;
  temperature: number | null;
  frames: { index: number; lambda: number; a_hat: number; coefficients: number[]; residual: number; g_max_support: number; g_max_box: number }[];
  comparison: {
    ramp: string;
    duration: number;
    interpolation: string;
    states: { index: number; energy_start: number; energy_end: number }[];
    drives: { label: string; fidelity: number[]; excess_energy: number[]; min_fidelity: number; thermal_fidelity: number | null; thermal_excess: number | null; steps: number }[];
  };
}

export interface IntervalReport {
  /** the interval joins frames index and index + 1 */
  index: number;
  /** fitted KdV time step Δτ ≥ 0 (natural units of ℓ, see units.tau) */
  dtau: number;
  /** fitted drift c, length unit per unit τ */
  drift: number;
  /** translation applied after the flow, length unit */
  shift: number;
  /** ‖S_s Φ_Δτ(u_k) − u_{k+1}‖ / ‖u_{k+1} − u_k‖ */
  residual: number;
  /** the frames' own sampling error on the same scale as the residual */
  sampling_floor: number;
  pass: boolean;
  static: boolean;
  /** one-soliton-like frames: only the displacement (speed + c)Δτ is determined */
  degenerate: { speed: number; displacement: number } | null;
  /** the best Δτ sat at the search limit */
  at_limit: boolean;
}

export interface FrameReport {
  index: number;
  /** the frame's λ from the input, or null (frames labelled by time only) */
  lambda: number | null;
  /** lab time from the input (time unit), or null */
  time: number | null;
  /** fitted τ_k = Σ_{i<k} Δτ_i */
  tau: number;
  /** max |E_n − median_n| over the compared levels, energy unit (null: spectrum not computed for this frame) */
  spectral_drift: number | null;
  /** the same relative to the ground-state depth |median_0| */
  spectral_drift_relative: number | null;
  bound_states: number | null;
  isospectral: boolean | null;
}

export interface CheckReport {
  format: 'isotrap-check/2';
  input: string;
  sidecar: string | null;
  admissible: boolean;
  tolerance: number;
  /** one-line verdict, and one line per group of consecutive failing intervals with the reason */
  summary: string[];
  intervals: IntervalReport[];
  frames: FrameReport[];
  /** largest spread (max − min) of a bound-state energy along the sequence, energy unit */
  spectral_drift: number;
  spectral_drift_relative: number;
  isospectral: boolean | null;
  /** every interval passes the flow fit */
  flow_admissible: boolean;
  failures: string[];
  units: {
    length: string;
    energy: string;
    time: string;
    tau: string;
    drift: string;
    species: string | null;
    mass_u: number | null;
    length_unit_um: number | null;
  };
  fit: { method: string; max_residual: number; worst_interval: number; failed: number[]; degenerate: number[]; static: number[]; flow_tolerance: number; lambda_mismatch: number | null };
  /** τ(t) and λ̇(t) = dτ/dt at the frames' lab times (Fritsch–Carlson map), when frames carry a time */
  time_map: { time: number[]; tau: number[]; rate: number[]; method: string } | null;
  spectrum: { frames: number[]; tau: number[]; energies: number[][]; reference: number[]; threshold: number; levels: number };
  repaired: { max_distance: number; relative_l2: number; frame_relative: number[]; tolerance: number; steps: number; files: string[] };
  grid: { points: number; input_points: number; length: number; dx: number; x0: number; resampled: boolean };
  warnings: string[];
  /** present only when requested */
  variational?: VariationalReport;
}

const variationalSchema = z.object({
  method: str,
  basis: z.array(str),
  states: num,
  temperature: numOrNull,
  frames: z.array(z.object({ index: num, lambda: num, a_hat: num, coefficients: nums, residual: num, g_max_support: num, g_max_box: num })),
  comparison: z.object({
    ramp: str,
    duration: num,
    interpolation: str,
    states: z.array(z.object({ index: num, energy_start: num, energy_end: num })),
    drives: z.array(
      z.object({ label: str, fidelity: nums, excess_energy: nums, min_fidelity: num, thermal_fidelity: numOrNull, thermal_excess: numOrNull, steps: num }),
    ),
  }),
});

const intervalSchema = z.object({
  index: num,
  dtau: num,
  drift: num,
  shift: num,
  residual: num,
  sampling_floor: num,
  pass: z.boolean(),
  static: z.boolean(),
  degenerate: z.object({ speed: num, displacement: num }).nullable(),
  at_limit: z.boolean(),
});

const frameSchema = z.object({
  index: num,
  lambda: numOrNull,
  time: numOrNull,
  tau: num,
  spectral_drift: numOrNull,
  spectral_drift_relative: numOrNull,
  bound_states: numOrNull,
  isospectral: z.boolean().nullable(),
});

const checkSchema: z.ZodType<CheckReport> = z.object({
  format: z.literal(CHECK_FORMAT),
  input: str,
  sidecar: strOrNull,
  admissible: z.boolean(),
  tolerance: num,
  summary: z.array(str),
  intervals: z.array(intervalSchema),
  frames: z.array(frameSchema),
  spectral_drift: num,
  spectral_drift_relative: num,
  isospectral: z.boolean().nullable(),
  flow_admissible: z.boolean(),
  failures: z.array(str),
  units: z.object({ length: str, energy: str, time: str, tau: str, drift: str, species: strOrNull, mass_u: numOrNull, length_unit_um: numOrNull }),
  fit: z.object({ method: str, max_residual: num, worst_interval: num, failed: nums, degenerate: nums, static: nums, flow_tolerance: num, lambda_mismatch: numOrNull }),
  time_map: z.object({ time: nums, tau: nums, rate: nums, method: str }).nullable(),
  spectrum: z.object({ frames: nums, tau: nums, energies: z.array(nums), reference: nums, threshold: num, levels: num }),
  repaired: z.object({ max_distance: num, relative_l2: num, frame_relative: nums, tolerance: num, steps: num, files: z.array(str) }),
  grid: z.object({ points: num, input_points: num, length: num, dx: num, x0: num, resampled: z.boolean() }),
  warnings: z.array(str),
  variational: variationalSchema.optional(),
});

/** Read and validate check.json (UserError naming the file and the key otherwise). */
export function readCheckFile(path: string): CheckReport {
  return readFormat(path, checkSchema, CHECK_FORMAT, 'check');
}
