/**
 * `lattice`: a designed KdV sequence realised on an optical lattice, and verified there (physics.md §6).
 *
 * 1. Lattice parameters: spacing d (spacing_um, or wavelength_nm with d = λ/2) and tunnelling J (tunnelling_hz,
 *    or depth_recoil s = V₀/E_R with E_R = ħ²k_L²/2m, k_L = π/d; then J is a quarter of the width of the lowest
 *    Mathieu band, lattice/bands.ts, with Zwerger's deep-lattice estimate reported beside it, or the estimate itself
 *    with tunnelling_source: estimate). The lowest band −2J cos kd gives the effective mass m* = ħ²/(2Jd²).
 * 2. Design on m*: the config's trap is designed (jobs/design.ts) in the natural units of m* and ℓ,
 *    E₀ = ħ²/(2m*ℓ²), so that the lattice spacing is h = d/ℓ and J = E₀/h² in those units.
 * 3. Control tables: at `samples` times the on-site energies, nearest- and next-nearest-neighbour couplings as
 *    amplitude and phase per bond (lattice/tables.ts).
 * 4. Verification: the tight-binding Schrödinger equation for the CD and bare drives (lattice/verify.ts),
 *    fidelities of the lowest states, and a study of the infidelity against sites per soliton width at the same
 *    m* (lattice/study.ts), with the coarsest lattice that meets the target and, when the configured lattice is
 *    too coarse, the choices a lab has to get there (light, lattice depth, trap and ramp: lattice/advice.ts). The continuum reference is exact for
 *    CD (physics.md §1); a caller can pass `opts.continuum` (e.g. src/quantum's verifySequence on the job's own
 *    m* design) to get lattice-minus-continuum differences for both drives.
 *
 * The config section and its defaults are in io/config-lattice.ts; the cost model that limits the lattices is in
 * lattice/cost.ts.
 */
import type { UnitsConfig } from '../io/config.ts';
import type { LatticeConfig, LatticeSection } from '../io/config-lattice.ts';
import { writeCsv } from '../io/csv.ts';
import { UserError } from '../core/errors.ts';
import { encodeNpy } from '../io/npy.ts';
import { MAX_SITE_PRODUCTS, predictedWork, siteCountProblem } from '../lattice/cost.ts';
import { depthTunnelling, dispersionForMass, effectiveMassU, naturalBandWidth, naturalTunnelling, spacingFromWavelengthUm, type DepthTunnelling } from '../lattice/params.ts';
import { chainSites, LatticeSequence } from '../lattice/sequence.ts';
import { latticeAdvice, type LabLattice } from '../lattice/advice.ts';
import { latticeStudy, observedOrder, recommendLattice, solitonWidth } from '../lattice/study.ts';
import { controlTables } from '../lattice/tables.ts';
import { lowestLatticeStates, verifyOnLattice, type LatticeRun } from '../lattice/verify.ts';
import { makeRamp, type Ramp } from '../protocol/ramp.ts';
import { ATOMIC_MASS_CONSTANT, PLANCK_H } from '../units/constants.ts';
import { runDesign, toJson, type DesignResult } from './design.ts';
import { boxThreshold } from '../quantum/bound.ts';
import type { LatticeStudyRow, LatticeSummary, LatticeTables } from '../io/formats/lattice.ts';
import { writeRun, type RunFolder, type RunIdentity } from '../io/run-folder.ts';
export type { LatticeStudyRow, LatticeSummary, LatticeTables };

/** at most this many propagated states by default (each costs one propagation per drive and lattice) */
export const DEFAULT_MAX_STATES = 6;
/** the Zwerger estimate is flagged when it differs from the band-structure J by more than this (common practice) */
export const ESTIMATE_WARNING = 0.05;
/** Hermiticity defects above this (relative, random-vector test, lattice/verify.ts) are an internal error */
export const HERMITICITY_LIMIT = 1e-12;

export const LATTICE_FILES = [
  'lattice.json',
  'bonds.csv',
  'sites.npy',
  'times.npy',
  'onsite.npy',
  'nn_amplitude.npy',
  'nn_phase.npy',
  'nnn_amplitude.npy',
  'nnn_phase.npy',
] as const;

