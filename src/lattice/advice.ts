/**
 * What a lab can change when the configured lattice is too coarse for the soliton widths: the choices that bring
 * the sites per soliton width w/d up to the number the convergence study needs (study.ts), each keeping the
 * designed sequence (natural units of m*, physics.md §3 and §6) the same.
 *
 *  wavelength      shorter lattice light, d = λ/2, at the same depth s = V₀/E_R. m* ÷ m depends on s alone
 *                  (J/E_R = J·8md²/h² is fixed by s), so m*, the design and the duration do not change; only
 *                  wavelengths of lasers that exist are offered (COMMON_LATTICE_WAVELENGTHS_NM), none near a strong
 *                  line of the atom.
 *  lattice depth   same light, a shallower lattice with J × f² (m* ÷ f²) and every length of the trap × f
 *                  (f = needed ÷ configured sites per width): u′ = ε²u(εξ) with ε = 1/f in the natural units of
 *                  the new m*, E₀ × f² and t₀ ÷ f², so trap depths and the ramp duration stay as they are.
 *  trap and ramp   same lattice, every length of the trap × f, its depths ÷ f², the ramp duration × f² (and
 *                  λ_end × f³): the KdV scaling u → ε²u(εξ, ε³τ) at fixed m* (Drazin & Johnson, Solitons: an
 *                  Introduction, 1989, §1.2).
 * In natural units (no atom, no light) the first choice is a spacing in ℓ and the second does not exist.
 */
import { depthForTunnelling, lowestBand } from './bands.ts';
import { recoilFrequency, spacingFromWavelengthUm } from './params.ts';

/**
 * Lattice light a lab can buy at watt level (common practice): 532 nm (frequency-doubled Nd:YAG or Yb-fibre
 * lasers), 780 and 795 nm (diode and Ti:sapphire lasers, frequency-doubled 1560 nm fibre lasers), 1064 nm (Nd:YAG,
 * Yb-fibre amplifiers), 1550 nm (Er-fibre amplifiers).
 */
export const COMMON_LATTICE_WAVELENGTHS_NM = [532, 780, 795, 1064, 1550] as const;

/**
 * Strong (dipole-allowed) lines from the ground state, nm in air to 0.1 nm (from memory, NIST Atomic Spectra
 * Database): the alkali D₁ and D₂ lines, and the ¹S₀–¹P₁ lines of Sr and Yb (their narrow intercombination lines
 * do not limit the light). A custom species has none listed.
 */
export const STRONG_LINES_NM: Readonly<Record<string, readonly number[]>> = {
  Li6: [670.8],
  Li7: [670.8],
  Na23: [589.0, 589.6],
  K39: [766.7, 770.1],
  K40: [766.7, 770.1],
  K41: [766.7, 770.1],
  Rb87: [780.2, 795.0],
  Sr88: [460.9],
  Cs133: [852.3, 894.6],
  Yb174: [398.9],
};

/** light within this distance of a strong line is not offered: photon scattering at a given depth grows like
 * 1/detuning, about ten times that of 1064 nm light on ⁸⁷Rb at 30 nm (review in Adv. At.
 * Mol. Opt. Phys. 42, 95, 2000, eq. 10; common practice) */
export const NEAR_RESONANCE_NM = 30;

/** shallowest lattice offered: below s ≈ 5 the next-nearest tunnelling exceeds ~5 % of J, so the band is no longer
 * −2J cos kd (cosine coefficients of the Mathieu band, bands.ts) */
export const MIN_TIGHT_BINDING_DEPTH = 5;

export interface WavelengthChoice {
  kind: 'wavelength';
  wavelength_nm: number;
  spacing_um: number;
  /** depth in recoils of this light (the configured s; null when the configured J/E_R has no sinusoidal lattice) */
  depth_recoil: number | null;
  tunnelling_hz: number;
  sites_per_width: number;
}

export interface DepthChoice {
  kind: 'lattice_depth';
  depth_recoil: number;
  tunnelling_hz: number;
  /** factor on every length of the trap (widths, positions); depths and the duration unchanged */
  widen_trap_by: number;
  sites_per_width: number;
}

export interface SpacingChoice {
  kind: 'spacing';
  /** the largest spacing (ℓ) that gives the needed sites per width; J = E₀ℓ²/d² */
  spacing_l: number;
  sites_per_width: number;
}

export interface TrapChoice {
  kind: 'trap_and_ramp';
  /** factor on every length of the trap */
  widen_trap_by: number;
  /** factors on the trap's depths, on protocol.duration and on flow.lambda_end */
  depth_factor: number;
  duration_factor: number;
  lambda_end_factor: number;
  sites_per_width: number;
}

export type LatticeChoice = WavelengthChoice | DepthChoice | SpacingChoice | TrapChoice;

/** the configured lattice in lab units */
export interface LabLattice {
  species: string;
  massKg: number;
  /** soliton width and configured spacing, µm */
  widthUm: number;
  spacingUm: number;
  /** configured J in h·Hz */
  tunnellingHz: number;
}

