/**
 * compare.json, written by `isotrap compare` (jobs/compare.ts): the quantum (KdV) and classical (Hopf) sequences
 * of one start, their distance against λ, the ħ-scaling study, the classical phase-space check and the quantum
 * consequence of both designs. Units as named in `units`.
 */
import { z } from 'zod';
import { RAMP_KINDS, type RampKind } from '../../protocol/ramp.ts';
import { num, numOrNull, nums, readFormat, str, strOrNull } from './read.ts';

export const COMPARE_FORMAT = 'isotrap-compare/1';

/** per-drive quantum fidelities: filled by the Schrödinger side (src/quantum), not by runCompare */
export interface DriveFidelity {
  /** 'classical+cubic': Hopf sequence + cubic CD term; 'quantum+cubic': KdV sequence + the same term */
  drive: 'classical+cubic' | 'quantum+cubic';
  states: { index: number; energy: number; fidelity: number; excess_energy: number }[];
}

export interface QuantumConsequence {
  status: 'pending' | 'done';
  note: string;
  drives: DriveFidelity[];
}

export interface TrajectoryJson {
  shell_energy: number;
  shell_fraction: number;
  x0: number;
  /** k₀ = p₀/ħ, per length unit */
  k0: number;
  classical: DriftJson;
  quantum: DriftJson;
}

export interface DriftJson {
  /** max_s |H₀ − H₀(0)| (energy unit) and its final value */
  energy_drift: number;
  energy_drift_final: number;
  /** actions of the instantaneous orbit (units of ħ) and the largest relative change */
  action_start: number | null;
  action_end: number | null;
  action_drift: number | null;
}

export interface CompareSummary {
  format: 'isotrap-compare/1';
  name: string;
  species: string | null;
  units: { length: string; energy: string; time: string; lambda: string; action: string };
  scales: { E0: string; t0: string; ell: string };
  depth: number;
  width: number;
  delta2: number;
  lambda_end: number;
  /** first breaking of the classical sequence from characteristics, 1/max(6∂ξu₀) (refined between points) */
  breaking_lambda: number;
  breaking: {
    lambda_characteristics: number;
    lambda_characteristics_grid: number;
    position: number;
    /** the classical sequence (characteristics) is used up to here: CLASSICAL_END_FRACTION λ_b or λ_end */
    lambda_classical_end: number;
    /** the pseudo-spectral Hopf run: last λ it resolved, its own breaking extrapolation and why it stopped */
    lambda_spectral_reached: number;
    lambda_spectral_extrapolated: number | null;
    spectral_reason: string | null;
  };
  /** λ range on which both sequences exist */
  lambda_common: number;
  distance: { lambda: number[]; max: number[]; l2: number[]; relative_to: string; threshold: number; lambda_1pct: number | null };
  /** pseudo-spectral Hopf run against characteristics: max error relative to max|u₀| */
  characteristics_check: { lambda: number[]; max_error: number[] };
  sequences: { x: number[]; lambda: number[]; quantum: number[][]; classical: (number[] | null)[] };
  scaling: {
    exponent: number;
    uncertainty: number;
    exponent_l2: number;
    uncertainty_l2: number;
    prefactor: number;
    lambda_scaled: number;
    lambda_fraction: number;
    breaking_scaled: number;
    /** T* in the natural (config) λ of this trap */
    lambda_natural: number;
    points: { delta: number; delta2: number; distance_max: number; distance_l2: number; lambda_1pct_scaled: number | null }[];
    tails: { classical: number; quantum: number };
    phase_space: null | {
      duration_scaled: number;
      trajectories: number;
      points: { delta: number; energy_drift_mean: number; energy_drift_max: number; action_drift_mean: number; action_drift_max: number }[];
      energy_exponent: number;
      energy_uncertainty: number;
      action_exponent: number;
      action_uncertainty: number;
    };
  };
  classical_phase_space: {
    method: string;
    hamiltonian: string;
    duration: number;
    ramp: RampKind;
    lambda_end: number;
    steps: { classical: number; quantum: number };
    trajectories: TrajectoryJson[];
    max: { classical_energy_drift: number; quantum_energy_drift: number; classical_action_drift: number | null; quantum_action_drift: number | null };
  };
  /** per-drive fidelities and excess energies from the Schrödinger side (src/quantum propagator) */
  quantum: QuantumConsequence;
  integrator: { quantum_steps: number; classical_steps: number; tolerance: number; seconds: number };
  warnings: string[];
}

