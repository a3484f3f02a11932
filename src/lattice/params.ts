/**
 * Lattice parameters of the lowest band (physics.md §6): spacing d, tunnelling J and the effective mass.
 *
 *   recoil energy      E_R = ħ²k_L²/(2m),  k_L = π/d                 (sinusoidal lattice of period d)
 *   lowest band        E(k) = −2J cos kd   ⇒   m* = ħ²/(2Jd²)          (band curvature at k = 0)
 *   natural units      J = E₀ℓ²/d² = 1/h²  with h = d/ℓ and E₀ = ħ²/(2m*ℓ²); band width 4J
 *   optical lattice    d = λ/2 for light of wavelength λ (standing wave of a retro-reflected beam)
 *
 * For a lattice given by its depth s = V₀/E_R, J comes from the Mathieu band width (bands.ts) or from Zwerger's
 * deep-lattice estimate; both are reported (DepthTunnelling).
 */
import { ATOMIC_MASS_CONSTANT, HBAR, PLANCK_H } from '../units/constants.ts';
import { lowestBand, tunnellingEstimate } from './bands.ts';

/** E_R/h in Hz of a lattice of spacing d (m) for an atom of mass m (kg) */
export function recoilFrequency(spacingM: number, massKg: number): number {
  const kL = Math.PI / spacingM;
  return (HBAR * HBAR * kL * kL) / (2 * massKg) / PLANCK_H;
}

/** m* = ħ²/(2Jd²) in u, for J in h·Hz and d in m */
export function effectiveMassU(tunnellingHz: number, spacingM: number): number {
  const jJ = tunnellingHz * PLANCK_H;
  return (HBAR * HBAR) / (2 * jJ * spacingM * spacingM) / ATOMIC_MASS_CONSTANT;
}

/** J = 1/h² in E₀ for a spacing h in ℓ (natural units of the effective mass) */
export function naturalTunnelling(h: number): number {
  return 1 / (h * h);
}

/** width 4J = 4/h² of the lowest band −2J cos kd in E₀, for a spacing h in ℓ (natural units of the effective mass) */
export function naturalBandWidth(h: number): number {
  return 4 / (h * h);
}

/** spacing d = λ/2 in µm of the standing wave of retro-reflected light of wavelength λ in nm */
export function spacingFromWavelengthUm(wavelengthNm: number): number {
  return wavelengthNm / 2000;
}

/** δ² = ħ²/(2mV₀w²) ∝ 1/m: the dispersion number computed with mass `massUsed`, re-expressed for `massOther` */
export function dispersionForMass(delta2: number, massUsed: number, massOther: number): number {
  return (delta2 * massUsed) / massOther;
}

/** J of a lattice of depth s = V₀/E_R: the deep-lattice estimate and the band-structure value, with the band data */
export interface DepthTunnelling {
  s: number;
  recoil_hz: number;
  estimate_hz: number;
  band_hz: number;
  /** estimate / band − 1 */
  relative_difference: number;
  band_mass_ratio: number;
  band_bottom_recoil: number;
  band_top_recoil: number;
}

/** see DepthTunnelling; spacing d in m, mass in kg */
export function depthTunnelling(s: number, spacingM: number, massKg: number): DepthTunnelling {
  const erHz = recoilFrequency(spacingM, massKg);
  const band = lowestBand(s);
  const estimateHz = tunnellingEstimate(s) * erHz;
  const bandHz = band.tunnelling * erHz;
  return {
    s,
    recoil_hz: erHz,
    estimate_hz: estimateHz,
    band_hz: bandHz,
    relative_difference: estimateHz / bandHz - 1,
    band_mass_ratio: band.massRatioAtBottom,
    band_bottom_recoil: band.bottom,
    band_top_recoil: band.top,
  };
}
