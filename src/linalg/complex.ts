/**
 * Interleaved complex vectors (re₀, im₀, re₁, im₁, …) in Float64Array: the real-to-complex copy, inner products
 * ⟨a|b⟩ = Σ conj(a_j) b_j, the norm and the squared overlap |⟨a|b⟩|² (common practice).
 */

/** complex vector from a real one (imaginary part zero) */
export function complexFromReal(re: Float64Array): Float64Array {
  const out = new Float64Array(2 * re.length);
  for (let j = 0; j < re.length; j++) out[2 * j] = re[j];
  return out;
}

/** Re Σ conj(a_j) b_j */
export function dotRe(a: Float64Array, b: Float64Array): number {
  let s = 0;
  for (let j = 0; j < a.length; j++) s += a[j] * b[j];
  return s;
}

/** Im Σ conj(a_j) b_j */
export function dotIm(a: Float64Array, b: Float64Array): number {
  let s = 0;
  for (let j = 0; j < a.length; j += 2) s += a[j] * b[j + 1] - a[j + 1] * b[j];
  return s;
}

/** ‖a‖₂ = sqrt(Σ |a_j|²) */
export function norm2(a: Float64Array): number {
  let s = 0;
  for (let j = 0; j < a.length; j++) s += a[j] * a[j];
  return Math.sqrt(s);
}

/** |⟨a|b⟩|² */
export function overlap2(a: Float64Array, b: Float64Array): number {
  let re = 0;
  let im = 0;
  for (let i = 0; i < a.length; i += 2) {
    re += a[i] * b[i] + a[i + 1] * b[i + 1];
    im += a[i] * b[i + 1] - a[i + 1] * b[i];
  }
  return re * re + im * im;
}

/** ‖d − ⟨b̂|d⟩ b̂‖, b̂ = b/‖b‖, with d = a, or d = a − b when `difference`: the part of d orthogonal to b (a change
 *  of a state along itself is a phase or a norm, not a loss of fidelity) */
export function perpendicularNorm(a: Float64Array, b: Float64Array, difference = false): number {
  const sb = difference ? 1 : 0;
  let bb = 0, pr = 0, pi = 0, dd = 0;
  for (let j = 0; j < a.length; j += 2) {
    const br = b[j], bi = b[j + 1];
    const dr = a[j] - sb * br, di = a[j + 1] - sb * bi;
    bb += br * br + bi * bi;
    pr += br * dr + bi * di;
    pi += br * di - bi * dr;
    dd += dr * dr + di * di;
  }
  const par = bb > 0 ? (pr * pr + pi * pi) / bb : 0;
  return Math.sqrt(Math.max(0, dd - par));
}
