/**
 * verify.json's `interaction` section: a condensate of verify.interaction.atoms atoms driven through the designed
 * sequence with the cubic correction, with its own painted protocol and bare (quantum/condensate.ts), in the config's
 * units, beside the single-particle ground state of the same run, with a plain verdict on the cubic correction.
 */
import { NumericalError, UserError } from '../core/errors.ts';
import { resolutionAdvice, UNRESOLVED_TAIL } from './context.ts';
import type { Config } from '../io/config.ts';
import type { InteractionSection, VerifyFile } from '../io/formats/verify.ts';
import type { SummaryRow } from '../report/index.ts';
import { makeRamp } from '../protocol/ramp.ts';
import { sequencePotential } from '../flow/dense.ts';
import { CONDENSATE_DRIVES, CondensateNotHeldError, condensateGrounds, driveCondensate, type CondensateDrive, type CondensateGrounds } from '../quantum/condensate.ts';
import { assertPaintableRamp, RampNotPaintableError } from '../quantum/painted.ts';
import { BOHR_RADIUS_M, COLLAPSE_RATIO, guideCoupling, LIEB_LINIGER_MAX, OLSHANII_WARN, TRANSVERSE_FRACTION } from '../units/interaction.ts';
import type { UnitSystem } from '../units/scales.ts';
import { TAIL_WARNING, type DesignResult } from './design.ts';

/** a condensate run meets the acceptance of verify (jobs/verify.ts ACCEPT_INFIDELITY) at 1 − F ≤ this */
export const CONDENSATE_ACCEPT_INFIDELITY = 1e-6;

const MEANING: Record<CondensateDrive, string> = {
  cd: 'the single-particle cubic correction −λ̇(a p³ + ½{b(x), p}) of the design, unchanged (exact only without interactions)',
  painted_condensate: 'the painted potential V + V_loc of the continuity field of the condensate’s own adiabatic density (fast-forward of a condensate: Masuda, PRA 86, 063624, 2012; physics.md §7, §10), no momentum term',
  bare: 'V(x, λ(t)) alone',
};

export interface InteractionInput {
  duration: number;
  lambdaEnd: number;
  ramp: NonNullable<Config['protocol']>['ramp'];
  tolerance: number;
  interaction: NonNullable<NonNullable<Config['verify']>['interaction']>;
}

interface Coupling {
  /** per atom, natural units (E₀ℓ) */
  perAtom: number;
  scatteringNm: number | null;
  transverseHz: number | null;
  aPerp: number | null;
  olshanii: number | null;
  /** ħω⊥/E₀ */
  transverseEnergy: number | null;
  /** |a_s|/a⊥ per atom (N|a_s|/a⊥ is the collapse parameter of an attractive condensate) */
  collapsePerAtom: number | null;
}

/** g₁D per atom in natural units from the config (units/interaction.ts); UserError naming the key otherwise */
function couplingOf(config: Config, units: UnitSystem, it: InteractionInput['interaction']): Coupling {
  if (it.g1d !== undefined) return { perAtom: units.energyToNatural(it.g1d) * units.lengthToNatural(1), scatteringNm: null, transverseHz: null, aPerp: null, olshanii: null, transverseEnergy: null, collapsePerAtom: null };
  const key = it.scattering_length_nm !== undefined ? 'scattering_length_nm' : 'scattering_length_bohr';
  if (units.system !== 'lab' || units.massKg === null) {
    throw new UserError(`${config.meta.source}: verify.interaction.${key} needs lab units (units.system: lab, with a species): natural units carry no mass or metre; give verify.interaction.g1d (E₀·ℓ per atom) instead`);
  }
  const aS = it.scattering_length_nm !== undefined ? it.scattering_length_nm * 1e-9 : (it.scattering_length_bohr as number) * BOHR_RADIUS_M;
  const hz = it.transverse_hz as number;
  const c = guideCoupling(units.massKg, hz, aS);
  if (c.olshaniiCorrection >= 1) {
    throw new UserError(`${config.meta.source}: verify.interaction.${key} = ${it[key]} is not allowed with transverse_hz = ${hz}: C·a_s/a_rel = ${c.olshaniiCorrection.toPrecision(3)} ≥ 1 puts the atoms at or beyond the confinement-induced resonance, where g₁D = 2ħω⊥a_s does not hold (Olshanii, PRL 81, 938, 1998); allowed: C·a_s/a_rel < 1, i.e. a smaller scattering length or a weaker guide`);
  }
  return {
    perAtom: c.g1dJm / (units.E0 * units.ell),
    scatteringNm: aS * 1e9,
    transverseHz: hz,
    aPerp: units.lengthFromNatural(c.aPerpM / units.ell),
    olshanii: c.olshaniiCorrection,
    transverseEnergy: c.transverseEnergyJ / units.E0,
    collapsePerAtom: Math.abs(aS) / c.aPerpM,
  };
}

