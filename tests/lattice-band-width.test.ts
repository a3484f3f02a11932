import { describe, expect, it } from 'vitest';
import { naturalBandWidth, naturalTunnelling, spacingFromWavelengthUm } from '../src/lattice/params.ts';

describe('lowest-band width and the spacing of an optical lattice (src/lattice/params.ts)', () => {
  it('−2J cos kd spans [−2J, 2J]: width 4J = 4/h² in E₀ (closed form, physics.md §6)', () => {
    for (const h of [0.25, 0.5, 1.7]) {
      let lo = Infinity, hi = -Infinity;
      for (let i = 0; i <= 400; i++) {
        const e = -2 * naturalTunnelling(h) * Math.cos((Math.PI * i) / 400);
        lo = Math.min(lo, e);
        hi = Math.max(hi, e);
      }
      expect(naturalBandWidth(h)).toBeCloseTo(hi - lo, 12);
    }
    expect(naturalBandWidth(0.5)).toBe(16);
  });

  it('1064 nm light makes a lattice of spacing 0.532 µm (d = λ/2; common practice for a retro-reflected beam)', () => {
    expect(spacingFromWavelengthUm(1064)).toBe(0.532);
  });
});
