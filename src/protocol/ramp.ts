/**
 * Ramps λ(s) on [0, T] from 0 to λ_end, with their derivatives λ'(s) and λ''(s) and the inverse s(λ).
 *
 *   sin2:   λ = λ_end (r − sin(2πr)/2π),            λ' = (λ_end/T)(1 − cos 2πr)        (λ' = 0 at both ends)
 *   smooth: λ = λ_end (10r³ − 15r⁴ + 6r⁵),          λ' = (λ_end/T) 30 r²(1 − r)²        (λ' = λ'' = 0 at both ends)
 *   linear: λ = λ_end r,                             λ' = λ_end/T                        (λ' ≠ 0 at the ends!)
 *
 * with r = s/T. For s outside [0, T] the ramp is held at its end values (λ' = 0). The CD correction
 * λ'·A_λ vanishes at the ends only if λ'(0) = λ'(T) = 0 (physics.md §1): `linear` violates this, so the
 * CD Hamiltonian differs from H at the start and the end; `endSlopeZero` says which case applies.
 *
 * The shapes live in one registry (`RAMP_SHAPES`, keyed by the names in RAMP_KINDS); `makeRamp` looks a name up.
 */

export const RAMP_KINDS = ['sin2', 'smooth', 'linear'] as const;
export type RampKind = (typeof RAMP_KINDS)[number];

/** true when `name` is one of RAMP_KINDS */
export function isRampKind(name: string): name is RampKind {
  return (RAMP_KINDS as readonly string[]).includes(name);
}

/** bisection steps of the inverse s(λ): 2⁻⁶⁰ T is below the double resolution of any s in [0, T] */
export const INVERSE_BISECTION_STEPS = 60;

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
  /**
   * the time s ∈ [0, T] at which the ramp reaches λ (every ramp is monotonic): the largest bisection point with
   * λ(s) < λ after INVERSE_BISECTION_STEPS halvings of [0, T]
   */
  timeAt(lambda: number): number;
}

/** λ(s), λ'(s), λ''(s) of one ramp shape for a duration T and an end value L */
interface RampFunctions {
  value(s: number): number;
  rate(s: number): number;
  accel(s: number): number;
}

interface RampShape {
  readonly endSlopeZero: boolean;
  make(T: number, L: number): RampFunctions;
}

const TWO_PI = 2 * Math.PI;
/** r = s/T held at 0 before the start and at 1 after the end */
const clampR = (s: number, T: number): number => (s <= 0 ? 0 : s >= T ? 1 : s / T);
const inside = (s: number, T: number): boolean => s > 0 && s < T;

/** the ramp shapes by name (formulas in the module doc) */
export const RAMP_SHAPES: { readonly [K in RampKind]: RampShape } = {
  sin2: {
    endSlopeZero: true,
    make: (T, L) => ({
      value: (s) => { const r = clampR(s, T); return L * (r - Math.sin(TWO_PI * r) / TWO_PI); },
      rate: (s) => (inside(s, T) ? (L / T) * (1 - Math.cos((TWO_PI * s) / T)) : 0),
      accel: (s) => (inside(s, T) ? ((L * TWO_PI) / (T * T)) * Math.sin((TWO_PI * s) / T) : 0),
    }),
  },
  smooth: {
    endSlopeZero: true,
    make: (T, L) => ({
      value: (s) => { const r = clampR(s, T); return L * r * r * r * (10 - 15 * r + 6 * r * r); },
      rate: (s) => { if (!inside(s, T)) return 0; const r = s / T; return (L / T) * 30 * r * r * (1 - r) * (1 - r); },
      accel: (s) => { if (!inside(s, T)) return 0; const r = s / T; return (L / (T * T)) * 60 * r * (1 - r) * (1 - 2 * r); },
    }),
  },
  linear: {
    endSlopeZero: false,
    make: (T, L) => ({
      value: (s) => L * clampR(s, T),
      rate: (s) => (s >= 0 && s <= T ? L / T : 0),
      accel: () => 0,
    }),
  },
};

/** inverse of a monotonic ramp by bisection on [0, T] (see Ramp.timeAt) */
function bisectTime(value: (s: number) => number, T: number, lambda: number): number {
  let lo = 0, hi = T;
  for (let i = 0; i < INVERSE_BISECTION_STEPS; i++) {
    const mid = 0.5 * (lo + hi);
    if (value(mid) < lambda) lo = mid;
    else hi = mid;
  }
  return lo;
}

/** The ramp `kind` over [0, duration] from 0 to lambdaEnd. RangeError for an unknown kind or a bad duration or end. */
export function makeRamp(kind: RampKind, duration: number, lambdaEnd: number): Ramp {
  if (!isRampKind(kind)) throw new RangeError(`ramp: kind "${String(kind)}" is not known; allowed: ${RAMP_KINDS.join(', ')}`);
  if (!(duration > 0) || !Number.isFinite(duration)) throw new RangeError(`ramp: duration ${duration} must be a positive finite number`);
  if (!Number.isFinite(lambdaEnd)) throw new RangeError(`ramp: lambdaEnd ${lambdaEnd} must be a finite number`);
  const shape = RAMP_SHAPES[kind];
  const f = shape.make(duration, lambdaEnd);
  return {
    kind,
    duration,
    lambdaEnd,
    endSlopeZero: shape.endSlopeZero,
    value: f.value,
    rate: f.rate,
    accel: f.accel,
    timeAt: (lambda) => bisectTime(f.value, duration, lambda),
  };
}
