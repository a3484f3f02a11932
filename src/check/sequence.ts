/**
 * The external-sequence reader lives in io/external-sequence.ts; these re-exports keep jobs/check.ts compiling
 * until it imports from there (listed in the architecture test's allow-list).
 */
export { readSequence, type Sequence, type SequenceUnitsInput } from '../io/external-sequence.ts';