export interface LatticeAdvice {
  choices: LatticeChoice[];
  /** why a kind of choice is missing, and the wavelengths left out (near a line) */
  notes: string[];
}

/** the listed wavelengths usable for `species`: none within NEAR_RESONANCE_NM of a strong line */
export function usableWavelengths(species: string): { usable: number[]; excluded: { wavelength_nm: number; line_nm: number }[] } {
  const lines = STRONG_LINES_NM[species] ?? [];
  const usable: number[] = [];
  const excluded: { wavelength_nm: number; line_nm: number }[] = [];
  for (const w of COMMON_LATTICE_WAVELENGTHS_NM) {
    const nearest = lines.reduce<number | null>((best, l) => (best === null || Math.abs(w - l) < Math.abs(w - best) ? l : best), null);
    if (nearest === null || Math.abs(w - nearest) >= NEAR_RESONANCE_NM) usable.push(w);
    else excluded.push({ wavelength_nm: w, line_nm: nearest });
  }
  return { usable, excluded };
}

function wavelengthChoices(lab: LabLattice, needed: number, notes: string[]): WavelengthChoice[] {
  const { usable, excluded } = usableWavelengths(lab.species);
  if (excluded.length > 0) notes.push(`left out near a line of ${lab.species}: ${excluded.map((e) => `${e.wavelength_nm} nm (line at ${e.line_nm} nm)`).join(', ')}`);
  if (!(lab.species in STRONG_LINES_NM)) notes.push(`no lines are listed for species ${lab.species}: check that the light is far from its resonances`);
  const jOverEr = lab.tunnellingHz / recoilFrequency(lab.spacingUm * 1e-6, lab.massKg);
  const depth = depthForTunnelling(jOverEr);
  const choices = usable
    .map((w): WavelengthChoice => {
      const d = spacingFromWavelengthUm(w);
      return { kind: 'wavelength', wavelength_nm: w, spacing_um: d, depth_recoil: depth, tunnelling_hz: jOverEr * recoilFrequency(d * 1e-6, lab.massKg), sites_per_width: lab.widthUm / d };
    })
    .filter((c) => c.sites_per_width >= needed);
  if (choices.length === 0 && usable.length > 0) {
    const shortest = Math.min(...usable);
    notes.push(`no listed wavelength is short enough: ${shortest} nm light gives ${(lab.widthUm / spacingFromWavelengthUm(shortest)).toPrecision(3)} sites per width (${needed.toPrecision(3)} needed)`);
  }
  return choices;
}

function depthChoice(lab: LabLattice, factor: number, needed: number, notes: string[]): DepthChoice | null {
  const er = recoilFrequency(lab.spacingUm * 1e-6, lab.massKg);
  const jOverEr = (lab.tunnellingHz / er) * factor * factor;
  const s = depthForTunnelling(jOverEr);
  if (s === null || s < MIN_TIGHT_BINDING_DEPTH) {
    const jMax = lowestBand(MIN_TIGHT_BINDING_DEPTH).tunnelling;
    notes.push(
      `a shallower lattice cannot do it: J would have to grow × ${(factor * factor).toPrecision(3)} to ${(jOverEr * er).toPrecision(4)} h·Hz, ` +
        `beyond the ${(jMax * er).toPrecision(4)} h·Hz of the shallowest tight-binding lattice (s = ${MIN_TIGHT_BINDING_DEPTH})`,
    );
    return null;
  }
  return { kind: 'lattice_depth', depth_recoil: s, tunnelling_hz: jOverEr * er, widen_trap_by: factor, sites_per_width: needed };
}

/**
 * The choices that reach `needed` sites per soliton width from the `configured` ones (see the module doc);
 * `lab` is null in natural units, where `width` (ℓ) gives the spacing choice. No choice when the configured
 * lattice already has enough sites per width.
 */
export function latticeAdvice(needed: number, configured: number, width: number, lab: LabLattice | null): LatticeAdvice {
  if (!(needed > 0 && configured > 0 && width > 0)) throw new RangeError(`latticeAdvice: sites per width and width must be > 0 (got ${needed}, ${configured}, ${width})`);
  const notes: string[] = [];
  if (configured >= needed) return { choices: [], notes };
  const f = needed / configured;
  const choices: LatticeChoice[] = [];
  if (lab) {
    choices.push(...wavelengthChoices(lab, needed, notes));
    const depth = depthChoice(lab, f, needed, notes);
    if (depth) choices.push(depth);
  } else {
    choices.push({ kind: 'spacing', spacing_l: width / needed, sites_per_width: needed });
  }
  choices.push({ kind: 'trap_and_ramp', widen_trap_by: f, depth_factor: 1 / (f * f), duration_factor: f * f, lambda_end_factor: f * f * f, sites_per_width: needed });
  return { choices, notes };
}
