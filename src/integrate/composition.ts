/**
 * Symmetric composition of a symmetric one-step method Φ_h of even order p into order p + 2 (Yoshida, Phys.
 * Lett. A 150, 262, 1990; Hairer, Lubich & Wanner, Geometric Numerical Integration, 2nd ed. 2006, §II.4, eq. 4.4):
 * the triple jump Φ_{γ₁h} ∘ Φ_{γ₂h} ∘ Φ_{γ₁h} with
 *
 *     γ₁ = 1/(2 − 2^{1/3}),   γ₂ = 1 − 2γ₁ = −2^{1/3}/(2 − 2^{1/3}).
 *
 * From Strang splitting (order 2) it gives order 4.
 */

/** the triple-jump step fractions γ₁, γ₂, γ₁ (they sum to 1) */
export const TRIPLE_JUMP: readonly number[] = Object.freeze([1 / (2 - Math.cbrt(2)), 1 - 2 / (2 - Math.cbrt(2)), 1 / (2 - Math.cbrt(2))]);
