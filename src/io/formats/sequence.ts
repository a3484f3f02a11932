/**
 * sequence.json, written by `isotrap design` (jobs/design.ts): the designed sequence's coordinates and units, its
 * invariants, the bound-state spectrum along it, the soliton prediction and the design summary. The potential
 * itself is in potential.npy ([frames, points], energy unit).
 */
import { z } from 'zod';
import type { Invariants, invariantDrift } from '../../flow/invariants.ts';
import { num, numOrNull, nums, readFormat, str, strOrNull } from './read.ts';

export const SEQUENCE_FORMAT = 'isotrap-sequence/1';

export interface SolitonPrediction {
  /** κ in natural units (1/ℓ) */
  kappa: number;
  /** κ in 1/(user length) */
  kappa_user: number;
  /** bound-state energy −κ² of the initial potential, user energy unit */
  energy: number;
  /** soliton depth 2κ², user energy unit */
  depth: number;
  /** soliton speed 4κ², user length per unit λ */
  speed: number;
}

export interface DesignSummary {
  name: string;
  dispersion: 'quantum' | 'classical';
  frames: number;
  points: number;
  lambda_end: number;
  lambda_reached: number;
  complete: boolean;
  max_invariant_drift: number;
  /** largest bound-state energy drift along the sequence, user energy unit; null: not tested (no bound state) */
  spectral_drift: number | null;
  predicted_solitons: { kappa: number; depth: number; speed: number }[];
  wells_found: { position: number; depth: number }[];
  units: { length: string; energy: string; lambda: string; speed: string; kappa: string };
  scales: { E0: string; t0: string; ell: string };
  delta2: number;
  delta2_meaning: string;
  budgets: BudgetSummary;
  outcome: OutcomeSummary | null;
  breaking: null | { lambda_reached: number; lambda_extrapolated: number; lambda_characteristics: number; reason: string };
  integrator: { method: string; steps: number; rejected: number; seconds: number; tolerance: number; tail: number };
  warnings: string[];
}

/** depth (laser power) and resolution budgets of the sequence, config units (flow/budgets.ts) */
export interface BudgetSummary {
  start_depth: number;
  deepest: number;
  deepest_lambda: number;
  /** deepest / start_depth: the laser power relative to the starting trap */
  depth_ratio: number;
  /** narrowest full width at half depth of a well, in the first frame and over all frames (null: no well) */
  start_feature: number | null;
  narrowest_feature: number | null;
  narrowest_lambda: number | null;
  narrowest_position: number | null;
  /** the config's budget.depth and budget.feature (null when not given) */
  limit_depth: number | null;
  limit_feature: number | null;
  sampled: string;
}

/** a start built from an outcome (initial.kind reflectionless or target) against the last frame, config units */
export interface OutcomeSummary {
  kind: 'reflectionless' | 'target';
  notes: string[];
  /** reached_*: null when no well was found */
  wells: { requested_position: number; reached_position: number | null; requested_depth: number; reached_depth: number | null }[];
  /** largest position error in units of the narrowest width 1/κ_max, largest relative depth error (null: no well found) */
  position_error_widths: number | null;
  depth_error_relative: number | null;
  /** max |u_flow − u_exact| over the depth at λ_end (the exact N-soliton sequence, Kay & Moses 1956) */
  exact_distance_relative: number;
  met: boolean;
  verdict: string;
  /** reflectionless: relative L² and largest distance from the user's trap, and the share of ∫u² it sheds as radiation */
  fit: { distance_l2_relative: number; max_difference: number; radiation_fraction: number } | null;
}