/** what `isotrap report` (jobs/report.ts) adds to a lattice folder: the page and the figures of report/panels/lattice.ts */
export const LATTICE_REPORT_FILES = ['report.html', 'lattice-couplings.svg', 'lattice-convergence.svg'] as const;

// ---------------------------------------------------------------------------------------------------------
// lattice parameters

export interface LatticeParameters {
  system: 'natural' | 'lab';
  /** spacing d: µm (lab) or ℓ (natural) */
  spacing: number;
  /** spacing in the natural length ℓ */
  h: number;
  /** J in h·Hz (lab); in E₀ (natural: 1/h²) */
  tunnelling: number;
  tunnellingSource: 'given' | 'estimate' | 'band' | 'implied';
  /** depth data when depth_recoil was given */
  depth: null | DepthTunnelling;
  /** m* and the atomic mass in u (lab; null natural) */
  massStarU: number | null;
  massU: number | null;
  warnings: string[];
}

/** the lattice section; UserError when the config has none */
function latticeSection(config: LatticeConfig): LatticeSection {
  if (!config.lattice) throw new UserError(`${config.meta.source}: the config has no lattice section: add lattice: {spacing_um | wavelength_nm, tunnelling_hz | depth_recoil, …}`);
  return config.lattice;
}

/** d, J and m* from the lattice section (see the module doc) */
export function latticeParameters(config: LatticeConfig): LatticeParameters {
  const l = latticeSection(config);
  const warnings: string[] = [];
  const units = config.units;
  if (units.system === 'natural') {
    const h = l.spacing as number;
    return { system: 'natural', spacing: h, h, tunnelling: naturalTunnelling(h), tunnellingSource: 'implied', depth: null, massStarU: null, massU: null, warnings };
  }
  const dUm = l.spacing_um ?? spacingFromWavelengthUm(l.wavelength_nm as number);
  const dM = dUm * 1e-6;
  let jHz: number;
  let source: LatticeParameters['tunnellingSource'] = 'given';
  let depth: LatticeParameters['depth'] = null;
  if (l.tunnelling_hz !== undefined) {
    jHz = l.tunnelling_hz;
  } else {
    depth = depthTunnelling(l.depth_recoil as number, dM, units.mass_u * ATOMIC_MASS_CONSTANT);
    source = l.tunnelling_source ?? 'band';
    jHz = source === 'estimate' ? depth.estimate_hz : depth.band_hz;
    const rel = depth.relative_difference;
    if (source === 'estimate' && Math.abs(rel) > ESTIMATE_WARNING) {
      warnings.push(
        `the deep-lattice estimate J = ${depth.estimate_hz.toPrecision(4)} h·Hz (Zwerger 2003, an approximation) differs by ${(100 * rel).toFixed(1)} % from the band-structure value ` +
          `${depth.band_hz.toPrecision(4)} h·Hz at s = ${depth.s}: it is accurate only for deep lattices (the error falls like 0.44/√s); set lattice.tunnelling_source: band to use the band value`,
      );
    }
  }
  return {
    system: 'lab',
    spacing: dUm,
    h: dUm / units.length_unit_um,
    tunnelling: jHz,
    tunnellingSource: source,
    depth,
    massStarU: effectiveMassU(jHz, dM),
    massU: units.mass_u,
    warnings,
  };
}

/** the config with the atomic mass replaced by m* (lab); natural configs are returned unchanged */
export function effectiveMassConfig(config: LatticeConfig, params: LatticeParameters): LatticeConfig {
  if (config.units.system === 'natural' || params.massStarU === null) return config;
  const units: UnitsConfig = {
    ...config.units,
    species: 'custom',
    mass_u: params.massStarU,
    label: `${config.units.label} in the lowest lattice band (m* = ${params.massStarU.toPrecision(5)} u)`,
  };
  return { ...config, units };
}

// ---------------------------------------------------------------------------------------------------------
// the job

export interface LatticeProgress {
  stage: 'design' | 'tables' | 'verify' | 'study';
  /** fraction of the stage done, 0 … 1 */
  fraction: number;
  detail?: string;
}

