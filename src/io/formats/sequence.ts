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
  /** largest bound-state energy drift along the sequence, user energy unit */
  spectral_drift: number;
  predicted_solitons: { kappa: number; depth: number; speed: number }[];
  wells_found: { position: number; depth: number }[];
  units: { length: string; energy: string; lambda: string; speed: string; kappa: string };
  scales: { E0: string; t0: string; ell: string };
  delta2: number;
  delta2_meaning: string;
  breaking: null | { lambda_reached: number; lambda_extrapolated: number; lambda_characteristics: number; reason: string };
  integrator: { method: string; steps: number; rejected: number; seconds: number; tolerance: number; tail: number };
  warnings: string[];
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
  spectral_drift: num,
  predicted_solitons: z.array(z.object({ kappa: num, depth: num, speed: num })),
  wells_found: z.array(z.object({ position: num, depth: num })),
  units: z.object({ length: str, energy: str, lambda: str, speed: str, kappa: str }),
  scales: z.object({ E0: str, t0: str, ell: str }),
  delta2: num,
  delta2_meaning: str,
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
