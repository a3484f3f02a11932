import { expect } from 'vitest';
import { UserError } from '../src/core/errors.ts';

/** run `fn`, expect a UserError, return its message */
export function userErrorOf(fn: () => unknown): string {
  try {
    fn();
  } catch (e) {
    expect(e).toBeInstanceOf(UserError);
    expect((e as UserError).exitCode).toBe(2);
    return (e as UserError).message;
  }
  throw new Error('expected a UserError, none was thrown');
}