export interface LatticeOptions {
  onProgress?: (p: LatticeProgress) => void;
  /**
   * continuum reference: called with the job's own m* design; returns the continuum fidelities of the lowest
   * `states` states (CD and bare), e.g. from the Schrödinger verification in src/quantum. The study then reports
   * lattice-minus-continuum differences. Without it the continuum CD fidelity is taken as exact (physics.md §1).
   */
  continuum?: (input: ContinuumInput) => { cd: number[]; bare: number[] };
}

export interface ContinuumInput {
  design: DesignResult;
  /** u(·, λ) on the design grid (natural units of m*) */
  potential: (lambda: number, out: Float64Array) => void;
  ramp: Ramp['kind'];
  /** natural units of m* (t₀) */
  duration: number;
  lambdaEnd: number;
  states: number;
}

export interface LatticeResult {
  summary: LatticeSummary;
  tables: LatticeTables;
}

/** units of the numeric fields of LatticeSummary (E = the energy unit, L = length, T = time) */
function fieldUnits(L: string, E: string, T: string): Record<string, string> {
  const none = 'dimensionless';
  return {
    'lattice.spacing': L,
    'lattice.spacing_natural_l': 'ℓ',
    'lattice.tunnelling': E,
    'lattice.band_width_4J': E,
    'lattice.sites': 'count',
    'lattice.depth.s': 'E_R',
    'lattice.depth.recoil_hz': 'h·Hz',
    'lattice.depth.estimate_hz': 'h·Hz',
    'lattice.depth.band_hz': 'h·Hz',
    'lattice.depth.relative_difference': none,
    'lattice.depth.band_mass_ratio': 'atomic mass (band-curvature m* ÷ m)',
    'lattice.depth.band_bottom_recoil': 'E_R',
    'lattice.depth.band_top_recoil': 'E_R',
    'mass.atomic_u': 'u',
    'mass.effective_u': 'u',
    'mass.ratio_effective_to_atomic': none,
    'scales.E0_hz': 'h·Hz',
    'scales.t0_ms': 'ms',
    'scales.ell_um': 'µm',
    'scales.J_over_E0': none,
    'delta2.*': none,
    'soliton_width.value': L,
    'soliton_width.natural_l': 'ℓ',
    'soliton_width.sites_per_width': none,
    'couplings.largest_*': E,
    'couplings.fraction_of_band_width': none,
    'couplings.onsite_range[]': E,
    'couplings.hermiticity_defect_max': 'relative',
    'verification.energies_*[]': E,
    'verification.continuum_energies_start[]': E,
    'verification.isospectral_drift_max': E,
    'verification.fidelity_*[]': none,
    'verification.continuum_fidelity_*[]': none,
    'verification.infidelity_cd_max': none,
    'verification.steps_*': 'count',
    'verification.seconds': 's (wall time)',
    'study.target_infidelity': none,
    'study.rows[].sites_per_width': none,
    'study.rows[].spacing': L,
    'study.rows[].tunnelling': E,
    'study.rows[].sites': 'count',
    'study.rows[].infidelity_cd*': none,
    'study.rows[].fidelity_bare[]': none,
    'study.rows[].difference_*[]': none,
    'study.rows[].seconds': 's (wall time)',
    'study.observed_order': 'power of the spacing',
    'study.recommended.sites_per_width': none,
    'study.recommended.spacing': L,
    'study.recommended.tunnelling': E,
    'study.widen_trap_by': none,
    'study.choices[].wavelength_nm': 'nm',
    'study.choices[].spacing_um': 'µm',
    'study.choices[].spacing_l': 'ℓ',
    'study.choices[].depth_recoil': 'E_R of the choice\'s light',
    'study.choices[].tunnelling_hz': 'h·Hz',
    'study.choices[].sites_per_width': none,
    'study.choices[].widen_trap_by': 'factor on every length of the trap',
    'study.choices[].depth_factor': 'factor on the trap depths',
    'study.choices[].duration_factor': 'factor on protocol.duration',
    'study.choices[].lambda_end_factor': 'factor on flow.lambda_end',
    'protocol.duration': T,
    'protocol.lambda_end': 'dimensionless KdV time',
  };
}