export interface SequenceFile {
  format: 'isotrap-sequence/1';
  /** positions, length unit */
  x: number[];
  /** λ of each frame (dimensionless) */
  lambda: number[];
  length_unit: string;
  energy_unit: string;
  lambda_unit: string;
  species: string | null;
  mass_u: number | null;
  length_unit_um: number | null;
  dispersion: 'quantum' | 'classical';
  drift: number;
  scales: { E0: string; t0: string; ell: string; E0_joule: number | null; t0_second: number | null; ell_metre: number | null };
  invariants: { first: Invariants; last: Invariants; relative_drift: ReturnType<typeof invariantDrift>; units: string };
  spectrum: { lambda: number[]; energies: number[][]; max_drift: number; unit: string };
  solitons: {
    predicted: SolitonPrediction[];
    bound_state_method: string;
    bound_threshold_E0: number;
    found_in_last_frame: { position: number; depth: number; kappa_user: number }[];
  };
  summary: DesignSummary;
  /** the config as run (its keys as in the YAML schema of io/config.ts), kept verbatim for the report */
  config: Record<string, unknown>;
}

const dispersion = z.enum(['quantum', 'classical']);
const invariantsSchema = z.object({ mass: num, momentum: num, energy: num });

const summarySchema: z.ZodType<DesignSummary> = z.object({
  name: str,
  dispersion,
  frames: num,
  points: num,
  lambda_end: num,
  lambda_reached: num,
  complete: z.boolean(),
  max_invariant_drift: num,
  spectral_drift: numOrNull,
  predicted_solitons: z.array(z.object({ kappa: num, depth: num, speed: num })),
  wells_found: z.array(z.object({ position: num, depth: num })),
  units: z.object({ length: str, energy: str, lambda: str, speed: str, kappa: str }),
  scales: z.object({ E0: str, t0: str, ell: str }),
  delta2: num,
  delta2_meaning: str,
  budgets: z.object({
    start_depth: num, deepest: num, deepest_lambda: num, depth_ratio: num, start_feature: numOrNull, narrowest_feature: numOrNull,
    narrowest_lambda: numOrNull, narrowest_position: numOrNull, limit_depth: numOrNull, limit_feature: numOrNull, sampled: str,
  }),
  outcome: z.object({
    kind: z.enum(['reflectionless', 'target']),
    notes: z.array(str),
    wells: z.array(z.object({ requested_position: num, reached_position: numOrNull, requested_depth: num, reached_depth: numOrNull })),
    position_error_widths: numOrNull,
    depth_error_relative: numOrNull,
    exact_distance_relative: num,
    met: z.boolean(),
    verdict: str,
    fit: z.object({ distance_l2_relative: num, max_difference: num, radiation_fraction: num }).nullable(),
  }).nullable(),
  breaking: z.object({ lambda_reached: num, lambda_extrapolated: num, lambda_characteristics: num, reason: str }).nullable(),
  integrator: z.object({ method: str, steps: num, rejected: num, seconds: num, tolerance: num, tail: num }),
  warnings: z.array(str),
});

const sequenceSchema: z.ZodType<SequenceFile> = z.object({
  format: z.literal(SEQUENCE_FORMAT),
  x: nums,
  lambda: nums,
  length_unit: str,
  energy_unit: str,
  lambda_unit: str,
  species: strOrNull,
  mass_u: numOrNull,
  length_unit_um: numOrNull,
  dispersion,
  drift: num,
  scales: z.object({ E0: str, t0: str, ell: str, E0_joule: numOrNull, t0_second: numOrNull, ell_metre: numOrNull }),
  invariants: z.object({ first: invariantsSchema, last: invariantsSchema, relative_drift: z.object({ mass: num, momentum: num, energy: num, max: num }), units: str }),
  spectrum: z.object({ lambda: nums, energies: z.array(nums), max_drift: num, unit: str }),
  solitons: z.object({
    predicted: z.array(z.object({ kappa: num, kappa_user: num, energy: num, depth: num, speed: num })),
    bound_state_method: str,
    bound_threshold_E0: num,
    found_in_last_frame: z.array(z.object({ position: num, depth: num, kappa_user: num })),
  }),
  summary: summarySchema,
  config: z.record(z.string(), z.unknown()),
});

/** Read and validate sequence.json (UserError naming the file and the key otherwise). */
export function readSequenceFile(path: string): SequenceFile {
  return readFormat(path, sequenceSchema, SEQUENCE_FORMAT, 'design');
}
