/**
 * Fourth-order commutator-free Magnus method with two exponentials at the Gauss–Legendre nodes (Blanes & Moan,
 * Appl. Numer. Math. 56, 1519, 2006; Alvermann & Fehske, J. Comput. Phys. 230, 5930, 2011, "CF4:2"):
 *
 *     y(t + h) = exp(−ih(α₁H₁ + α₂H₂)) exp(−ih(α₂H₁ + α₁H₂)) y(t),   H_i = H(t + c_i h),
 *     c₁,₂ = ½ ∓ √3/6,   α₁,₂ = ¼ ∓ √3/6.
 *
 * The table lists the exponents in the order they act: (weight of H₁, weight of H₂).
 */
const SQ3 = Math.sqrt(3);

export interface CommutatorFreeTable {
  /** stage nodes c_i (fractions of the step) */
  readonly nodes: readonly number[];
  /** exponents in order of application: weights of H(t + c_i h) */
  readonly exponents: readonly (readonly number[])[];
}

const A1 = 0.25 - SQ3 / 6;
const A2 = 0.25 + SQ3 / 6;

export const CF_MAGNUS4: CommutatorFreeTable = Object.freeze({
  nodes: Object.freeze([0.5 - SQ3 / 6, 0.5 + SQ3 / 6]),
  exponents: Object.freeze([Object.freeze([A2, A1]), Object.freeze([A1, A2])]),
});