/** the design on m* and the quantities every step of the job needs (natural units of m* unless marked) */
interface LatticeSetup {
  config: LatticeConfig;
  section: LatticeSection;
  protocol: NonNullable<LatticeConfig['protocol']>;
  params: LatticeParameters;
  design: DesignResult;
  warnings: string[];
  /** spacing in ℓ */
  h: number;
  lambdaEnd: number;
  duration: number;
  ramp: Ramp;
  /** narrowest soliton width (ℓ) */
  width: number;
  lab: boolean;
  /** energy E₀ → the output unit (h·Hz lab, E₀ natural) */
  hz: (e: number) => number;
  /** spacing ℓ → the output length unit (µm lab, ℓ natural) */
  length: (h: number) => number;
}

function latticeSetup(config: LatticeConfig, progress: (p: LatticeProgress) => void): LatticeSetup {
  const params = latticeParameters(config);
  const section = latticeSection(config);
  if (!config.protocol) throw new UserError(`${config.meta.source}: protocol is missing: the lattice verification needs protocol.duration (and ramp)`);
  const design = runDesign(effectiveMassConfig(config, params), { onProgress: (x, end) => progress({ stage: 'design', fraction: x / end }) });
  if (design.run.breaking) throw new UserError(`the designed flow broke at λ = ${design.run.breaking.lambdaReached}: a broken sequence cannot be put on a lattice (${design.run.breaking.reason})`);
  const { units } = design.ctx;
  const warnings = [...params.warnings, ...design.warnings];
  const lab = units.system === 'lab';
  const lambdaEnd = design.run.lambdas[design.run.lambdas.length - 1];
  const duration = units.timeToNatural(config.protocol.duration);
  const ramp = makeRamp(config.protocol.ramp, duration, lambdaEnd);
  if (!ramp.endSlopeZero) warnings.push(`ramp ${ramp.kind} has λ′ ≠ 0 at the ends: the CD couplings do not vanish there, so H_CD ≠ H at the start and the end`);
  const width = solitonWidth(design.bound.energies, design.ctx.width);
  if (!Number.isFinite(width)) throw new UserError('the designed potential has no bound state, so it has no soliton width to resolve on the lattice');
  return {
    config, section, protocol: config.protocol, params, design, warnings, h: params.h, lambdaEnd, duration, ramp, width, lab,
    hz: (e) => (lab ? (e * units.E0) / PLANCK_H : e),
    length: (hn) => (lab ? hn * (units.ell * 1e6) : hn),
  };
}

/** sites of the chain at spacing h in the design box; UserError when there are too few or too many */
function chainFor(setup: LatticeSetup, h: number): Float64Array {
  const length = setup.design.ctx.grid.length;
  const sites = chainSites(length, h);
  const problem = siteCountProblem(h, sites.length, length);
  if (problem !== null) throw new UserError(problem);
  return sites;
}

/** the control tables (lattice/tables.ts) in the output units, and the couplings section of the summary */
function tablesStep(setup: LatticeSetup, seq: LatticeSequence, sites: Float64Array, progress: (p: LatticeProgress) => void): { tables: LatticeTables; couplings: LatticeSummary['couplings'] } {
  const { hz, h } = setup;
  const { units } = setup.design.ctx;
  const S = setup.section.samples;
  const t = controlTables(seq, setup.ramp, h, S, (done) => progress({ stage: 'tables', fraction: done / S }));
  const onsite = t.onsite.map(hz);
  let onMin = Infinity, onMax = -Infinity;
  for (const e of onsite) {
    onMin = Math.min(onMin, e);
    onMax = Math.max(onMax, e);
  }
  const cdFraction = Math.max(t.maxNn, t.maxNnn) / naturalBandWidth(h);
  if (cdFraction > 1) {
    setup.warnings.push(
      `the largest CD coupling is ${cdFraction.toFixed(2)} × the band width 4J: the Peierls couplings grow like λ̇/d³ against J ∝ 1/d², ` +
        'so a lab must realise tunnelling amplitudes larger than J; a longer protocol.duration lowers them in proportion',
    );
  }
  if (t.hermiticityDefect > HERMITICITY_LIMIT) throw new Error(`internal error: a lattice Hamiltonian failed the Hermiticity check (${t.hermiticityDefect})`);
  const tables: LatticeTables = {
    sites: sites.map((x) => units.lengthFromNatural(x)),
    times: t.times.map((s) => units.timeFromNatural(s)),
    onsite,
    nnAmplitude: t.nn.amplitude.map(hz),
    nnPhase: t.nn.phase,
    nnnAmplitude: t.nnn.amplitude.map(hz),
    nnnPhase: t.nnn.phase,
  };
  const couplings: LatticeSummary['couplings'] = {
    largest_peierls_nn: hz(t.maxNn),
    largest_peierls_nnn: hz(t.maxNnn),
    largest_cd_coupling: hz(Math.max(t.maxNn, t.maxNnn)),
    fraction_of_band_width: cdFraction,
    largest_nn_amplitude: hz(t.maxAmplitude),
    onsite_range: [onMin, onMax],
    hermiticity_defect_max: t.hermiticityDefect,
    convention:
      'H = Σ_j ε_j n_j + Σ_{j<j′} (A_jj′ e^{iφ_jj′} c_j† c_j′ + h.c.), j′ = j+1 (nn) and j+2 (nnn); ε_j = V(x_j) + 2J puts the uniform band bottom at V; ' +
      'nn: A e^{iφ} = −J + i b_j, b_j = λ̇·(4/d³ + 3(u_j+u_{j+1})/(2d)) in natural units; nnn: i q, q = −2λ̇/d³ (physics.md §3, §6)',
  };
  return { tables, couplings };
}

