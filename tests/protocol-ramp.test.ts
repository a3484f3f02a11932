import { describe, expect, it } from 'vitest';
import { makeRamp, RAMP_KINDS, RAMP_SHAPES } from '../src/protocol/ramp.ts';

describe('ramp registry and inverse (src/protocol/ramp.ts)', () => {
  it('every name in RAMP_KINDS has a shape', () => {
    expect(Object.keys(RAMP_SHAPES).sort()).toEqual([...RAMP_KINDS].sort());
  });

  it('linear: s(λ) = Tλ/λ_end (closed form of λ = λ_end s/T)', () => {
    const r = makeRamp('linear', 3, 0.6);
    for (const l of [0.05, 0.3, 0.55]) expect(Math.abs(r.timeAt(l) - (3 * l) / 0.6)).toBeLessThan(1e-14);
  });

  it('sin2: s(λ) at λ_end/2 is T/2 (λ(T/2) = λ_end(½ − sin π/2π) = λ_end/2, closed form in ramp.ts)', () => {
    const r = makeRamp('sin2', 2, 0.5);
    expect(Math.abs(r.timeAt(0.25) - 1)).toBeLessThan(1e-14);
  });

  it('smooth: λ(s(λ)) = λ and s(λ_end/2) = T/2 (10r³ − 15r⁴ + 6r⁵ = ½ at r = ½, closed form)', () => {
    const r = makeRamp('smooth', 4, 1.2);
    expect(Math.abs(r.timeAt(0.6) - 2)).toBeLessThan(1e-13);
    for (const l of [0.01, 0.4, 1.1]) expect(Math.abs(r.value(r.timeAt(l)) - l)).toBeLessThan(1e-14);
  });

  it('a bad duration or an unknown kind is a RangeError (a caller mistake, not user input)', () => {
    expect(() => makeRamp('sin2', 0, 1)).toThrow(RangeError);
    expect(() => makeRamp('sin2', 1, NaN)).toThrow(RangeError);
    expect(() => makeRamp('cubic' as 'sin2', 1, 1)).toThrow(RangeError);
  });
});
