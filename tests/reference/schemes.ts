/**
 * The reference schemes registered next to the production one, for tests that compare schemes: 'magnus4' and
 * 'split4' (this folder) and the production ones, 'etd53', 'etd43' (src/quantum/etd-pair-scheme.ts) and 'etd4'
 * (src/quantum/etd4.ts).
 */
import { CORE_SCHEMES, propagate as propagateWith, type DrivenHamiltonian, type PropagateOptions, type PropagationResult } from '../../src/quantum/propagator.ts';
import { MAGNUS4 } from './magnus4.ts';
import { SPLIT4 } from './split4.ts';

export const REFERENCE_SCHEMES = CORE_SCHEMES.with(MAGNUS4, SPLIT4);

/** one-shot propagation that also knows the reference schemes */
export function propagate(H: DrivenHamiltonian, initial: readonly Float64Array[], s0: number, s1: number, opts: PropagateOptions = {}): PropagationResult {
  return propagateWith(H, initial, s0, s1, opts, REFERENCE_SCHEMES);
}