/** number of propagated states: lattice.states, verify.states, or the bound states of the lattice H(0) (at most DEFAULT_MAX_STATES) */
function stateCount(setup: LatticeSetup, seq: LatticeSequence): number {
  const M = seq.sites.length;
  const lowest0 = lowestLatticeStates(seq, 0, setup.h, Math.min(M, 64));
  const threshold = boxThreshold(setup.design.ctx.grid.length);
  const bound = Array.from(lowest0.values).filter((e) => e < threshold).length;
  if (bound === 0) setup.warnings.push('the lattice H(0) has no bound state below the box threshold −(2π/L)²: the fidelities refer to box states');
  return Math.max(1, Math.min(setup.section.states ?? setup.config.verify?.states ?? Math.min(bound, DEFAULT_MAX_STATES), M));
}

/** predicted site·products of a lattice (lattice/cost.ts) for this design and state count */
function workModel(setup: LatticeSetup, count: number): (sites: number, h: number) => number {
  let uMax = 0;
  for (const v of setup.design.run.frames) for (const x of v) uMax = Math.max(uMax, Math.abs(x));
  return (sitesN, hn) => predictedWork(sitesN, hn, setup.duration, setup.lambdaEnd, uMax, count);
}

/** the convergence study at the same m* (lattice/study.ts), rows in the output units */
function studyStep(setup: LatticeSetup, count: number, work: (sites: number, h: number) => number, cont: { cd: number[]; bare: number[] } | null, progress: (p: LatticeProgress) => void): LatticeStudyRow[] {
  const { hz, design } = setup;
  const study = latticeStudy({
    grid: design.ctx.grid,
    dense: design.run.dense,
    ramp: setup.ramp,
    width: setup.width,
    sitesPerWidth: [...setup.section.sites_per_width].sort((a, b) => a - b),
    states: count,
    tol: setup.section.tolerance,
    work,
    onProgress: (fraction, n) => progress({ stage: 'study', fraction, detail: `${n} sites per width` }),
  });
  setup.warnings.push(...study.skipped);
  return study.points.map(({ sitesPerWidth, h: hn, sites, run: r }) => ({
    sites_per_width: sitesPerWidth,
    spacing: setup.length(hn),
    tunnelling: hz(naturalTunnelling(hn)),
    sites,
    infidelity_cd_max: r.maxInfidelityCd,
    infidelity_cd: r.fidelityCd.map((f) => 1 - f),
    fidelity_bare: r.fidelityBare,
    difference_cd: cont ? r.fidelityCd.map((f, i) => f - (cont.cd[i] ?? NaN)) : null,
    difference_bare: cont ? r.fidelityBare.map((f, i) => f - (cont.bare[i] ?? NaN)) : null,
    seconds: r.seconds,
  }));
}

