/**
 * verify.json, written by `isotrap verify` (jobs/verify.ts): fidelities and excess energies of the tracked states
 * with and without the cubic counterdiabatic correction, ensemble summaries, the correction's size and the
 * layout of traces.npy. Units as named in `units`.
 */
import { z } from 'zod';
import { RAMP_KINDS } from '../../protocol/ramp.ts';
import type { VerifyResult } from '../../quantum/verify.ts';
import { num, nums, readFormat, str, summaryRowSchema, type SummaryRow } from './read.ts';

/** one painted drive: final fidelities and excess energies per tracked state, and the painted potential's range */
export interface PaintedDriveEntry {
  drive: 'painted' | 'painted_ground';
  kind: 'variational' | 'ground';
  meaning: string;
  fidelity: number[];
  excess: number[];
  min_fidelity: number;
  thermal_fidelity: number | null;
  fermion_fidelity: number | null;
  /** lowest and highest value of V + V_loc over the protocol (energy unit) */
  deepest: number;
  highest: number;
}

export interface PaintedSection {
  definition: string;
  drives: PaintedDriveEntry[];
  /** lowest and highest value of the starting trap V(x, 0) (energy unit): the reference of the power budget */
  start: { deepest: number; highest: number };
  ground_clip: null | { clip_density: number; unit: string; clipped_weight: number; chebyshev_degree: number; rule: string };
  /** the variational a = 0 fit behind the `painted` drive: the states it was fitted on, their temperature, the frames,
   *  the g basis and the largest relative residual of the fit (absent without that drive) */
  variational_fit?: null | { states: number; temperature: number | null; frames: number; basis: string[]; max_residual: number; rule: string };
  gauge_check: { drive: string; states: number; painted: number[]; velocity: number[]; max_difference: number; budget: number; passed: boolean }[];
}

/** a condensate driven through the same sequence (verify.interaction; quantum/condensate.ts): per drive the overlap
 *  with the final nonlinear ground state and the excess mean-field energy per atom (energy unit) */
export interface InteractionSection {
  definition: string;
  atoms: number;
  /** g₁D per atom (energy unit × length unit) and the dimensionless g = g₁D N/(E₀ℓ) */
  g1d: number;
  g1d_unit: string;
  coupling_natural: number;
  scattering_length_nm: number | null;
  transverse_hz: number | null;
  /** a⊥ = √(ħ/mω⊥) (length unit) and x = C a_s/(√2 a⊥), the omitted confinement-induced term (relative error
   *  x/(1 − x); Olshanii 1998) */
  transverse_length: number | null;
  olshanii_correction: number | null;
  /** chemical potential and mean-field energy per atom of the nonlinear ground states (energy unit) */
  start: { chemical_potential: number; energy: number };
  end: { chemical_potential: number; energy: number };
  /** largest mean-field energy g₁D N|ψ|² of the two ground states (energy unit) */
  peak_interaction: number;
  drives: { drive: 'cd' | 'painted_condensate' | 'bare'; meaning: string; fidelity: number; excess: number; steps: number }[];
  /** lowest and highest value of the condensate's painted potential (energy unit); null without that drive */
  painted_range: null | { deepest: number; highest: number };
  /** the single-particle ground state under the same drives (this file's states[0]) */
  single_particle: { fidelity_cd: number; fidelity_bare: number; excess_cd: number; excess_bare: number };
  /** the cubic correction ends closer to the condensate's ground state than the bare drive */
  correction_helps: boolean;
  verdict: string;
}

export const VERIFY_FORMAT = 'isotrap-verify/1';

export interface VerifyFile {
  format: 'isotrap-verify/1';
  units: { energy: string; time: string; length: string; temperature: string };
  protocol: { duration: number; ramp: string; lambda_end: number; duration_natural: number };
  eigen: VerifyResult['eigen'];
  bound_states: number;
  isospectral_drift: number;
  states: {
    index: number;
    energy: number;
    energy_start: number;
    energy_end: number;
    degeneracy: number;
    fidelity_cd: number;
    fidelity_bare: number;
    excess_cd: number;
    excess_bare: number;
  }[];
  /** fidelity_*: Boltzmann mean of the state fidelities Σ pₙFₙ; uhlmann_*: Uhlmann fidelity of the evolved and
   *  the final Gibbs state, (tr √(√σρ√σ))² */
  thermal: null | { temperature: number; unit: string; fidelity_cd: number; fidelity_bare: number; uhlmann_cd: number; uhlmann_bare: number; mean_excess_cd: number; mean_excess_bare: number; tail_weight: number; definition: string };
  fermions: null | { count: number; fidelity_cd: number; fidelity_bare: number; fermi_level_cuts_group: boolean };
  /** the size of the correction a lab needs (definition in the file); one series per sample time */
  cd_strength: {
    unit: string;
    occupied: number;
    definition: string;
    max_leakage: number;
    max_leakage_cubic: number;
    max_leakage_potential: number;
    max_window: number;
    at_time: number;
    time: number[];
    leakage: number[];
    leakage_cubic: number[];
    leakage_potential: number[];
    window: number[];
  };
  classical: null | { lambda_break: number; lambda_reached: number; time_reached: number; fidelity: number[]; note: string };
  propagation: Record<string, { steps: number; rejected: number; matvecs: number; scheme: string; norm_drift: number; seconds: number; estimated_amplitude_error: number }>;
  traces: { file: string; times: number[]; rows: { drive: string; state: number }[] };
  /** the painted corrections (pure potentials V + V_loc, physics.md §7), when verify.painted asks for them */
  painted?: null | PaintedSection;
  /** the errors a lab makes that this run simulated (verify.errors; all zero for the design as built); files of
   *  earlier versions have neither key */
  errors?: {
    correction_scale: number; depth: number; timing: number; time_unit: string; psf?: number; length_unit?: string;
    /** shot-to-shot noise (verify.errors.noise_*): its parameters, the rule, and per drive the spread over shots */
    noise_rms?: number; noise_correlation?: number | null; noise_shots?: number; noise_seed?: number; energy_unit?: string; noise_rule?: string;
    noise_spread?: { drive: string; fidelity_std: number[]; worst_fidelity: number[]; min_fidelity_per_shot: number[] }[];
  };
  /** the condensate (verify.interaction); files of earlier versions have no key */
  interaction?: null | InteractionSection;
  accepted: boolean;
  acceptance: string;
  seconds: number;
  warnings: string[];
  summary_rows: SummaryRow[];
}

