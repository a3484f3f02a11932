/**
 * The exact correction written as A_τ/ħ = a k³ + ½{g, k} (physics.md §2, §3): the coefficients read off the Lax
 * operator of hamiltonian.ts (laxTerms, the one home of A_τ = −(4k³ + 3{u,k}) + c k), so that
 *
 *   a = −4,     g(ξ) = −6 u(ξ) + c          (natural units ℓ, E₀; c the co-moving drift of the flow)
 *
 * in the Weyl-ordered form A = a p³ + ½{g, p} of physics.md §2 (½{c, k} = c k for a constant c).
 */
import { laxTerms } from './hamiltonian.ts';

export interface DrivePieces {
  /** a: the coefficient of k³ in A_τ/ħ (natural units) */
  cubic: number;
  /** g(ξ): the field of the momentum-linear part ½{g, k} of A_τ/ħ (natural lengths per unit τ) */
  field: Float64Array;
}

/** a and g of A_τ for the potential u and drift c (written into `field` when given) */
export function drivePieces(u: Float64Array, drift: number, field = new Float64Array(u.length)): DrivePieces {
  const t = laxTerms(u, 'full', undefined, drift);
  const w = t.w ?? u;
  // b{w, k} + c₁k = ½{2b·w + c₁, k}
  for (let j = 0; j < u.length; j++) field[j] = 2 * t.b * w[j] + t.c1;
  return { cubic: t.c3, field };
}