/** the configured lattice in lab units for lattice/advice.ts (null in natural units) */
function labLattice(setup: LatticeSetup): LabLattice | null {
  const { params } = setup;
  const units = setup.config.units;
  if (units.system !== 'lab' || params.massU === null) return null;
  return {
    species: units.species,
    massKg: params.massU * ATOMIC_MASS_CONSTANT,
    widthUm: setup.width * setup.design.ctx.units.ell * 1e6,
    spacingUm: params.spacing,
    tunnellingHz: params.tunnelling,
  };
}

/** the study section: observed order and recommendation (lattice/study.ts) with their warnings */
function studySection(setup: LatticeSetup, rows: LatticeStudyRow[]): LatticeSummary['study'] {
  const target = setup.section.target_infidelity;
  const points = rows.map((r) => ({ sitesPerWidth: r.sites_per_width, maxInfidelity: r.infidelity_cd_max }));
  const rec = recommendLattice(points, target);
  let recommended: LatticeSummary['study']['recommended'] = null;
  if (rec.kind === 'met') {
    const ok = rows[rec.index];
    recommended = { sites_per_width: ok.sites_per_width, spacing: ok.spacing, tunnelling: ok.tunnelling, basis: 'coarsest studied lattice whose CD infidelity (every state) is below the target' };
  } else if (rec.kind === 'not-converging') {
    setup.warnings.push(
      `no studied lattice met the target infidelity ${target}, and the infidelity falls only as d^${rec.order.toFixed(2)} over the study ` +
        '(not converging: e.g. continuum states reflecting from the ends of the open chain): no spacing is recommended; track bound states only (lattice.states) or refine the study',
    );
  } else if (rec.kind === 'extrapolated') {
    const hn = setup.width / rec.sitesPerWidth;
    recommended = { sites_per_width: rec.sitesPerWidth, spacing: setup.lab ? hn * setup.design.ctx.units.ell * 1e6 : hn, tunnelling: setup.hz(naturalTunnelling(hn)), basis: `extrapolated with the observed order ${rec.order.toFixed(2)} from the finest studied lattice (not simulated)` };
    setup.warnings.push(`no studied lattice met the target infidelity ${target}; the recommendation is extrapolated`);
  }
  const configured = setup.width / setup.h;
  const advice = recommended ? latticeAdvice(recommended.sites_per_width, configured, setup.width, labLattice(setup)) : { choices: [], notes: [] };
  return {
    target_infidelity: target,
    rows,
    observed_order: observedOrder(points),
    recommended,
    widen_trap_by: recommended && recommended.sites_per_width > configured ? recommended.sites_per_width / configured : null,
    choices: advice.choices,
    choice_notes: advice.notes,
    note:
      'same effective mass m* for every row (J = ħ²/(2m*d²) scales as 1/d²); the continuum CD drive is exact (physics.md §1), so 1 − F_CD on the lattice is the residual lattice error; ' +
      'the recommendation is the LARGEST spacing (fewest sites per width) that meets the target',
  };
}

/** the units, lattice, mass, scales, δ² and soliton-width sections of the summary */
function descriptionSections(setup: LatticeSetup, M: number): Pick<LatticeSummary, 'units' | 'field_units' | 'lattice' | 'mass' | 'scales' | 'delta2' | 'soliton_width'> {
  const { params, lab, hz, h, width } = setup;
  const { units, delta2 } = setup.design.ctx;
  const energyLabel = lab ? 'h·Hz' : 'E₀';
  const massRatio = params.massU !== null && params.massStarU !== null ? params.massStarU / params.massU : null;
  return {
    units: {
      length: units.labels.length,
      energy: energyLabel,
      time: units.labels.time,
      phase: 'rad',
      mass: 'u',
      note: lab
        ? 'energies and couplings in h·Hz (E/h), lengths in µm, times in ms'
        : 'natural units of the lattice effective mass: lengths in ℓ, energies in E₀ = ħ²/(2m*ℓ²), times in t₀ = ħ/E₀',
    },
    field_units: fieldUnits(units.labels.length, energyLabel, units.labels.time),
    lattice: {
      spacing: params.spacing,
      spacing_natural_l: h,
      tunnelling: hz(naturalTunnelling(h)),
      tunnelling_source: params.tunnellingSource,
      band_width_4J: hz(naturalBandWidth(h)),
      sites: M,
      depth: params.depth,
    },
    mass: { atomic_u: params.massU, effective_u: params.massStarU, ratio_effective_to_atomic: massRatio },
    scales: {
      E0_hz: lab ? units.E0 / PLANCK_H : null,
      t0_ms: lab ? units.t0 * 1e3 : null,
      ell_um: lab ? units.ell * 1e6 : null,
      J_over_E0: naturalTunnelling(h),
    },
    delta2: {
      with_effective_mass: delta2,
      with_atomic_mass: params.massU !== null && params.massStarU !== null ? dispersionForMass(delta2, params.massStarU, params.massU) : null,
      meaning: 'δ² = ħ²/(2mV₀w²) with m = m* (the design) or the bare atomic mass (for comparison); dimensionless',
    },
    soliton_width: {
      value: lab ? width * units.ell * 1e6 : width,
      natural_l: width,
      sites_per_width: width / h,
      definition: 'w = 1/κ of the narrowest soliton (κ² = −E of the deepest bound state of H(0)), capped by the curvature width of the deepest initial well',
    },
  };
}

