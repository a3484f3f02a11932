/**
 * Validation of the user's options for the variational step of `isotrap check` (check/variational.ts), so that
 * a bad value is a UserError naming the option; the numerical routines treat the same values as a caller's
 * mistake (RangeError).
 */
import { UserError } from '../core/errors.ts';
import { BLOCK_MARGIN } from '../check/variational.ts';

export interface VariationalInput {
  /** subspace size (lowest levels of each frame) */
  states?: number;
  /** temperature, natural units (E₀) */
  temperature?: number;
  /** Legendre terms in g */
  legendre?: number;
}

/** Check the variational options against a grid of `points` points (UserError for a value not allowed). */
export function validateVariationalInput(v: VariationalInput, points: number): void {
  const { states, temperature, legendre } = v;
  if (states !== undefined && (!Number.isInteger(states) || states < 1 || states + BLOCK_MARGIN > points)) {
    throw new UserError(`variational: states = ${states} is not allowed: must be an integer in 1 … ${points - BLOCK_MARGIN}`);
  }
  if (temperature !== undefined && !(Number.isFinite(temperature) && temperature > 0)) {
    throw new UserError(`variational: temperature = ${temperature} is not allowed: must be a finite number > 0 (E₀)`);
  }
  if (legendre !== undefined && (!Number.isInteger(legendre) || legendre < 1)) {
    throw new UserError(`variational: legendre = ${legendre} is not allowed: must be an integer ≥ 1`);
  }
}