export interface InteractionOutcome {
  section: InteractionSection;
  warnings: string[];
}

/** a condensate ready to drive: its coupling and ground states, checked before the single-particle proof runs */
export interface PreparedInteraction {
  /** the condensate section (module comment); `single` is the single-particle ground state of the same verify run */
  finish(single: VerifyFile['states'][number], onProgress?: (fraction: number, stage: string) => void): InteractionOutcome;
}

/** the coupling from the config and the nonlinear ground states at both ends; UserError naming
 *  verify.interaction.atoms when the trap does not hold the condensate */
export function prepareInteraction(config: Config, design: DesignResult, input: InteractionInput): PreparedInteraction {
  const { units, grid } = design.ctx;
  const E = units.labels.energy;
  const it = input.interaction;
  const c = couplingOf(config, units, it);
  const g = c.perAtom * it.atoms;
  const potential = sequencePotential({ dense: design.run.dense.data(), lo: 0, hi: input.lambdaEnd });
  let grounds: CondensateGrounds;
  try {
    grounds = condensateGrounds(grid, potential, input.lambdaEnd, g);
  } catch (err) {
    if (!(err instanceof CondensateNotHeldError)) throw err;
    const mu = `μ = ${units.energyFromNatural(err.mu).toPrecision(4)} ${E}, potential at the box edge ${units.energyFromNatural(err.rim).toPrecision(4)} ${E}`;
    throw new UserError(`${config.meta.source}: verify.interaction.atoms = ${it.atoms} is not allowed with this coupling and trap: the condensate at ${err.where} of the sequence is not held by the trap (${mu}; weight ${err.edgeWeight.toExponential(2)} near the box edge); allowed: fewer atoms or a weaker coupling (verify.interaction), a deeper trap, or a longer box (grid.length)`);
  }
  const tail = Math.max(grounds.start.tail, grounds.end.tail);
  if (tail > UNRESOLVED_TAIL) {
    throw new NumericalError(`the grid does not resolve the condensate of ${config.meta.source} (verify.interaction.atoms = ${it.atoms}, g₁D = ${units.energyFromNatural(c.perAtom) * units.lengthFromNatural(1)} ${E}·${units.labels.length} per atom): its ground state's spectral tail is ${tail.toExponential(2)} (> ${UNRESOLVED_TAIL}; μ = ${units.energyFromNatural(grounds.start.mu).toPrecision(4)} ${E}), so every condensate result would be wrong; ${resolutionAdvice(config, units, false)}, or give fewer atoms or a weaker coupling`);
  }
  const warnings = tail > TAIL_WARNING ? [`condensate: the ground state's spectral tail is ${tail.toExponential(2)} (> ${TAIL_WARNING}): expect relative errors of about that size from the grid; raise grid.points`] : [];
  const prep: Prepared = { c, g, potential, grounds, warnings };
  return { finish: (single, onProgress) => interactionSection(config, design, input, prep, single, onProgress) };
}

/** what prepareInteraction found: the coupling (per atom and g), the design's potential, the ground states and the
 *  warnings so far */
interface Prepared {
  c: Coupling;
  g: number;
  potential: (lambda: number, out: Float64Array) => void;
  grounds: CondensateGrounds;
  warnings: string[];
}