/** the verification section of the configured lattice */
function verificationSection(setup: LatticeSetup, count: number, main: LatticeRun, cont: { cd: number[]; bare: number[] } | null): LatticeSummary['verification'] {
  const { hz } = setup;
  const drift = Math.max(...main.energiesStart.map((e, i) => Math.abs(main.energiesEnd[i] - e)));
  return {
    states: count,
    energies_start: main.energiesStart.map(hz),
    energies_end: main.energiesEnd.map(hz),
    continuum_energies_start: setup.design.bound.energies.slice(0, count).map(hz),
    isospectral_drift_max: hz(drift),
    fidelity_cd: main.fidelityCd,
    fidelity_bare: main.fidelityBare,
    continuum_fidelity_cd: cont ? cont.cd : null,
    continuum_fidelity_bare: cont ? cont.bare : null,
    infidelity_cd_max: main.maxInfidelityCd,
    meets_target: main.maxInfidelityCd < setup.section.target_infidelity,
    steps_cd: main.stepsCd,
    steps_bare: main.stepsBare,
    seconds: main.seconds,
    method: 'open tight-binding chain; commutator-free 4th-order Magnus (CF4:2) with Lanczos exponentials and step doubling',
  };
}

/**
 * The largest CD coupling of the configured lattice's realisation (lattice.json couplings.largest_cd_coupling: h·Hz
 * lab, E₀ natural): the design with m*, the chain and the control tables, without the lattice propagation. A
 * sweep's budget.coupling compares it (jobs/sweep.ts).
 */
export function largestLatticeCoupling(config: LatticeConfig): number {
  const setup = latticeSetup(config, () => undefined);
  const sites = chainFor(setup, setup.h);
  const seq = LatticeSequence.fromDense(setup.design.ctx.grid, setup.design.run.dense, sites);
  return tablesStep(setup, seq, sites, () => undefined).couplings.largest_cd_coupling;
}

/**
 * Run the lattice job (see the module doc): setup (parameters, design on m*) → control tables → verification on
 * the configured lattice → convergence study → summary. Throws UserError for configs it cannot serve (no lattice
 * or protocol section, a broken flow, a lattice that is too large).
 */
