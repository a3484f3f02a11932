/**
 * lattice.json, written by `isotrap lattice` (jobs/lattice.ts): the tight-binding realisation of the designed
 * sequence with its correction (spacing, tunnelling, couplings), its verification and the convergence study in
 * the lattice spacing, plus the layout of the .npy arrays written next to it (`LatticeTables`).
 */
import { z } from 'zod';
import { num, numOrNull, nums, readFormat, str } from './read.ts';
import type { DepthTunnelling } from '../../lattice/params.ts';
import type { LatticeChoice } from '../../lattice/advice.ts';

export const LATTICE_FORMAT = 'isotrap-lattice/1';

/** depth data of the lattice when depth_recoil was given */
export type LatticeDepth = null | DepthTunnelling;

export interface LatticeTables {
  /** site positions (user length unit) */
  sites: Float64Array;
  /** sample times (ms lab, t₀ natural) */
  times: Float64Array;
  /** [samples × M] on-site energies, [samples × (M−1)] NN and [samples × (M−2)] NNN amplitudes (h·Hz lab, E₀
   * natural) and phases (rad) of H_jj′ = A e^{iφ}, j′ > j */
  onsite: Float64Array;
  nnAmplitude: Float64Array;
  nnPhase: Float64Array;
  nnnAmplitude: Float64Array;
  nnnPhase: Float64Array;
}

export interface LatticeStudyRow {
  sites_per_width: number;
  spacing: number;
  tunnelling: number;
  sites: number;
  infidelity_cd_max: number;
  infidelity_cd: number[];
  fidelity_bare: number[];
  /** lattice minus continuum fidelities (when the caller supplied continuum values), else null */
  difference_cd: number[] | null;
  difference_bare: number[] | null;
  seconds: number;
}

export interface LatticeSummary {
  name: string;
  format: 'isotrap-lattice/1';
  units: {
    length: string;
    energy: string;
    time: string;
    phase: 'rad';
    mass: 'u';
    note: string;
  };
  /** the unit of every numeric field, by dotted path ("[]" marks list entries) */
  field_units: Record<string, string>;
  lattice: {
    spacing: number;
    spacing_natural_l: number;
    tunnelling: number;
    tunnelling_source: string;
    band_width_4J: number;
    sites: number;
    depth: LatticeDepth;
  };
  mass: { atomic_u: number | null; effective_u: number | null; ratio_effective_to_atomic: number | null };
  scales: { E0_hz: number | null; t0_ms: number | null; ell_um: number | null; J_over_E0: number };
  delta2: { with_effective_mass: number; with_atomic_mass: number | null; meaning: string };
  soliton_width: { value: number; natural_l: number; sites_per_width: number; definition: string };
  couplings: {
    largest_peierls_nn: number;
    largest_peierls_nnn: number;
    largest_cd_coupling: number;
    fraction_of_band_width: number;
    largest_nn_amplitude: number;
    onsite_range: [number, number];
    hermiticity_defect_max: number;
    convention: string;
  };
  verification: {
    states: number;
    energies_start: number[];
    energies_end: number[];
    continuum_energies_start: number[];
    isospectral_drift_max: number;
    fidelity_cd: number[];
    fidelity_bare: number[];
    /** continuum fidelities from opts.continuum (null: not supplied) */
    continuum_fidelity_cd: number[] | null;
    continuum_fidelity_bare: number[] | null;
    infidelity_cd_max: number;
    meets_target: boolean;
    steps_cd: number;
    steps_bare: number;
    seconds: number;
    method: string;
  };
  study: {
    target_infidelity: number;
    rows: LatticeStudyRow[];
    observed_order: number | null;
    recommended: null | { sites_per_width: number; spacing: number; tunnelling: number; basis: string };
    /** alternative at the configured d: widen the trap by this factor (KdV scaling u → ε²u(εξ, ε³τ), ε = 1/factor:
     * depths ÷ factor², λ_end × factor³, duration × factor²); null when the configured lattice already suffices */
    widen_trap_by: number | null;
    /** what a lab can change to reach the recommended sites per width (lattice/advice.ts); [] when nothing is needed */
    choices: LatticeChoice[];
    /** choices that are not offered and why; wavelengths left out near a line */
    choice_notes: string[];
    note: string;
  };
  protocol: { duration: number; ramp: string; lambda_end: number };
  warnings: string[];
  /** the config as run (its keys as in the YAML schema), kept verbatim for the report */
  config: Record<string, unknown>;
}

