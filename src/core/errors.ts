/**
 * The two kinds of failure the tool reports without a stack trace:
 *
 *  - `UserError`: the input is wrong (a config key, an option, a file). Exit code 2, and nothing is written.
 *  - `NumericalError`: the input was accepted but a computation could not meet its stated budget (a solver that
 *    did not converge, a step size that stalled). Exit code 1: the run failed its own acceptance.
 *  - `AcceptanceFailure`: the run finished what it could but the result fails its acceptance (a classical flow
 *    that breaks before the requested end); what was written is complete and named in the message. Exit code 1.
 *
 * Numerical routines throw `NumericalError` (or `RangeError` for a programming mistake by the caller); only the
 * validation layer (io/, cli/, jobs/) throws `UserError`.
 */
export class UserError extends Error {
  readonly exitCode: number;
  constructor(message: string, exitCode = 2) {
    super(message);
    this.name = 'UserError';
    this.exitCode = exitCode;
  }
}

export class NumericalError extends Error {
  readonly exitCode = 1;
  constructor(message: string) {
    super(message);
    this.name = 'NumericalError';
  }
}

export class AcceptanceFailure extends Error {
  readonly exitCode = 1;
  constructor(message: string) {
    super(message);
    this.name = 'AcceptanceFailure';
  }
}
