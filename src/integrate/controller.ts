/**
 * Step-size controller for one-step methods with an error estimate (Hairer, Nørsett & Wanner, Solving ODEs I,
 * 2nd ed. 1993, §II.4, eq. (4.13)): the next step is h·factor with
 *
 *     factor = min(MAX_FACTOR, max(MIN_FACTOR, SAFETY · (err/tol)^(−exponent))),
 *
 * the form of scipy's `integrate/_ivp/rk.py` (`RungeKutta._step_impl`) and `common.py`. The exponent is
 * 1/(order + 1) for an error per step of a method of the given order (the estimate scales as h^(order+1)), and
 * 1/order when the budget is an error per unit step (tol ∝ h), see `errorExponent`.
 */

/** safety factor on the predicted optimal step (scipy `rk.py`: SAFETY = 0.9) */
export const SAFETY = 0.9;
/** smallest factor per attempt: a rejected step shrinks by at most 5× (scipy `rk.py`: MIN_FACTOR = 0.2) */
export const MIN_FACTOR = 0.2;
/** largest factor per attempt: 4 keeps the step-doubling estimate in its asymptotic range after a very accurate
 *  step (scipy `rk.py` allows MAX_FACTOR = 10; 4 is common practice for step doubling) */
export const MAX_FACTOR = 4;
/** error ratios below this are treated as this value (err = 0 then gives MAX_FACTOR, not a division by zero) */
export const RATIO_FLOOR = 1e-10;

/**
 * Controller exponent of a method of order p: 1/(p + 1) when the error is controlled per step (estimate ∝ h^{p+1}),
 * 1/p when it is controlled per unit step (estimate/h ∝ h^p; Hairer, Nørsett & Wanner 1993, §II.4).
 */
export function errorExponent(order: number, perUnitStep = false): number {
  return 1 / (perUnitStep ? order : order + 1);
}

/**
 * The step factor for the error ratio err/tol (≤ 1: accept) and the controller exponent; a non-finite ratio
 * (overflow in a rejected step) gives the smallest factor.
 */
export function stepFactor(ratio: number, exponent: number): number {
  if (!Number.isFinite(ratio)) return MIN_FACTOR;
  return Math.min(MAX_FACTOR, Math.max(MIN_FACTOR, SAFETY * Math.pow(Math.max(ratio, RATIO_FLOOR), -exponent)));
}
