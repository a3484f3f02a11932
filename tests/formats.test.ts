import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { UserError } from '../src/core/errors.ts';
import { readCheckFile } from '../src/io/formats/check.ts';
import { readCompareFile } from '../src/io/formats/compare.ts';
import { readLatticeFile } from '../src/io/formats/lattice.ts';
import { readSequenceFile } from '../src/io/formats/sequence.ts';
import { readVerifyFile } from '../src/io/formats/verify.ts';
import { validateVariationalInput } from '../src/io/check-options.ts';
import { parseConfig } from '../src/io/config.ts';
import { runCheck, writeCheckOutputs } from '../src/jobs/check.ts';
import { runDesign, writeDesignOutputs } from '../src/jobs/design.ts';
import { runVerify, writeVerifyOutputs } from '../src/jobs/verify.ts';
import { SMALL_SOLITON } from './fixtures.ts';

// One soliton u = −2 sech²(ξ + 2) (exact KdV solution, physics.md §4) on a small grid: cheap to design and verify.
const CONFIG = SMALL_SOLITON('formats');

function userError(f: () => unknown): UserError {
  try {
    f();
  } catch (err) {
    expect(err).toBeInstanceOf(UserError);
    return err as UserError;
  }
  throw new Error('expected a UserError');
}

describe('output formats: typed readers of the files the tool writes', () => {
  let dir = '';
  let checkDir = '';
  beforeAll(async () => {
    dir = mkdtempSync(join(tmpdir(), 'isotrap-formats-'));
    const config = parseConfig(CONFIG, 'formats.yaml', dir);
    const design = runDesign(config);
    writeDesignOutputs(design, dir, false);
    writeVerifyOutputs(await runVerify(config, design, { traceSamples: 2 }), dir, true);
    checkDir = join(dir, 'check');
    writeCheckOutputs(runCheck({ input: join(dir, 'potential.npy') }), checkDir, false);
  });

  it('reads back what design, verify and check wrote (JSON numbers round-trip exactly: ECMA-262 Number::toString)', () => {
    const raw = JSON.parse(readFileSync(join(dir, 'sequence.json'), 'utf8'));
    const seq = readSequenceFile(join(dir, 'sequence.json'));
    expect(seq.x).toEqual(raw.x);
    expect(seq.spectrum.energies).toEqual(raw.spectrum.energies);
    // the single bound state of −2 sech²: E = −κ², κ = 1 (Pöschl–Teller N = 1, Landau & Lifshitz §23)
    expect(seq.solitons.predicted[0].energy).toBeCloseTo(-1, 6);
    const v = readVerifyFile(join(dir, 'verify.json'));
    expect(v.states[0].energy).toBeCloseTo(-1, 6);
    expect(v.protocol.ramp).toBe('sin2');
    const c = readCheckFile(join(checkDir, 'check.json'));
    expect(c.format).toBe('isotrap-check/2');
    expect(c.frames).toHaveLength(5);
    expect(c.intervals).toHaveLength(4);
    expect(c.admissible).toBe(true);
    // one soliton translates at speed 4κ² = 4 (physics.md §4): only the displacement is fixed by the flow; with
    // Δτ = Δλ = 0.05 from the sidecar the displacement is 4Δλ and the drift 0
    for (const it of c.intervals) {
      expect(it.degenerate?.speed).toBeCloseTo(4, 6);
      expect(it.degenerate?.displacement).toBeCloseTo(0.2, 6);
      expect(it.dtau).toBeCloseTo(0.05, 12);
      expect(Math.abs(it.drift)).toBeLessThan(1e-6);
    }
  });

  it('reads a number written as null (a non-finite value) back as NaN', () => {
    const raw = JSON.parse(readFileSync(join(dir, 'sequence.json'), 'utf8'));
    raw.summary.delta2 = null;
    const p = join(dir, 'nulls.json');
    writeFileSync(p, JSON.stringify(raw));
    expect(readSequenceFile(p).summary.delta2).toBeNaN();
  });

  it('names the file and the key of a malformed value', () => {
    const raw = JSON.parse(readFileSync(join(dir, 'verify.json'), 'utf8'));
    raw.states[1].fidelity_cd = 'high';
    const p = join(dir, 'bad-verify.json');
    writeFileSync(p, JSON.stringify(raw));
    const err = userError(() => readVerifyFile(p));
    expect(err.exitCode).toBe(2);
    expect(err.message).toContain('bad-verify.json');
    expect(err.message).toContain('key states[1].fidelity_cd');
  });

  it('refuses a file from another kind of run, naming the format key and the command that writes the expected one', () => {
    const seqPath = join(dir, 'sequence.json');
    for (const [read, job] of [
      [readVerifyFile, 'verify'],
      [readCompareFile, 'compare'],
      [readLatticeFile, 'lattice'],
      [readCheckFile, 'check'],
    ] as const) {
      const err = userError(() => read(seqPath));
      expect(err.message).toContain('sequence.json: key format');
      expect(err.message).toContain(`isotrap ${job}`);
    }
    expect(userError(() => readSequenceFile(join(dir, 'verify.json'))).message).toContain('"isotrap-verify/1"');
  });

  it('reports a missing file and invalid JSON as UserErrors', () => {
    expect(userError(() => readCompareFile(join(dir, 'compare.json'))).message).toContain('does not exist');
    const p = join(dir, 'broken.json');
    writeFileSync(p, '{ "format": ');
    expect(userError(() => readLatticeFile(p)).message).toContain('is not valid JSON');
  });

  it('validates the variational options of check with the limits of check/variational.ts', () => {
    expect(() => validateVariationalInput({ states: 4, temperature: 0.5, legendre: 8 }, 256)).not.toThrow();
    expect(userError(() => validateVariationalInput({ states: 255 }, 256)).message).toContain('states = 255 is not allowed: must be an integer in 1 … 254');
    expect(userError(() => validateVariationalInput({ temperature: -1 }, 256)).message).toContain('temperature = -1');
    expect(userError(() => validateVariationalInput({ legendre: 0 }, 256)).message).toContain('legendre = 0');
  });
});
