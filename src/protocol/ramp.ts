/**
 * Ramps λ(s) on [0, T] from 0 to λ_end, with their derivatives λ'(s) and λ''(s).
 *
 *   sin2:   λ = λ_end (r − sin(2πr)/2π),            λ' = (λ_end/T)(1 − cos 2πr)        (λ' = 0 at both ends)
 *   smooth: λ = λ_end (10r³ − 15r⁴ + 6r⁵),          λ' = (λ_end/T) 30 r²(1 − r)²        (λ' = λ'' = 0 at both ends)
 *   linear: λ = λ_end r,                             λ' = λ_end/T                        (λ' ≠ 0 at the ends!)
 *
 * with r = s/T. For s outside [0, T] the ramp is held at its end values (λ' = 0). The CD correction
 * λ'·A_λ vanishes at the ends only if λ'(0) = λ'(T) = 0 (physics.md §1): `linear` violates this, so the
 * CD Hamiltonian differs from H at the start and the end; `endSlopeZero` says which case applies.
 */
import { UserError } from '../core/errors.ts';

export const RAMP_KINDS = ['sin2', 'smooth', 'linear'] as const;
export type RampKind = (typeof RAMP_KINDS)[number];

/** true when `name` is one of RAMP_KINDS */
export function isRampKind(name: string): name is RampKind {
  return (RAMP_KINDS as readonly string[]).includes(name);
}

export interface Ramp {
  readonly kind: RampKind;
  readonly duration: number;
  readonly lambdaEnd: number;
  /** true when λ'(0) = λ'(T) = 0 so that H_CD = H at both ends */
  readonly endSlopeZero: boolean;
  value(s: number): number;
  /** dλ/ds */
  rate(s: number): number;
  /** d²λ/ds² */
  accel(s: number): number;
}

export function makeRamp(kind: RampKind, duration: number, lambdaEnd: number): Ramp {
  if (!RAMP_KINDS.includes(kind)) throw new UserError(`ramp: kind "${String(kind)}" is not known; allowed: ${RAMP_KINDS.join(', ')}`);
  if (!(duration > 0) || !Number.isFinite(duration)) throw new UserError(`ramp: duration ${duration} must be a positive finite number`);
  if (!Number.isFinite(lambdaEnd)) throw new UserError(`ramp: lambdaEnd ${lambdaEnd} must be a finite number`);
  const T = duration;
  const L = lambdaEnd;
  const clampR = (s: number): number => (s <= 0 ? 0 : s >= T ? 1 : s / T);
  const inside = (s: number): boolean => s > 0 && s < T;
  const twoPi = 2 * Math.PI;
  switch (kind) {
    case 'sin2':
      return {
        kind, duration, lambdaEnd, endSlopeZero: true,
        value: (s) => { const r = clampR(s); return L * (r - Math.sin(twoPi * r) / twoPi); },
        rate: (s) => (inside(s) ? (L / T) * (1 - Math.cos((twoPi * s) / T)) : 0),
        accel: (s) => (inside(s) ? ((L * twoPi) / (T * T)) * Math.sin((twoPi * s) / T) : 0),
      };
    case 'smooth':
      return {
        kind, duration, lambdaEnd, endSlopeZero: true,
        value: (s) => { const r = clampR(s); return L * r * r * r * (10 - 15 * r + 6 * r * r); },
        rate: (s) => { if (!inside(s)) return 0; const r = s / T; return (L / T) * 30 * r * r * (1 - r) * (1 - r); },
        accel: (s) => { if (!inside(s)) return 0; const r = s / T; return (L / (T * T)) * 60 * r * (1 - r) * (1 - 2 * r); },
      };
    case 'linear':
      return {
        kind, duration, lambdaEnd, endSlopeZero: false,
        value: (s) => L * clampR(s),
        rate: (s) => (s >= 0 && s <= T ? L / T : 0),
        accel: () => 0,
      };
  }
}
