/**
 * One-step schemes for the time-dependent Schrödinger equation i ∂_s ψ = H(s) ψ, registered by name.
 *
 * A scheme is defined once (`SchemeDefinition`: name, order, the paper it follows) and instantiated per
 * propagator (`create`), so every instance owns its preallocated buffers and two propagations never share
 * scratch. A registry is immutable: `with` returns a new registry that also knows the given schemes, so nothing
 * is registered into shared module state.
 */
import type { Grid } from '../spectral/grid.ts';
import type { KrylovExp } from '../integrate/krylov.ts';
import type { OperatorTerms, SpectralOperator } from './hamiltonian.ts';

/**
 * The time-dependent Hamiltonian; `terms` may point out.v / out.w at arrays it reuses on the next call. With
 * `meanField` = γ ≠ 0 the equation is the Gross–Pitaevskii one, H(s)ψ + γ|ψ_j|²ψ_j on the propagated vector ψ_j
 * (γ = g/dξ for a unit vector whose density is |ψ_j|²/dξ; quantum/gpe.ts, physics.md §10); each state is then its
 * own condensate. With `offset` it is the lab's H seen from a frame moving by X(s), T_X⁻¹HT_X − Ẋk (T_X the translation
 * by X; its k-term is exact in the schemes' diagonal part).
 */
export interface DrivenHamiltonian {
  readonly grid: Grid;
  terms(s: number, out: OperatorTerms): void;
  readonly meanField?: number;
  /** a Hamiltonian written in a frame translated by X(s) propagates φ(ξ, s) = ψ(ξ + X(s), s); whoever hands it lab
   *  states translates them in and out (drive-group.ts runGroup) */
  readonly offset?: (s: number) => number;
}

/** what a scheme instance may use: the grid, the matrix-free operator and a Krylov exponential */
export interface SchemeContext {
  readonly grid: Grid;
  readonly op: SpectralOperator;
  readonly krylov: KrylovExp;
}

/** a scheme bound to one propagator's buffers */
export interface StepScheme {
  /** every state ← ψ(s + h), in place; tolK is the absolute tolerance of any Krylov exponential used */
  step(H: DrivenHamiltonian, s: number, h: number, states: Float64Array[], tolK: number): void;
}

/**
 * A scheme with an embedded error estimate: one trial step from the accepted states into its own buffers, then
 * either `accept` (the trial becomes the states; an FSAL stage is carried to the next step) or another `attempt`
 * with a smaller step from the same states.
 */
export interface EmbeddedStepScheme {
  /** trial step s → s + h; returns max over states of ‖δψ_⊥‖/‖ψ‖, the part of the embedded estimate orthogonal
   *  to the state (the part that changes a fidelity) */
  attempt(H: DrivenHamiltonian, s: number, h: number, states: readonly Float64Array[]): number;
  /** states ← the last trial */
  accept(states: Float64Array[]): void;
  /** forget any carried stage (a new propagation starts) */
  reset(): void;
}

export interface SchemeDefinition {
  readonly name: string;
  /** classical order (sets the controller exponent) */
  readonly order: number;
  /** one line: method and source */
  readonly doc: string;
  create(ctx: SchemeContext): StepScheme;
  /** schemes with an embedded estimate: its order (the estimate scales as h^(order + 1)) and the instance */
  readonly embedded?: { readonly order: number; create(ctx: SchemeContext): EmbeddedStepScheme };
}

/** the step of a scheme on its own buffers (state in, state out; allocates nothing) */
export type SchemeStep<C> = (cache: C, H: DrivenHamiltonian, s: number, h: number, states: Float64Array[], tolK: number) => void;

/** a definition whose instances pair fresh buffers from `makeCache` with the step function */
export function defineScheme<C>(name: string, order: number, doc: string, makeCache: (ctx: SchemeContext) => C, step: SchemeStep<C>): SchemeDefinition {
  return {
    name, order, doc,
    create(ctx: SchemeContext): StepScheme {
      const cache = makeCache(ctx);
      return { step: (H, s, h, states, tolK) => step(cache, H, s, h, states, tolK) };
    },
  };
}

export class SchemeRegistry {
  private readonly defs: ReadonlyMap<string, SchemeDefinition>;
  constructor(defs: readonly SchemeDefinition[]) {
    const map = new Map<string, SchemeDefinition>();
    for (const d of defs) {
      if (map.has(d.name)) throw new RangeError(`scheme "${d.name}" is registered twice`);
      map.set(d.name, d);
    }
    this.defs = map;
  }
  /** a new registry with these schemes added */
  with(...defs: SchemeDefinition[]): SchemeRegistry {
    return new SchemeRegistry([...this.defs.values(), ...defs]);
  }
  names(): string[] {
    return [...this.defs.keys()];
  }
  get(name: string): SchemeDefinition {
    const d = this.defs.get(name);
    if (!d) throw new RangeError(`propagator: scheme "${name}" is not registered; registered: ${this.names().join(', ')}`);
    return d;
  }
}
