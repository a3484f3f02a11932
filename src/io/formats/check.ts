/**
 * check.json, written by `isotrap check` (jobs/check.ts): per-frame fit of the admissibility equation (★) to an
 * external sequence, the bound-state spectrum along it, the repaired sequence and, on request, the variational
 * correction with its side-by-side comparison. Units as named in `units`.
 */
import { z } from 'zod';
import type { RepairMode } from '../../check/repair.ts';
import { num, numOrNull, nums, readFormat, str, strOrNull } from './read.ts';

export const CHECK_FORMAT = 'isotrap-check/1';

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

export interface FrameReport {
  index: number;
  lambda: number;
  residual: number;
  /** fitted a as a p³ coefficient: µm³/ħ² (lab) or ℓ³/ħ² (natural) */
  a: number;
  /** a in SI, s²/(kg²·m); null in natural units */
  a_si: number | null;
  /** c, length unit per unit λ */
  c: number;
  a_hat: number;
  c_hat: number;
  admissible: boolean;
  /** max |E_n − median_n| over the compared levels, energy unit (null: spectrum not computed for this frame) */
  spectral_drift: number | null;
  /** the same relative to the ground-state depth |median_0| */
  spectral_drift_relative: number | null;
  bound_states: number | null;
  stencil: [number, number];
  lambda_resolution: number;
  degenerate: boolean;
  static: boolean;
  reasons: string[];
}

export interface CheckReport {
  format: 'isotrap-check/1';
  input: string;
  sidecar: string | null;
  admissible: boolean;
  tolerance: number;
  frames: FrameReport[];
  /** largest spread (max − min) of a bound-state energy along the sequence, energy unit */
  spectral_drift: number;
  spectral_drift_relative: number;
  isospectral: boolean | null;
  failures: string[];
  units: {
    length: string;
    energy: string;
    lambda: string;
    a: string;
    a_si: string | null;
    c: string;
    species: string | null;
    mass_u: number | null;
    length_unit_um: number | null;
  };
  fit: { a_median: number; c_median: number; a_hat_median: number; c_hat_median: number; stencil_width: number; method: string };
  spectrum: { frames: number[]; lambda: number[]; energies: number[][]; reference: number[]; threshold: number; levels: number };
  repaired: { mode: RepairMode; a: number[]; c: number[]; max_distance: number; relative_l2: number; frame_relative: number[]; tolerance: number; steps: number; files: string[] };
  grid: { points: number; length: number; dx: number; x0: number };
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

const frameSchema = z.object({
  index: num,
  lambda: num,
  residual: num,
  a: num,
  a_si: numOrNull,
  c: num,
  a_hat: num,
  c_hat: num,
  admissible: z.boolean(),
  spectral_drift: numOrNull,
  spectral_drift_relative: numOrNull,
  bound_states: numOrNull,
  stencil: z.tuple([num, num]),
  lambda_resolution: num,
  degenerate: z.boolean(),
  static: z.boolean(),
  reasons: z.array(str),
});

const checkSchema: z.ZodType<CheckReport> = z.object({
  format: z.literal(CHECK_FORMAT),
  input: str,
  sidecar: strOrNull,
  admissible: z.boolean(),
  tolerance: num,
  frames: z.array(frameSchema),
  spectral_drift: num,
  spectral_drift_relative: num,
  isospectral: z.boolean().nullable(),
  failures: z.array(str),
  units: z.object({ length: str, energy: str, lambda: str, a: str, a_si: strOrNull, c: str, species: strOrNull, mass_u: numOrNull, length_unit_um: numOrNull }),
  fit: z.object({ a_median: num, c_median: num, a_hat_median: num, c_hat_median: num, stencil_width: num, method: str }),
  spectrum: z.object({ frames: nums, lambda: nums, energies: z.array(nums), reference: nums, threshold: num, levels: num }),
  repaired: z.object({
    mode: z.enum(['median', 'piecewise']),
    a: nums,
    c: nums,
    max_distance: num,
    relative_l2: num,
    frame_relative: nums,
    tolerance: num,
    steps: num,
    files: z.array(str),
  }),
  grid: z.object({ points: num, length: num, dx: num, x0: num }),
  warnings: z.array(str),
  variational: variationalSchema.optional(),
});

/** Read and validate check.json (UserError naming the file and the key otherwise). */
export function readCheckFile(path: string): CheckReport {
  return readFormat(path, checkSchema, CHECK_FORMAT, 'check');
}