/** lattice.json: the summary plus the names and shapes of the .npy arrays beside it */
export interface LatticeFile extends LatticeSummary {
  files: { arrays: string[]; shapes: { onsite: [number, number]; nn: [number, number]; nnn: [number, number] } };
}

const pair = z.tuple([num, num]);

const studyRowSchema = z.object({
  sites_per_width: num,
  spacing: num,
  tunnelling: num,
  sites: num,
  infidelity_cd_max: num,
  infidelity_cd: nums,
  fidelity_bare: nums,
  difference_cd: nums.nullable(),
  difference_bare: nums.nullable(),
  seconds: num,
});

const choiceSchema: z.ZodType<LatticeChoice> = z.discriminatedUnion('kind', [
  z.object({ kind: z.literal('wavelength'), wavelength_nm: num, spacing_um: num, depth_recoil: numOrNull, tunnelling_hz: num, sites_per_width: num }),
  z.object({ kind: z.literal('lattice_depth'), depth_recoil: num, tunnelling_hz: num, widen_trap_by: num, sites_per_width: num }),
  z.object({ kind: z.literal('spacing'), spacing_l: num, sites_per_width: num }),
  z.object({ kind: z.literal('trap_and_ramp'), widen_trap_by: num, depth_factor: num, duration_factor: num, lambda_end_factor: num, sites_per_width: num }),
]);

const latticeSchema: z.ZodType<LatticeFile> = z.object({
  name: str,
  format: z.literal(LATTICE_FORMAT),
  units: z.object({ length: str, energy: str, time: str, phase: z.literal('rad'), mass: z.literal('u'), note: str }),
  field_units: z.record(z.string(), str),
  lattice: z.object({
    spacing: num,
    spacing_natural_l: num,
    tunnelling: num,
    tunnelling_source: str,
    band_width_4J: num,
    sites: num,
    depth: z
      .object({ s: num, recoil_hz: num, estimate_hz: num, band_hz: num, relative_difference: num, band_mass_ratio: num, band_bottom_recoil: num, band_top_recoil: num })
      .nullable(),
  }),
  mass: z.object({ atomic_u: numOrNull, effective_u: numOrNull, ratio_effective_to_atomic: numOrNull }),
  scales: z.object({ E0_hz: numOrNull, t0_ms: numOrNull, ell_um: numOrNull, J_over_E0: num }),
  delta2: z.object({ with_effective_mass: num, with_atomic_mass: numOrNull, meaning: str }),
  soliton_width: z.object({ value: num, natural_l: num, sites_per_width: num, definition: str }),
  couplings: z.object({
    largest_peierls_nn: num,
    largest_peierls_nnn: num,
    largest_cd_coupling: num,
    fraction_of_band_width: num,
    largest_nn_amplitude: num,
    onsite_range: pair,
    hermiticity_defect_max: num,
    convention: str,
  }),
  verification: z.object({
    states: num,
    energies_start: nums,
    energies_end: nums,
    continuum_energies_start: nums,
    isospectral_drift_max: num,
    fidelity_cd: nums,
    fidelity_bare: nums,
    continuum_fidelity_cd: nums.nullable(),
    continuum_fidelity_bare: nums.nullable(),
    infidelity_cd_max: num,
    meets_target: z.boolean(),
    steps_cd: num,
    steps_bare: num,
    seconds: num,
    method: str,
  }),
  study: z.object({
    target_infidelity: num,
    rows: z.array(studyRowSchema),
    observed_order: numOrNull,
    recommended: z.object({ sites_per_width: num, spacing: num, tunnelling: num, basis: str }).nullable(),
    widen_trap_by: numOrNull,
    choices: z.array(choiceSchema),
    choice_notes: z.array(str),
    note: str,
  }),
  protocol: z.object({ duration: num, ramp: str, lambda_end: num }),
  warnings: z.array(str),
  config: z.record(z.string(), z.unknown()),
  files: z.object({ arrays: z.array(str), shapes: z.object({ onsite: pair, nn: pair, nnn: pair }) }),
});

/** Read and validate lattice.json (UserError naming the file and the key otherwise). */
export function readLatticeFile(path: string): LatticeFile {
  return readFormat(path, latticeSchema, LATTICE_FORMAT, 'lattice');
}
