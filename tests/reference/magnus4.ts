/**
 * Reference scheme 'magnus4' (tests only): the fourth-order commutator-free Magnus method of integrate/magnus.ts
 * (Blanes & Moan, Appl. Numer. Math. 56, 1519, 2006, two exponentials at the Gauss nodes), each exponential by
 * Lanczos (integrate/krylov.ts). Unitary; the reference for non-stiff drives (harmonic test). For the cubic drive
 * its Krylov cost grows with h·4|τ′|k_max³, so it is not the production scheme.
 */
import { CF_MAGNUS4 } from '../../src/integrate/magnus.ts';
import { emptyTerms, normBound, type OperatorTerms } from '../../src/quantum/hamiltonian.ts';
import { defineScheme, type DrivenHamiltonian, type SchemeContext, type SchemeDefinition } from '../../src/quantum/scheme.ts';
import { TermsBuffer } from '../../src/quantum/terms-buffer.ts';

/** buffers of one instance: raw terms, H at the two nodes, the current exponent */
class Magnus4Cache {
  readonly raw: OperatorTerms = emptyTerms();
  readonly stages: TermsBuffer[];
  readonly exponent: TermsBuffer;
  current: OperatorTerms;
  currentNorm = 1;
  readonly apply: (x: Float64Array, y: Float64Array) => void;
  constructor(readonly ctx: SchemeContext) {
    const n = ctx.grid.n;
    this.stages = CF_MAGNUS4.nodes.map(() => new TermsBuffer(n));
    this.exponent = new TermsBuffer(n);
    this.current = this.exponent.t;
    this.apply = (x, y) => ctx.op.apply(this.current, x, y);
  }
}

/** one CF Magnus-4 step s → s + h, in place on every state */
function magnus4Step(c: Magnus4Cache, H: DrivenHamiltonian, s: number, h: number, states: Float64Array[], tolK: number): void {
  CF_MAGNUS4.nodes.forEach((node, i) => {
    H.terms(s + node * h, c.raw);
    c.stages[i].load(c.raw);
  });
  const [t1, t2] = c.stages;
  for (const [a, b] of CF_MAGNUS4.exponents) {
    c.exponent.combine(a, t1.t, b, t2.t);
    c.current = c.exponent.t;
    c.currentNorm = normBound(c.ctx.grid, c.current);
    for (const psi of states) c.ctx.krylov.expm(c.apply, psi, h, tolK, psi, c.currentNorm);
  }
}

/** 'magnus4': commutator-free Magnus-4 (Blanes & Moan, Appl. Numer. Math. 56, 1519, 2006) */
export const MAGNUS4: SchemeDefinition = defineScheme('magnus4', 4, 'commutator-free Magnus, two exponentials at the Gauss nodes (Blanes & Moan 2006)',
  (ctx) => new Magnus4Cache(ctx), magnus4Step);
