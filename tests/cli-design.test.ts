import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { decodeNpy } from '../src/io/npy.ts';
import { twoSolitonFromSech2 } from '../src/flow/solitons.ts';

const BIN = resolve('bin/isotrap.js');
function isotrap(args: string[], cwd: string) {
  const r = spawnSync(process.execPath, [BIN, ...args], { cwd, encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}
function scratch(): string {
  return mkdtempSync(join(tmpdir(), 'isotrap-cli-'));
}

const GOOD = `name: small
units: { system: natural }
grid: { length: 40, points: 512 }
initial: { kind: sech2, depth: 6, width: 1, center: 0 }
flow: { dispersion: quantum, lambda_end: 0.1, frames: 3, tolerance: 1e-8 }
`;

describe('isotrap design on the command line', () => {
  it('writes the output contract and refuses to overwrite without --force', () => {
    const dir = scratch();
    writeFileSync(join(dir, 'c.yaml'), GOOD);
    const r = isotrap(['design', 'c.yaml', '--json', '--quiet'], dir);
    expect(r.code, r.stderr).toBe(0);
    const summary = JSON.parse(r.stdout);
    expect(summary.frames).toBe(3);
    expect(summary.points).toBe(512);
    // −6 sech² has bound states −4 and −1 (Pöschl–Teller; Landau & Lifshitz §23): solitons κ = 2 and 1
    expect(summary.predicted_solitons.map((p: { depth: number }) => p.depth)).toEqual([expect.closeTo(8, 6), expect.closeTo(2, 6)]);
    const npy = decodeNpy(readFileSync(join(dir, 'outputs/small/potential.npy')), 'potential.npy');
    expect(npy.shape).toEqual([3, 512]);
    const seq = JSON.parse(readFileSync(join(dir, 'outputs/small/sequence.json'), 'utf8'));
    expect(seq.lambda).toEqual([0, 0.05, 0.1]);
    // last frame against the Drazin & Johnson (1989) closed-form two-soliton at τ = 0.1
    let err = 0;
    for (let j = 0; j < 512; j++) err = Math.max(err, Math.abs(npy.data[2 * 512 + j] - twoSolitonFromSech2(seq.x[j], 0.1)));
    expect(err).toBeLessThan(1e-6);
    const before = statSync(join(dir, 'outputs/small/potential.npy')).mtimeMs;
    const again = isotrap(['design', 'c.yaml', '--quiet'], dir);
    expect(again.code).toBe(2);
    expect(again.stderr).toMatch(/--force/);
    expect(statSync(join(dir, 'outputs/small/potential.npy')).mtimeMs).toBe(before);
    expect(isotrap(['design', 'c.yaml', '--quiet', '--force'], dir).code).toBe(0);
  });

  const bad: [string, string, RegExp][] = [
    ['missing key', GOOD.replace(/flow:.*\n/, ''), /flow is missing/],
    ['wrong type', GOOD.replace('depth: 6', 'depth: deep'), /initial\.depth = "deep"/],
    ['non-power-of-two grid', GOOD.replace('points: 512', 'points: 1000'), /grid\.points = 1000 .*power of two/],
    ['negative length', GOOD.replace('length: 40', 'length: -40'), /grid\.length = -40/],
    ['unknown species', GOOD.replace('units: { system: natural }', 'units: { system: lab, species: Rb85 }'), /units\.species = "Rb85"/],
    ['NaN in a samples file', GOOD.replace(/initial:.*\n/, 'initial: { kind: samples, file: v.csv }\n'), /v\.csv.*(NaN|not a finite)/i],
  ];
  for (const [what, text, message] of bad) {
    it(`bad config (${what}): clear message, exit code 2, nothing written`, () => {
      const dir = scratch();
      writeFileSync(join(dir, 'c.yaml'), text);
      writeFileSync(join(dir, 'v.csv'), 'x,V\n-20,0\n-10,NaN\n0,-1\n10,0\n');
      const r = isotrap(['design', 'c.yaml'], dir);
      expect(r.code).toBe(2);
      expect(r.stderr).toMatch(message);
      expect(r.stderr).not.toMatch(/\n\s+at /); // no stack trace
      expect(existsSync(join(dir, 'outputs'))).toBe(false);
    });
  }
});

describe('a grid that does not resolve the potential fails the run (exit 1), names the keys, writes nothing', () => {
  // The spectral tail (top-of-band amplitude relative to the largest mode) of a resolved smooth field decays to
  // round-off (Boyd, Chebyshev and Fourier Spectral Methods, 2001, §2.6); 1e-3 is the refusal level (common practice).
  const cases: [string, string, RegExp][] = [
    ['grid.length 1e9: one sample per 2e6 widths', GOOD.replace('length: 40', 'length: 1e9'), /initial potential.*grid\.length 1000000000 \/ grid\.points 512.*raise grid\.points or shorten grid\.length, or widen initial\.width/],
    ['initial.width 0.001: narrower than the grid step', GOOD.replace('width: 1,', 'width: 0.001,'), /initial potential.*spectral tail.*widen initial\.width \(0\.001/],
    // −42 sech²ξ sheds solitons up to κ = 6 (Pöschl–Teller levels −(6−n)², physics.md §4), width 1/6 ℓ, unresolved by a 0.23 ℓ step
    ['solitons narrower than the grid step appear along the flow', GOOD.replace('points: 512', 'points: 256').replace('length: 40', 'length: 60').replace('depth: 6', 'depth: 42').replace('lambda_end: 0.1', 'lambda_end: 0.2'), /designed sequence: the last frame's spectral tail .* raise grid\.points or shorten grid\.length$/m],
  ];
  for (const [what, text, message] of cases) {
    it(what, () => {
      const dir = scratch();
      writeFileSync(join(dir, 'c.yaml'), text);
      const r = isotrap(['design', 'c.yaml', '--quiet'], dir);
      expect(r.code, r.stderr).toBe(1);
      expect(r.stderr).toMatch(message);
      expect(r.stderr).not.toMatch(/\n\s+at /);
      expect(existsSync(join(dir, 'outputs'))).toBe(false);
    });
  }
});

describe('isotrap check on the command line', () => {
  it('refuses existing outputs before it reads or computes anything (exit 2, existing file untouched)', () => {
    const dir = scratch();
    // an unreadable input: if the output check came after reading, the message would be about the input
    writeFileSync(join(dir, 'seq.csv'), 'not,a,sequence\n');
    mkdirSync(join(dir, 'seq-check'));
    writeFileSync(join(dir, 'seq-check', 'check.json'), 'kept');
    const r = isotrap(['check', 'seq.csv', '--quiet'], dir);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/seq-check\/check\.json already exists: pass --force/);
    expect(readFileSync(join(dir, 'seq-check', 'check.json'), 'utf8')).toBe('kept');
  });
});