export function runLattice(config: LatticeConfig, opts: LatticeOptions = {}): LatticeResult {
  const progress = opts.onProgress ?? (() => {});
  const setup = latticeSetup(config, progress);
  const { design, h, width } = setup;
  const sites = chainFor(setup, h);
  const M = sites.length;
  const seq = LatticeSequence.fromDense(design.ctx.grid, design.run.dense, sites);
  const { tables, couplings } = tablesStep(setup, seq, sites, progress);

  const count = stateCount(setup, seq);
  const work = workModel(setup, count);
  if (work(M, h) > MAX_SITE_PRODUCTS) {
    throw new UserError(
      `lattice verification of ${M} sites at ${(width / h).toFixed(1)} sites per width would need about ${work(M, h).toExponential(1)} site·products ` +
        `(limit ${MAX_SITE_PRODUCTS.toExponential(1)}, about two minutes): the cubic CD term makes the cost grow like λ_end/d³; use a larger lattice spacing, a smaller box or fewer states`,
    );
  }
  const main = verifyOnLattice(seq, h, setup.ramp, count, setup.section.tolerance, width, (f) => progress({ stage: 'verify', fraction: f }));
  const cont = opts.continuum
    ? opts.continuum({ design, potential: (lam, out) => void design.run.dense.at(lam, out), ramp: setup.ramp.kind, duration: setup.duration, lambdaEnd: setup.lambdaEnd, states: count })
    : null;
  const rows = studyStep(setup, count, work, cont, progress);
  const study = studySection(setup, rows);
  if (main.maxInfidelityCd >= setup.section.target_infidelity) {
    setup.warnings.push(`the configured lattice (${(width / h).toFixed(2)} sites per width) misses the target: CD infidelity ${main.maxInfidelityCd.toExponential(2)} ≥ ${setup.section.target_infidelity}`);
  }
  const summary: LatticeSummary = {
    name: config.name,
    format: 'isotrap-lattice/1',
    ...descriptionSections(setup, M),
    couplings,
    verification: verificationSection(setup, count, main, cont),
    study,
    protocol: { duration: setup.protocol.duration, ramp: setup.ramp.kind, lambda_end: setup.lambdaEnd },
    warnings: setup.warnings,
    config: { ...config, meta: undefined },
  };
  return { summary, tables };
}

/** Write lattice.json, the .npy arrays and bonds.csv into dir (refuses to overwrite without force). */
export function writeLatticeOutputs(result: LatticeResult, dir: string, force: boolean, identity: RunIdentity): string[] {
  return writeRun(dir, { force, produces: LATTICE_FILES, job: 'lattice', identity }, (out) => stageLattice(result, out));
}

function stageLattice(result: LatticeResult, out: RunFolder): void {
  const { tables: t, summary } = result;
  const M = t.sites.length;
  const S = t.times.length;
  out.write(LATTICE_FILES[0], toJson({ ...summary, files: { arrays: LATTICE_FILES.slice(2), shapes: { onsite: [S, M], nn: [S, M - 1], nnn: [S, M - 2] } } }, 1));
  // bond table: every nn and nnn bond at every sample time
  const rows = S * ((M - 1) + (M - 2));
  const ci = new Float64Array(rows), cj = new Float64Array(rows), ct = new Float64Array(rows), ca = new Float64Array(rows), cp = new Float64Array(rows);
  let r = 0;
  for (let s = 0; s < S; s++) {
    for (let j = 0; j < M - 1; j++, r++) {
      ci[r] = j; cj[r] = j + 1; ct[r] = t.times[s]; ca[r] = t.nnAmplitude[s * (M - 1) + j]; cp[r] = t.nnPhase[s * (M - 1) + j];
    }
    for (let j = 0; j < M - 2; j++, r++) {
      ci[r] = j; cj[r] = j + 2; ct[r] = t.times[s]; ca[r] = t.nnnAmplitude[s * (M - 2) + j]; cp[r] = t.nnnPhase[s * (M - 2) + j];
    }
  }
  const eUnit = summary.units.energy === 'h·Hz' ? 'hz' : 'E0';
  const tUnit = summary.units.time === 'ms' ? 'ms' : 't0';
  out.write(LATTICE_FILES[1],
    `# bond j -> j' couplings H_jj' = amplitude * exp(i phase) (${summary.units.energy}); on-site energies in onsite.npy\n` +
      writeCsv(['site_i', 'site_j', `t_${tUnit}`, `amplitude_${eUnit}`, 'phase_rad'], [ci, cj, ct, ca, cp]),
  );
  out.write(LATTICE_FILES[2], encodeNpy(t.sites, [M]));
  out.write(LATTICE_FILES[3], encodeNpy(t.times, [S]));
  out.write(LATTICE_FILES[4], encodeNpy(t.onsite, [S, M]));
  out.write(LATTICE_FILES[5], encodeNpy(t.nnAmplitude, [S, M - 1]));
  out.write(LATTICE_FILES[6], encodeNpy(t.nnPhase, [S, M - 1]));
  out.write(LATTICE_FILES[7], encodeNpy(t.nnnAmplitude, [S, M - 2]));
  out.write(LATTICE_FILES[8], encodeNpy(t.nnnPhase, [S, M - 2]));
}
