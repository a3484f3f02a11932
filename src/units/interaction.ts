/**
 * The 1-D mean-field coupling of a condensate in a tight transverse harmonic guide (physics.md §10):
 *
 *     g₁D = 2ħω⊥a_s                                  (Olshanii, PRL 81, 938, 1998, eq. (6) for a_s ≪ a⊥)
 *     g₁D = 2ħω⊥a_s / (1 − C a_s/a⊥),  a⊥ = √(ħ/mω⊥),  C = −ζ(1/2)/√2 ≈ 1.0326   (the same paper, eq. (6))
 *
 * isotrap uses the first form; `olshaniiCorrection` = C a_s/a⊥ is the relative size of the confinement-induced
 * term it leaves out, reported with every run and warned about above OLSHANII_WARN. In natural units (ħ = 1,
 * 2m = 1, ∫|ψ|² dξ = 1; quantum/gpe.ts) the dimensionless coupling of N atoms is g = g₁D N/(E₀ℓ).
 */
import { HBAR } from './constants.ts';

/** Bohr radius in m (CODATA 2018: 5.29177210903e-11 m) */
export const BOHR_RADIUS_M = 5.29177210903e-11;
/** C = −ζ(1/2)/√2 with ζ(1/2) = −1.4603545088 (Olshanii 1998, eq. (6); ζ(1/2) from memory) */
export const OLSHANII_C = 1.4603545088 / Math.SQRT2;
/** the confinement-induced correction C a_s/a⊥ above which the simple g₁D = 2ħω⊥a_s is off by more than 5 %
 *  (common practice) */
export const OLSHANII_WARN = 0.05;

export interface GuideCoupling {
  /** g₁D = 2ħω⊥a_s in J·m */
  g1dJm: number;
  /** transverse oscillator length a⊥ = √(ħ/mω⊥) in m */
  aPerpM: number;
  /** C a_s/a⊥ (signed): the relative size of the omitted confinement-induced term */
  olshaniiCorrection: number;
  /** ħω⊥ in J */
  transverseEnergyJ: number;
}

/** g₁D = 2ħω⊥a_s of atoms of mass m in a guide of transverse frequency ω⊥/2π (Hz), scattering length a_s (m) */
export function guideCoupling(massKg: number, transverseHz: number, scatteringLengthM: number): GuideCoupling {
  if (!(massKg > 0 && Number.isFinite(massKg))) throw new RangeError(`coupling: mass must be finite and > 0 kg, got ${massKg}`);
  if (!(transverseHz > 0 && Number.isFinite(transverseHz))) throw new RangeError(`coupling: transverse frequency must be finite and > 0 Hz, got ${transverseHz}`);
  if (!Number.isFinite(scatteringLengthM)) throw new RangeError(`coupling: scattering length must be finite, got ${scatteringLengthM}`);
  const omega = 2 * Math.PI * transverseHz;
  const aPerpM = Math.sqrt(HBAR / (massKg * omega));
  return { g1dJm: 2 * HBAR * omega * scatteringLengthM, aPerpM, olshaniiCorrection: (OLSHANII_C * scatteringLengthM) / aPerpM, transverseEnergyJ: HBAR * omega };
}