function interactionSection(config: Config, design: DesignResult, input: InteractionInput, prep: Prepared, single: VerifyFile['states'][number], onProgress?: (fraction: number, stage: string) => void): InteractionOutcome {
  const { units, grid } = design.ctx;
  const E = units.labels.energy;
  const it = input.interaction;
  const { c, g, potential, grounds } = prep;
  const ramp = makeRamp(input.ramp, input.duration, input.lambdaEnd);
  const warnings: string[] = [...prep.warnings];
  let drives: CondensateDrive[] = [...CONDENSATE_DRIVES];
  try {
    assertPaintableRamp(ramp);
  } catch (err) {
    if (!(err instanceof RampNotPaintableError)) throw err;
    drives = drives.filter((d) => d !== 'painted_condensate');
    warnings.push(`condensate: no painted protocol with protocol.ramp = ${err.ramp} (${err.reason}); use sin2 or smooth for one`);
  }
  const r = driveCondensate({ grid, potential, ramp, coupling: g, tol: input.tolerance, drift: units.lengthToNatural(config.flow.drift), drives, onProgress, grounds });
  const peakDensity = Math.max(...[r.start, r.end].map((s) => s.psi.reduce((m, v) => Math.max(m, v * v), 0)));
  const peak = g * peakDensity;
  const cd = r.drives.find((d) => d.drive === 'cd');
  const bare = r.drives.find((d) => d.drive === 'bare');
  const painted = r.drives.find((d) => d.drive === 'painted_condensate');
  if (!cd || !bare) throw new Error('internal error: condensate drives missing');
  // round-off can put F a few ulps above 1
  const lossCd = Math.max(0, 1 - cd.fidelity), lossBare = Math.max(0, 1 - bare.fidelity), lossPainted = painted ? Math.max(0, 1 - painted.fidelity) : 0;
  const helps = lossCd < lossBare;
  const fmt = (x: number) => x.toExponential(2);
  const paintedNote = painted ? `; the painted condensate protocol reaches 1 − F = ${fmt(lossPainted)}` : '';
  const verdict = lossCd <= CONDENSATE_ACCEPT_INFIDELITY
    ? `the cubic correction still keeps the condensate of ${it.atoms} atoms: 1 − F = ${fmt(lossCd)} ≤ ${CONDENSATE_ACCEPT_INFIDELITY.toExponential(0)}${paintedNote}`
    : helps
      ? `the cubic correction no longer keeps the condensate of ${it.atoms} atoms: 1 − F = ${fmt(lossCd)} (accepted: ≤ ${CONDENSATE_ACCEPT_INFIDELITY.toExponential(0)}); it still beats the bare drive (${fmt(lossBare)})${paintedNote}`
      : `the cubic correction no longer helps the condensate of ${it.atoms} atoms: 1 − F = ${fmt(lossCd)}, no better than the bare drive (${fmt(lossBare)})${paintedNote}`;
  if (lossCd > CONDENSATE_ACCEPT_INFIDELITY) warnings.push(`condensate: ${verdict}`);
  if (painted && lossPainted > CONDENSATE_ACCEPT_INFIDELITY) warnings.push(`condensate: the painted condensate protocol ends at 1 − F = ${fmt(lossPainted)}, above ${CONDENSATE_ACCEPT_INFIDELITY.toExponential(0)} (clipped density weight ${fmt(r.field?.clippedWeight ?? 0)}; a finer grid or a longer duration may help)`);
  if (c.olshanii !== null && Math.abs(c.olshanii) > OLSHANII_WARN) {
    warnings.push(`condensate: a_s is not small against the transverse oscillator length a⊥ = ${c.aPerp?.toPrecision(3)} ${units.labels.length}: C·a_s/a_rel = ${c.olshanii.toPrecision(3)} (a_rel = √2 a⊥), so g₁D = 2ħω⊥a_s is off by about ${(100 * Math.abs(c.olshanii / (1 - c.olshanii))).toPrecision(2)} % (Olshanii, PRL 81, 938, 1998)`);
  }
  if (c.transverseEnergy !== null && Math.abs(peak) > TRANSVERSE_FRACTION * c.transverseEnergy) {
    warnings.push(`condensate: the mean-field energy |g₁D|·n reaches ${units.energyFromNatural(Math.abs(peak)).toPrecision(3)} ${E}, more than ${TRANSVERSE_FRACTION} of ħω⊥ = ${units.energyFromNatural(c.transverseEnergy).toPrecision(3)} ${E}: the transverse motion is not frozen and the 1-D equation (which needs g₁D·n ≪ ħω⊥) loses accuracy; the transverse breathing is not modelled`);
  }
  if (g < 0 && c.collapsePerAtom !== null && it.atoms * c.collapsePerAtom > 0.5 * COLLAPSE_RATIO) {
    warnings.push(`condensate: an attractive condensate with N|a_s|/a⊥ = ${(it.atoms * c.collapsePerAtom).toPrecision(3)} is near or beyond the 3-D collapse at ≈ ${COLLAPSE_RATIO} (Gammal, Frederico & Tomio, PRA 64, 055602, 2001), which the 1-D equation cannot show`);
  }
  // Lieb–Liniger γ = m|g₁D|/(ħ²n), natural units (ħ = 1, m = ½): |g₁D per atom|/(2n), n = N ψ² atoms per ℓ
  const lieb = peakDensity > 0 ? Math.abs(c.perAtom) / (2 * it.atoms * peakDensity) : Infinity;
  if (g !== 0 && lieb > LIEB_LINIGER_MAX) {
    warnings.push(`condensate: ${it.atoms} atoms are too few for the mean-field (Gross–Pitaevskii) equation: the Lieb–Liniger parameter m g₁D/(ħ²n) = ${lieb.toPrecision(3)} at the peak density exceeds ${LIEB_LINIGER_MAX} (it must be ≪ 1: Lieb & Liniger 1963; Petrov, Shlyapnikov & Walraven, PRL 85, 3745, 2000); read the condensate results as indicative`);
  }
  const errs = config.verify?.errors;
  if (errs && (errs.correction_scale !== 0 || errs.depth !== 0 || errs.timing !== 0 || errs.psf !== 0 || errs.noise_rms !== 0)) {
    warnings.push('condensate: verify.errors apply to the single-particle drives only; the condensate drives run the design as built, so the single-particle column beside them includes the errors and the condensate columns do not');
  }
  const range = painted?.range ? { deepest: units.energyFromNatural(painted.range.min), highest: units.energyFromNatural(painted.range.max) } : null;
  const startDepth = -Math.min(...design.ctx.u0);
  if (range && config.budget?.depth !== undefined && -range.deepest > config.budget.depth) {
    warnings.push(`painted_condensate: the painted potential reaches ${range.deepest.toPrecision(4)} ${E}, deeper than budget.depth = ${config.budget.depth} ${E}`);
  } else if (range && startDepth > 0 && -range.deepest > units.energyFromNatural(startDepth)) {
    warnings.push(`painted_condensate: the painted potential reaches ${range.deepest.toPrecision(4)} ${E}, ${(-range.deepest / units.energyFromNatural(startDepth)).toPrecision(3)} times the starting depth: the laser power must allow it`);
  }
  const section: InteractionSection = {
    definition: `a condensate of N atoms, i ħ ∂_t ψ = [p²/2m + V + C + g₁D N|ψ|²]ψ with ∫|ψ|² = 1 (physics.md §10), started in the nonlinear ground state of V(x, 0); fidelity = |⟨φ_end|ψ(T)⟩|² with the nonlinear ground state φ_end of V(x, λ_end); excess = E[ψ(T)] − E[φ_end], the mean-field energy per atom; the time stepping meets the verify.tolerance budget (global step ladder)`,
    atoms: it.atoms,
    g1d: units.energyFromNatural(c.perAtom) * units.lengthFromNatural(1),
    g1d_unit: `${E}·${units.labels.length}`,
    coupling_natural: g,
    scattering_length_nm: c.scatteringNm,
    transverse_hz: c.transverseHz,
    transverse_length: c.aPerp,
    olshanii_correction: c.olshanii,
    start: { chemical_potential: units.energyFromNatural(r.start.mu), energy: units.energyFromNatural(r.start.energy) },
    end: { chemical_potential: units.energyFromNatural(r.end.mu), energy: units.energyFromNatural(r.end.energy) },
    peak_interaction: units.energyFromNatural(peak),
    drives: r.drives.map((d) => ({ drive: d.drive, meaning: MEANING[d.drive], fidelity: d.fidelity, excess: units.energyFromNatural(d.excess), steps: d.steps })),
    painted_range: range,
    single_particle: { fidelity_cd: single.fidelity_cd, fidelity_bare: single.fidelity_bare, excess_cd: single.excess_cd, excess_bare: single.excess_bare },
    correction_helps: helps,
    verdict,
  };
  return { section, warnings };
}

