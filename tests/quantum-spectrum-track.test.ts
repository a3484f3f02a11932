import { describe, expect, it } from 'vitest';
import { oneSoliton } from '../src/flow/solitons.ts';
import { boundStates, spectrumTrack, SPECTRUM_FRAMES_MAX } from '../src/quantum/spectrum-track.ts';
import { makeGrid } from '../src/spectral/grid.ts';

describe('bound states and their track along a sequence (src/quantum/spectrum-track.ts)', () => {
  const grid = makeGrid(40, 256);

  it('−6 sech²ξ has bound states −4 and −1 below the box threshold −(2π/L)² (Landau & Lifshitz, Quantum Mechanics, §23; physics.md §4)', () => {
    const b = boundStates(grid, grid.x.map((x) => -6 / Math.cosh(x) ** 2));
    expect(b.threshold).toBeCloseTo(-(((2 * Math.PI) / 40) ** 2), 15);
    expect(b.energies).toHaveLength(2);
    expect(b.energies[0]).toBeCloseTo(-4, 8);
    expect(b.energies[1]).toBeCloseTo(-1, 8);
  });

  it('the exact travelling soliton κ = 1.2 keeps E = −κ² at every tracked frame (physics.md §4), at most SPECTRUM_FRAMES_MAX frames', () => {
    const lambdas = Array.from({ length: 21 }, (_, i) => i * 0.05);
    const frames = lambdas.map((t) => grid.x.map((x) => oneSoliton(1.2, -4, x, t)));
    const track = spectrumTrack(grid, lambdas, frames, 1);
    expect(track.lambda).toHaveLength(SPECTRUM_FRAMES_MAX);
    expect(track.lambda[0]).toBe(0);
    expect(track.lambda[SPECTRUM_FRAMES_MAX - 1]).toBe(1);
    for (const row of track.energies) expect(row[0]).toBeCloseTo(-1.44, 8);
    expect(track.maxDrift).toBeLessThan(1e-8);
  });

  it('a level that vanishes along the sequence makes the drift infinite (not isospectral)', () => {
    const frames = [grid.x.map((x) => oneSoliton(1, 0, x, 0)), new Float64Array(grid.n)];
    expect(spectrumTrack(grid, [0, 1], frames, 1).maxDrift).toBe(Infinity);
  });
});
