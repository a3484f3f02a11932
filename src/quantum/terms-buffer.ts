/**
 * Owned copies of operator terms (hamiltonian.ts): a `DrivenHamiltonian` may fill its output with arrays it reuses
 * on the next call, so a scheme that needs H at several stage times copies them here, optionally as a real linear
 * combination a·A + b·B (the exponents of commutator-free Magnus methods are such combinations).
 */
import { emptyTerms, type OperatorTerms } from './hamiltonian.ts';

export class TermsBuffer {
  readonly t: OperatorTerms = emptyTerms();
  readonly v: Float64Array;
  readonly w: Float64Array;
  /** when the source had w ≡ v, the folded w equals wOverV·v (saves one FFT in etd4) */
  wOverV: number | null = null;
  constructor(n: number) {
    this.v = new Float64Array(n);
    this.w = new Float64Array(n);
  }
  /** copy src (whose arrays may be transient) into own storage, with the coefficient b folded into w */
  load(src: OperatorTerms): void {
    this.combine(1, src, 0, null);
    this.wOverV = src.w !== null && src.w === src.v ? src.b : null;
  }
  /** this = other (arrays copied) */
  copyFrom(other: TermsBuffer): void {
    const t = this.t, o = other.t;
    t.c1 = o.c1; t.c2 = o.c2; t.c3 = o.c3; t.b = o.b;
    if (o.v) { this.v.set(o.v); t.v = this.v; } else t.v = null;
    if (o.w) { this.w.set(o.w); t.w = this.w; } else t.w = null;
    this.wOverV = other.wOverV;
  }
  /** this = a·A + b·B */
  combine(a: number, A: OperatorTerms, bb: number, B: OperatorTerms | null): void {
    const t = this.t;
    this.wOverV = null;
    const n = this.v.length;
    t.c1 = a * A.c1 + (B ? bb * B.c1 : 0);
    t.c2 = a * A.c2 + (B ? bb * B.c2 : 0);
    t.c3 = a * A.c3 + (B ? bb * B.c3 : 0);
    const hasV = A.v !== null || (B !== null && B.v !== null);
    const hasW = (A.w !== null && A.b !== 0) || (B !== null && B.w !== null && B.b !== 0);
    if (hasV) {
      for (let j = 0; j < n; j++) this.v[j] = (A.v ? a * A.v[j] : 0) + (B && B.v ? bb * B.v[j] : 0);
      t.v = this.v;
    } else t.v = null;
    if (hasW) {
      const fa = A.w ? a * A.b : 0;
      const fb = B && B.w ? bb * B.b : 0;
      for (let j = 0; j < n; j++) this.w[j] = (A.w ? fa * A.w[j] : 0) + (B && B.w ? fb * B.w[j] : 0);
      t.w = this.w;
      t.b = 1;
    } else {
      t.w = null;
      t.b = 0;
    }
  }
}
