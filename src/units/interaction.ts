/**
 * The 1-D mean-field coupling of a condensate in a tight transverse harmonic guide (physics.md §10):
 *
 *     g₁D = 2ħω⊥a_s                                  (Olshanii, PRL 81, 938, 1998, eq. (6) for a_s ≪ a⊥)
 *     g₁D = 2ħω⊥a_s / (1 − C a_s/a_rel),  C = −ζ(1/2)/√2 ≈ 1.0326   (the same paper, eq. (6))
 *
 * with a⊥ = √(ħ/mω⊥) the transverse oscillator length (physics.md §10) and a_rel = √(2ħ/mω⊥) = √2 a⊥ the length
 * of the relative motion of two atoms used in that formula (reduced mass m/2; Bergeman, Moore & Olshanii, PRL 91,
 * 163201, 2003; from memory). isotrap uses the first form; `olshaniiCorrection` = x = C a_s/a_rel sizes the
 * confinement-induced term it leaves out (relative error x/(1 − x)), reported with every run and warned about
 * above OLSHANII_WARN; at x ≥ 1 (the confinement-induced resonance) the simple form is meaningless. In natural units (ħ = 1,
 * 2m = 1, ∫|ψ|² dξ = 1; quantum/gpe.ts) the dimensionless coupling of N atoms is g = g₁D N/(E₀ℓ).
 */
import { HBAR } from './constants.ts';

/** Bohr radius in m (CODATA 2018: 5.29177210903e-11 m) */
export const BOHR_RADIUS_M = 5.29177210903e-11;
/** C = −ζ(1/2)/√2 with ζ(1/2) = −1.4603545088 (Olshanii 1998, eq. (6); ζ(1/2) from memory) */
export const OLSHANII_C = 1.4603545088 / Math.SQRT2;
/** the confinement-induced x = C a_s/a_rel above which the simple g₁D = 2ħω⊥a_s is off by about 5 % or more
 *  (common practice) */
export const OLSHANII_WARN = 0.05;

export interface GuideCoupling {
  /** g₁D = 2ħω⊥a_s in J·m */
  g1dJm: number;
  /** transverse oscillator length a⊥ = √(ħ/mω⊥) in m */
  aPerpM: number;
  /** x = C a_s/(√2 a⊥) (signed): the omitted confinement-induced term, relative error x/(1 − x) */
  olshaniiCorrection: number;
  /** ħω⊥ in J */
  transverseEnergyJ: number;
}

/** 3-D collapse of an attractive condensate in a guide: N|a_s|/a⊥ above ≈ 0.67 (Gammal, Frederico & Tomio, PRA 64,
 *  055602, 2001; from memory); the 1-D equation cannot show it, so runs beyond this fraction of it are warned about */
export const COLLAPSE_RATIO = 0.67;
/** the mean-field (Gross–Pitaevskii) regime of a 1-D Bose gas needs the Lieb–Liniger parameter γ = m g₁D/(ħ²n) ≪ 1
 *  (Lieb & Liniger, Phys. Rev. 130, 1605, 1963; Petrov, Shlyapnikov & Walraven, PRL 85, 3745, 2000); warned above
 *  this value at the peak density (common practice) */
export const LIEB_LINIGER_MAX = 0.1;
/** the 1-D regime needs the mean-field energy g₁D n ≪ ħω⊥; warned above this fraction (common practice) */
export const TRANSVERSE_FRACTION = 0.1;

/** g₁D = 2ħω⊥a_s of atoms of mass m in a guide of transverse frequency ω⊥/2π (Hz), scattering length a_s (m) */
export function guideCoupling(massKg: number, transverseHz: number, scatteringLengthM: number): GuideCoupling {
  if (!(massKg > 0 && Number.isFinite(massKg))) throw new RangeError(`coupling: mass must be finite and > 0 kg, got ${massKg}`);
  if (!(transverseHz > 0 && Number.isFinite(transverseHz))) throw new RangeError(`coupling: transverse frequency must be finite and > 0 Hz, got ${transverseHz}`);
  if (!Number.isFinite(scatteringLengthM)) throw new RangeError(`coupling: scattering length must be finite, got ${scatteringLengthM}`);
  const omega = 2 * Math.PI * transverseHz;
  const aPerpM = Math.sqrt(HBAR / (massKg * omega));
  return { g1dJm: 2 * HBAR * omega * scatteringLengthM, aPerpM, olshaniiCorrection: (OLSHANII_C * scatteringLengthM) / (Math.SQRT2 * aPerpM), transverseEnergyJ: HBAR * omega };
}
