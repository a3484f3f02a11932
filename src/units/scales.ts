/**
 * Natural units of the KdV design (physics.md §3) and conversions to the user's units.
 *
 * With a length unit ℓ and mass m: E₀ = ħ²/(2mℓ²), t₀ = ħ/E₀, and the dimensionless variables are
 * ξ = x/ℓ, u = V/E₀, s = t/t₀, so that H/E₀ = k² + u(ξ) with k = -i∂_ξ.
 *
 * Two systems:
 *  - natural: every quantity is already in ℓ, E₀, t₀ (no mass needed); E₀, t₀, ℓ are the symbolic value 1.
 *  - lab:     lengths in µm, energies in h·kHz or µK (k_B·µK), times in ms, temperatures in nK,
 *             velocities in µm/ms; E₀ (J), t₀ (s) and ℓ (m) are numbers computed from the mass.
 * Temperatures in natural units are energies k_B·T in units of E₀.
 */
import { BOLTZMANN_K, HBAR, PLANCK_H } from './constants.ts';

export type EnergyUnit = 'h*kHz' | 'uK';

export type UnitSystemSpec =
  | { system: 'natural' }
  | { system: 'lab'; massKg: number; lengthUnitUm?: number; energy: EnergyUnit };

export interface UnitLabels {
  readonly length: string;
  readonly energy: string;
  readonly time: string;
  readonly temperature: string;
  readonly velocity: string;
}

export interface UnitSystem {
  readonly system: 'natural' | 'lab';
  /** energy unit E₀ = ħ²/(2mℓ²) in J (lab); 1 (symbolic "E₀") in natural */
  readonly E0: number;
  /** time unit t₀ = ħ/E₀ in s (lab); 1 (symbolic "t₀") in natural */
  readonly t0: number;
  /** length unit ℓ in m (lab); 1 (symbolic "ℓ") in natural */
  readonly ell: number;
  /** particle mass in kg (lab), null in natural */
  readonly massKg: number | null;
  /** energy unit of the user's numbers (lab only, null in natural) */
  readonly energyUnit: EnergyUnit | null;
  /** labels of the user's units, for outputs */
  readonly labels: UnitLabels;
  /** labels of the natural units */
  readonly naturalLabels: UnitLabels;
  /** user length (µm | ℓ) → ξ = x/ℓ */
  lengthToNatural(x: number): number;
  lengthFromNatural(xi: number): number;
  /** user energy (h·kHz | µK | E₀) → u = V/E₀ */
  energyToNatural(v: number): number;
  energyFromNatural(u: number): number;
  /** user time (ms | t₀) → s = t/t₀ */
  timeToNatural(t: number): number;
  timeFromNatural(s: number): number;
  /** user temperature (nK | E₀) → k_B T / E₀ */
  temperatureToNatural(temp: number): number;
  temperatureFromNatural(theta: number): number;
  /** user velocity (µm/ms | ℓ/t₀) → dξ/ds */
  velocityToNatural(v: number): number;
  velocityFromNatural(w: number): number;
}

/** SI size of one user unit */
const MICROMETRE = 1e-6;
const MILLISECOND = 1e-3;
const NANOKELVIN = 1e-9;
const H_KHZ_J = PLANCK_H * 1e3;
const UK_J = BOLTZMANN_K * 1e-6;

export const NATURAL_LABELS: UnitLabels = { length: 'ℓ', energy: 'E₀', time: 't₀', temperature: 'E₀', velocity: 'ℓ/t₀' };

function identity(v: number): number {
  return v;
}

/** E₀ = ħ²/(2mℓ²) in J for mass m (kg) and length unit ℓ (m) — physics.md §3 */
export function energyScale(massKg: number, ellM: number): number {
  return (HBAR * HBAR) / (2 * massKg * ellM * ellM);
}

/** Build the unit system; lab needs a finite positive mass (kg) and length unit (µm, default 1). */
export function makeUnitSystem(spec: UnitSystemSpec): UnitSystem {
  if (spec.system === 'natural') {
    return {
      system: 'natural',
      E0: 1,
      t0: 1,
      ell: 1,
      massKg: null,
      energyUnit: null,
      labels: NATURAL_LABELS,
      naturalLabels: NATURAL_LABELS,
      lengthToNatural: identity,
      lengthFromNatural: identity,
      energyToNatural: identity,
      energyFromNatural: identity,
      timeToNatural: identity,
      timeFromNatural: identity,
      temperatureToNatural: identity,
      temperatureFromNatural: identity,
      velocityToNatural: identity,
      velocityFromNatural: identity,
    };
  }
  const lengthUnitUm = spec.lengthUnitUm ?? 1;
  if (!(Number.isFinite(spec.massKg) && spec.massKg > 0)) throw new RangeError(`mass must be finite and > 0 kg, got ${spec.massKg}`);
  if (!(Number.isFinite(lengthUnitUm) && lengthUnitUm > 0)) throw new RangeError(`length unit must be finite and > 0 µm, got ${lengthUnitUm}`);
  const ell = lengthUnitUm * MICROMETRE;
  const E0 = energyScale(spec.massKg, ell);
  const t0 = HBAR / E0;
  const energyJ = spec.energy === 'uK' ? UK_J : H_KHZ_J;
  // factors: natural value = user value × factor
  const fLength = MICROMETRE / ell;
  const fEnergy = energyJ / E0;
  const fTime = MILLISECOND / t0;
  const fTemp = (BOLTZMANN_K * NANOKELVIN) / E0;
  const fVel = (MICROMETRE / MILLISECOND) * (t0 / ell);
  return {
    system: 'lab',
    E0,
    t0,
    ell,
    massKg: spec.massKg,
    energyUnit: spec.energy,
    labels: { length: 'µm', energy: spec.energy === 'uK' ? 'µK' : 'h·kHz', time: 'ms', temperature: 'nK', velocity: 'µm/ms' },
    naturalLabels: NATURAL_LABELS,
    lengthToNatural: (x) => x * fLength,
    lengthFromNatural: (xi) => xi / fLength,
    energyToNatural: (v) => v * fEnergy,
    energyFromNatural: (u) => u / fEnergy,
    timeToNatural: (t) => t * fTime,
    timeFromNatural: (s) => s / fTime,
    temperatureToNatural: (temp) => temp * fTemp,
    temperatureFromNatural: (theta) => theta / fTemp,
    velocityToNatural: (v) => v * fVel,
    velocityFromNatural: (w) => w / fVel,
  };
}

/**
 * Dispersion number δ² = ħ²/(2mV₀w²) of a well of depth V₀ and width w (physics.md §3); in natural variables
 * (u₀ = V₀/E₀, ω = w/ℓ) it is δ² = 1/(u₀ω²). δ → 0 is the classical (dispersionless) limit. The sign of the
 * depth is ignored (|u₀| is used), so a barrier of the same size gets the same number.
 */
export function dispersionNumber(depthNatural: number, widthNatural: number): number {
  return 1 / (Math.abs(depthNatural) * widthNatural * widthNatural);
}

export const DISPERSION_EXPLANATION =
  'δ² = ħ²/(2mV₀w²), with V₀ the depth and w = √(2V₀/V″) the curvature width at the minimum of the deepest well (the width of a sech² well, √2σ for a Gaussian of standard deviation σ), compares the quantum (dispersive, ∝ ħ²) term of the KdV flow with its nonlinear term: δ² → 0 is the classical limit, where the dispersionless flow breaks, so light atoms and shallow, narrow wells need the quantum design.';