const driftSchema = z.object({ energy_drift: num, energy_drift_final: num, action_start: numOrNull, action_end: numOrNull, action_drift: numOrNull });

const scalingSchema = z.object({
  exponent: num,
  uncertainty: num,
  exponent_l2: num,
  uncertainty_l2: num,
  prefactor: num,
  lambda_scaled: num,
  lambda_fraction: num,
  breaking_scaled: num,
  lambda_natural: num,
  points: z.array(z.object({ delta: num, delta2: num, distance_max: num, distance_l2: num, lambda_1pct_scaled: numOrNull })),
  tails: z.object({ classical: num, quantum: num }),
  phase_space: z
    .object({
      duration_scaled: num,
      trajectories: num,
      points: z.array(z.object({ delta: num, energy_drift_mean: num, energy_drift_max: num, action_drift_mean: num, action_drift_max: num })),
      energy_exponent: num,
      energy_uncertainty: num,
      action_exponent: num,
      action_uncertainty: num,
    })
    .nullable(),
});

const phaseSpaceSchema = z.object({
  method: str,
  hamiltonian: str,
  duration: num,
  ramp: z.enum(RAMP_KINDS),
  lambda_end: num,
  steps: z.object({ classical: num, quantum: num }),
  trajectories: z.array(z.object({ shell_energy: num, shell_fraction: num, x0: num, k0: num, classical: driftSchema, quantum: driftSchema })),
  max: z.object({ classical_energy_drift: num, quantum_energy_drift: num, classical_action_drift: numOrNull, quantum_action_drift: numOrNull }),
});

const compareSchema: z.ZodType<CompareSummary> = z.object({
  format: z.literal(COMPARE_FORMAT),
  name: str,
  species: strOrNull,
  units: z.object({ length: str, energy: str, time: str, lambda: str, action: str }),
  scales: z.object({ E0: str, t0: str, ell: str }),
  depth: num,
  width: num,
  delta2: num,
  lambda_end: num,
  breaking_lambda: num,
  breaking: z.object({
    lambda_characteristics: num,
    lambda_characteristics_grid: num,
    position: num,
    lambda_classical_end: num,
    lambda_spectral_reached: num,
    lambda_spectral_extrapolated: numOrNull,
    spectral_reason: strOrNull,
  }),
  lambda_common: num,
  distance: z.object({ lambda: nums, max: nums, l2: nums, relative_to: str, threshold: num, lambda_1pct: numOrNull }),
  characteristics_check: z.object({ lambda: nums, max_error: nums }),
  sequences: z.object({ x: nums, lambda: nums, quantum: z.array(nums), classical: z.array(nums.nullable()) }),
  scaling: scalingSchema,
  classical_phase_space: phaseSpaceSchema,
  quantum: z.object({
    status: z.enum(['pending', 'done']),
    note: str,
    drives: z.array(
      z.object({ drive: z.enum(['classical+cubic', 'quantum+cubic']), states: z.array(z.object({ index: num, energy: num, fidelity: num, excess_energy: num })) }),
    ),
  }),
  integrator: z.object({ quantum_steps: num, classical_steps: num, tolerance: num, seconds: num }),
  warnings: z.array(str),
});

/** Read and validate compare.json (UserError naming the file and the key otherwise). */
export function readCompareFile(path: string): CompareSummary {
  return readFormat(path, compareSchema, COMPARE_FORMAT, 'compare');
}