/** the summary rows of the condensate, beside the single-particle ones */
export function interactionRows(s: InteractionSection, energy: string): SummaryRow[] {
  const by = (d: string) => s.drives.find((x) => x.drive === d);
  const fid = (d: string) => { const x = by(d); return x ? Math.max(0, 1 - x.fidelity).toExponential(3) : '—'; };
  const exc = (d: string) => { const x = by(d); return x ? x.excess.toExponential(3) : '—'; };
  return [
    { key: `condensate: ${s.atoms} atoms, g₁D = ${s.g1d.toPrecision(4)} ${s.g1d_unit} per atom; chemical potential start / end`, value: `${s.start.chemical_potential.toPrecision(5)} / ${s.end.chemical_potential.toPrecision(5)}`, unit: energy },
    { key: 'condensate infidelity 1 − F: cubic / painted (condensate) / bare', value: `${fid('cd')} / ${fid('painted_condensate')} / ${fid('bare')}` },
    { key: 'single particle, same drives: ground-state infidelity cubic / bare', value: `${Math.max(0, 1 - s.single_particle.fidelity_cd).toExponential(3)} / ${Math.max(0, 1 - s.single_particle.fidelity_bare).toExponential(3)}` },
    { key: 'condensate excess energy per atom: cubic / painted / bare', value: `${exc('cd')} / ${exc('painted_condensate')} / ${exc('bare')}`, unit: energy },
    ...(s.painted_range ? [{ key: 'condensate painted potential lowest … highest', value: `${s.painted_range.deepest.toPrecision(4)} … ${s.painted_range.highest.toPrecision(4)}`, unit: energy }] : []),
    { key: 'condensate verdict', value: s.verdict },
  ];
}