const verifySchema: z.ZodType<VerifyFile> = z.object({
  format: z.literal(VERIFY_FORMAT),
  units: z.object({ energy: str, time: str, length: str, temperature: str }),
  protocol: z.object({ duration: num, ramp: z.enum(RAMP_KINDS), lambda_end: num, duration_natural: num }),
  eigen: z.object({ method: str, detail: str, maxResidual: num, residualTol: num, wallMs: num }),
  bound_states: num,
  isospectral_drift: num,
  states: z.array(
    z.object({ index: num, energy: num, energy_start: num, energy_end: num, degeneracy: num, fidelity_cd: num, fidelity_bare: num, excess_cd: num, excess_bare: num }),
  ),
  thermal: z
    .object({ temperature: num, unit: str, fidelity_cd: num, fidelity_bare: num, uhlmann_cd: num, uhlmann_bare: num, mean_excess_cd: num, mean_excess_bare: num, tail_weight: num, definition: str })
    .nullable(),
  fermions: z.object({ count: num, fidelity_cd: num, fidelity_bare: num, fermi_level_cuts_group: z.boolean() }).nullable(),
  cd_strength: z.object({
    unit: str,
    occupied: num,
    definition: str,
    max_leakage: num,
    max_leakage_cubic: num,
    max_leakage_potential: num,
    max_window: num,
    at_time: num,
    time: nums,
    leakage: nums,
    leakage_cubic: nums,
    leakage_potential: nums,
    window: nums,
  }),
  classical: z.object({ lambda_break: num, lambda_reached: num, time_reached: num, fidelity: nums, note: str }).nullable(),
  propagation: z.record(z.string(), z.object({ steps: num, rejected: num, matvecs: num, scheme: str, norm_drift: num, seconds: num, estimated_amplitude_error: num })),
  traces: z.object({ file: str, times: nums, rows: z.array(z.object({ drive: str, state: num })) }),
  errors: z.object({
    correction_scale: num, depth: num, timing: num, time_unit: str, psf: num.optional(), length_unit: str.optional(),
    noise_rms: num.optional(), noise_correlation: num.nullable().optional(), noise_shots: num.optional(), noise_seed: num.optional(), energy_unit: str.optional(), noise_rule: str.optional(),
    noise_spread: z.array(z.object({ drive: str, fidelity_std: nums, worst_fidelity: nums, min_fidelity_per_shot: nums })).optional(),
  }).optional(),
  painted: z
    .object({
      definition: str,
      drives: z.array(
        z.object({
          drive: z.enum(['painted', 'painted_ground']), kind: z.enum(['variational', 'ground']), meaning: str, fidelity: nums, excess: nums, min_fidelity: num,
          thermal_fidelity: num.nullable(), fermion_fidelity: num.nullable(), deepest: num, highest: num,
        }),
      ),
      start: z.object({ deepest: num, highest: num }),
      ground_clip: z.object({ clip_density: num, unit: str, clipped_weight: num, chebyshev_degree: num, rule: str }).nullable(),
      variational_fit: z.object({ states: num, temperature: num.nullable(), frames: num, basis: z.array(str), max_residual: num, rule: str }).nullable().optional(),
      gauge_check: z.array(z.object({ drive: str, states: num, painted: nums, velocity: nums, max_difference: num, budget: num, passed: z.boolean() })),
    })
    .nullable()
    .optional(),
  interaction: z
    .object({
      definition: str, atoms: num, g1d: num, g1d_unit: str, coupling_natural: num, scattering_length_nm: num.nullable(), transverse_hz: num.nullable(),
      transverse_length: num.nullable(), olshanii_correction: num.nullable(),
      start: z.object({ chemical_potential: num, energy: num }), end: z.object({ chemical_potential: num, energy: num }), peak_interaction: num,
      drives: z.array(z.object({ drive: z.enum(['cd', 'painted_condensate', 'bare']), meaning: str, fidelity: num, excess: num, steps: num })),
      painted_range: z.object({ deepest: num, highest: num }).nullable(),
      single_particle: z.object({ fidelity_cd: num, fidelity_bare: num, excess_cd: num, excess_bare: num }),
      correction_helps: z.boolean(), verdict: str,
    })
    .nullable()
    .optional(),
  accepted: z.boolean(),
  acceptance: str,
  seconds: num,
  warnings: z.array(str),
  summary_rows: z.array(summaryRowSchema),
});

/** Read and validate verify.json (UserError naming the file and the key otherwise). */
export function readVerifyFile(path: string): VerifyFile {
  return readFormat(path, verifySchema, VERIFY_FORMAT, 'verify');
}
