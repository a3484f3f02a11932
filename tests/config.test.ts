import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { parse as parseYaml } from 'yaml';
import { z } from 'zod';
import { configSchema, loadConfig, parseConfig, parseConfigWith, strictSection, unitSystemOf } from '../src/io/config.ts';
import { UserError } from '../src/core/errors.ts';
import { encodeNpy } from '../src/io/npy.ts';

// Every expected value below is the project brief's config schema (keys, defaults, allowed ranges), restated
// by hand; the species mass is the AME2020 value (M. Wang et al., Chinese Phys. C 45, 030003, 2021).

const work = mkdtempSync(join(tmpdir(), 'isotrap-config-'));
afterAll(() => rmSync(work, { recursive: true, force: true }));

const SRC = 'configs/x.yaml';

function errorOf(text: string, baseDir = work): UserError {
  try {
    parseConfig(text, SRC, baseDir);
  } catch (e) {
    expect(e).toBeInstanceOf(UserError);
    return e as UserError;
  }
  throw new Error('expected a UserError, none was thrown');
}

const SPLIT_TWO = `name: split-two
units: { system: natural }
grid: { length: 60, points: 1024 }
initial: { kind: sech2, depth: 6, width: 1, center: 0 }
flow: { dispersion: quantum, lambda_end: 0.5, frames: 11 }
`;

/** the valid example with one line replaced or appended */
function variant(replace: Record<string, string | null>, extra = ''): string {
  const lines = SPLIT_TWO.trim().split('\n');
  const out = lines
    .map((l) => {
      const key = l.split(':')[0];
      return key in replace ? replace[key] : l;
    })
    .filter((l): l is string => l !== null);
  return out.join('\n') + '\n' + extra;
}

describe('valid configs', () => {
  it('the split-two example parses as written, with defaults applied', () => {
    const c = parseConfig(SPLIT_TWO, SRC, work);
    expect(c.name).toBe('split-two');
    expect(c.units).toEqual({ system: 'natural' });
    expect(c.grid).toEqual({ length: 60, points: 1024 });
    expect(c.initial).toEqual({ kind: 'sech2', depth: 6, width: 1, center: 0 });
    // defaults: tolerance 5e-10, drift 0 (README, Configs table)
    expect(c.flow).toEqual({ dispersion: 'quantum', lambda_end: 0.5, frames: 11, tolerance: 5e-10, drift: 0 });
    expect(c.protocol).toBeUndefined();
    expect(c.verify).toBeUndefined();
    expect(c.meta).toEqual({ source: SRC, baseDir: work });
  });

  it('units default to natural and flow fields default', () => {
    const c = parseConfig(variant({ units: null, flow: 'flow: { lambda_end: 2 }' }), SRC, work);
    expect(c.units).toEqual({ system: 'natural' });
    // defaults quantum, 11 frames (README, Configs table)
    expect([c.flow.dispersion, c.flow.frames]).toEqual(['quantum', 11]);
  });

  it('lab units with every section', () => {
    const text = `name: rb.lab_1
description: two wells in rubidium
units: { system: lab, species: Rb87 }
grid: { length: 80, points: 2048 }
initial:
  kind: wells
  wells:
    - { shape: gaussian, depth: 2.5, width: 1.5, center: -3 }
    - { shape: sech2, depth: -0.5, width: 2 }
flow: { dispersion: classical, lambda_end: 1, frames: 2, tolerance: 0.01, drift: -1.5 }
protocol: { duration: 20 }
verify: { states: 6, temperature: 50, fermions: 3, compare_classical: true }
`;
    const c = parseConfig(text, SRC, work);
    // Rb87 AME2020 mass 86.909180531 u; defaults length_unit_um 1, energy h*kHz (README, Configs table)
    expect(c.units).toEqual({ system: 'lab', species: 'Rb87', mass_u: 86.909180531, label: '⁸⁷Rb', length_unit_um: 1, energy: 'h*kHz' });
    expect(c.initial).toEqual({
      kind: 'wells',
      wells: [
        { shape: 'gaussian', depth: 2.5, width: 1.5, center: -3 },
        { shape: 'sech2', depth: -0.5, width: 2, center: 0 },
      ],
    });
    expect(c.protocol).toEqual({ duration: 20, ramp: 'sin2' }); // ramp default sin2
    expect(c.verify).toEqual({ states: 6, tolerance: 1e-8, step_control: 'global', temperature: 50, fermions: 3, compare_classical: true, painted: [], errors: { correction_scale: 0, depth: 0, timing: 0, psf: 0, noise_rms: 0, noise_shots: 16, noise_seed: 1 } }); // tolerance default 1e-8, step control default global
    expect(c.description).toBe('two wells in rubidium');
    // physics.md §3: ⁸⁷Rb, ℓ = 1 µm → E₀/h ≈ 58.15 Hz, so 1 h·kHz ≈ 17.197 E₀
    const us = unitSystemOf(c.units);
    expect(us.E0 / 6.62607015e-34).toBeCloseTo(58.15, 2);
    expect(us.energyToNatural(1)).toBeCloseTo(1000 / 58.15, 1);
    expect(unitSystemOf(parseConfig(SPLIT_TWO, SRC, work).units).labels.energy).toBe('E₀');
  });

  it('custom mass and µK energies', () => {
    const c = parseConfig(variant({ units: 'units: { system: lab, species: custom, mass_u: 12.5, length_unit_um: 0.5, energy: uK }' }), SRC, work);
    expect(c.units).toEqual({ system: 'lab', species: 'custom', mass_u: 12.5, label: 'custom (12.5 u)', length_unit_um: 0.5, energy: 'uK' });
  });

  it('solitons and samples kinds; samples file is resolved against the config folder', () => {
    const s = parseConfig(variant({ initial: 'initial: { kind: solitons, solitons: [{ kappa: 2 }, { kappa: 1, center: 5 }] }' }), SRC, work);
    expect(s.initial).toEqual({ kind: 'solitons', solitons: [{ kappa: 2, center: 0 }, { kappa: 1, center: 5 }] });
    mkdirSync(join(work, 'cfg', 'data'), { recursive: true });
    writeFileSync(join(work, 'cfg', 'data', 'v.npy'), encodeNpy(new Float64Array(16), [16]));
    const cfgPath = join(work, 'cfg', 'run.yaml');
    writeFileSync(cfgPath, variant({ initial: 'initial: { kind: samples, file: data/v.npy }' }));
    const c = loadConfig(cfgPath);
    expect(c.initial).toEqual({ kind: 'samples', file: join(work, 'cfg', 'data', 'v.npy') });
    expect(c.meta).toEqual({ source: cfgPath, baseDir: join(work, 'cfg') });
  });

  it('the schema can be extended by later sections', () => {
    const extended = configSchema.extend({ lattice: strictSection({ spacing: z.number() }, 'lattice').optional() });
    const c = parseConfigWith(extended, { ...parseYaml(SPLIT_TWO), lattice: { spacing: 0.5 } }, SRC, work);
    expect(c.lattice).toEqual({ spacing: 0.5 });
    expect(c.flow.tolerance).toBe(5e-10);
    // the unknown-key message lists the extended key set
    expect(() => parseConfigWith(extended, { ...parseYaml(SPLIT_TWO), lattis: 1 }, SRC, work)).toThrow(
      'configs/x.yaml: lattis = 1 is not allowed: unknown key; allowed keys in the config are name, description, units, grid, initial, flow, protocol, verify, budget, lattice',
    );
  });
});

describe('invalid configs', () => {
  it('non-power-of-two grid: its exact message', () => {
    const e = errorOf(variant({ grid: 'grid: { length: 60, points: 1000 }' }));
    expect(e.message).toBe('configs/x.yaml: grid.points = 1000 is not allowed: must be a power of two (16, 32, …, 65536)');
    expect(e.exitCode).toBe(2);
    // 65536·2 is a power of two but above the range
    expect(errorOf(variant({ grid: 'grid: { length: 60, points: 131072 }' })).message).toContain('grid.points = 131072');
  });

  it('missing key', () => {
    const e = errorOf(variant({ flow: 'flow: { frames: 11 }' }));
    expect(e.message).toBe('configs/x.yaml: flow.lambda_end is missing: required, must be a number > 0 (final KdV time λ, dimensionless)');
    expect(errorOf(variant({ grid: null })).message).toMatch(/^configs\/x\.yaml: grid is missing: required, must be a mapping with keys length, points$/);
    expect(errorOf(variant({ name: null })).message).toMatch(/name is missing/);
  });

  it('wrong type', () => {
    const e = errorOf(variant({ grid: 'grid: { length: sixty, points: 1024 }' }));
    expect(e.message).toBe('configs/x.yaml: grid.length = "sixty" is not allowed: must be a number > 0 (box length, in ℓ (natural) or µm (lab))');
    expect(errorOf(variant({}, 'verify: { compare_classical: "yes" }\n')).message).toContain('verify.compare_classical = "yes" is not allowed: must be true or false');
  });

  it('negative length', () => {
    const e = errorOf(variant({ grid: 'grid: { length: -60, points: 1024 }' }));
    expect(e.message).toContain('grid.length = -60 is not allowed: must be a number > 0');
  });

  it('unknown species lists the allowed names', () => {
    const e = errorOf(variant({ units: 'units: { system: lab, species: Rb85 }' }));
    expect(e.message).toBe(
      'configs/x.yaml: units.species = "Rb85" is not allowed: must be one of Li6, Li7, Na23, K39, K40, K41, Rb87, Sr88, Cs133, Yb174, custom',
    );
  });

  it('unknown keys anywhere', () => {
    expect(errorOf(variant({ grid: 'grid: { length: 60, pionts: 1024, points: 64 }' })).message).toBe(
      'configs/x.yaml: grid.pionts = 1024 is not allowed: unknown key; allowed keys in grid are length, points',
    );
    expect(errorOf(variant({}, 'colour: red\n')).message).toMatch(/colour = "red" is not allowed: unknown key; allowed keys in the config are name, description, units,/);
    expect(errorOf(variant({ initial: 'initial: { kind: sech2, depth: 6, width: 1, centre: 0 }' })).message).toContain(
      'initial.centre = 0 is not allowed: unknown key; allowed keys in initial (kind sech2) are kind, depth, width, center',
    );
    expect(errorOf(variant({ initial: 'initial: { kind: wells, wells: [{ shape: sech2, depth: 1, width: 1, phase: 2 }] }' })).message).toContain(
      'initial.wells[0].phase = 2 is not allowed: unknown key',
    );
  });

  it('collects every problem into one error', () => {
    const e = errorOf(`name: "bad name"
grid: { length: 0, points: 17 }
initial: { kind: ring }
flow: { lambda_end: 1, frames: 1, tolerance: 0.5 }
verify: { states: 0, tolerance: 0.01, temperature: -1, fermions: 201 }
protocol: { duration: 1, ramp: cubic }
`);
    const lines = e.message.split('\n');
    expect(lines.every((l) => l.startsWith('configs/x.yaml: '))).toBe(true);
    // allowed ranges: frames 2…10000, flow.tolerance [1e-14, 1e-2], states 1…200, verify.tolerance [1e-14, 1e-3],
    // temperature ≥ 0, fermions 1…200, ramp sin2|smooth|linear
    for (const part of [
      'name = "bad name" is not allowed',
      'grid.length = 0 is not allowed',
      'grid.points = 17 is not allowed',
      'initial.kind = "ring" is not allowed: must be one of sech2, wells, solitons, samples',
      'flow.frames = 1 is not allowed: must be an integer from 2 to 10000',
      'flow.tolerance = 0.5 is not allowed: must be a number from 1e-14 to 1e-2',
      'verify.states = 0 is not allowed: must be an integer from 1 to 1000',
      'verify.tolerance = 0.01 is not allowed: must be a number from 1e-14 to 1e-3',
      'verify.temperature = -1 is not allowed: must be a number ≥ 0',
      'verify.fermions = 201 is not allowed',
      'protocol.ramp = "cubic" is not allowed: must be one of sin2, smooth, linear',
    ]) {
      expect(lines.some((l) => l.includes(part))).toBe(true);
    }
    expect(lines).toHaveLength(11);
  });

  it('units rules between keys', () => {
    expect(errorOf(variant({ units: 'units: { species: Rb87 }' })).message).toContain(
      'units.species = "Rb87" is not allowed: only allowed with units.system: lab',
    );
    expect(errorOf(variant({ units: 'units: { system: natural, energy: uK }' })).message).toContain('units.energy = "uK" is not allowed');
    expect(errorOf(variant({ units: 'units: { system: lab }' })).message).toContain('units.species is missing: required when units.system is lab');
    expect(errorOf(variant({ units: 'units: { system: lab, species: custom }' })).message).toContain(
      'units.mass_u is missing: required when units.species is custom',
    );
    expect(errorOf(variant({ units: 'units: { system: lab, species: K40, mass_u: 40 }' })).message).toContain(
      'units.mass_u = 40 is not allowed: only allowed with units.species: custom',
    );
    expect(errorOf(variant({ units: 'units: { system: lab, species: custom, mass_u: -3 }' })).message).toContain('units.mass_u = -3 is not allowed');
  });

  it('initial kinds: wells, solitons, samples', () => {
    expect(errorOf(variant({ initial: 'initial: { kind: wells, wells: [] }' })).message).toContain('initial.wells = [] is not allowed: must list at least one well');
    expect(errorOf(variant({ initial: 'initial: { kind: wells, wells: [{ shape: box, depth: 0, width: 1 }] }' })).message.split('\n')).toEqual([
      'configs/x.yaml: initial.wells[0].shape = "box" is not allowed: must be one of sech2, gaussian',
      'configs/x.yaml: initial.wells[0].depth = 0 is not allowed: must be a number ≠ 0 (well depth in the energy unit; negative for a barrier)',
    ]);
    expect(errorOf(variant({ initial: 'initial: { kind: solitons, solitons: [{ kappa: 1 }, { kappa: 1, center: 3 }] }' })).message).toContain(
      'initial.solitons = [{"kappa":1},{"kappa":1,"center":3}] is not allowed: the kappa values must be distinct (kappa = 1 appears more than once)',
    );
    expect(errorOf(variant({ initial: 'initial: { kind: solitons, solitons: [{ kappa: -1 }] }' })).message).toContain('initial.solitons[0].kappa = -1 is not allowed');
    expect(errorOf(variant({ initial: 'initial: { kind: samples, file: nope.csv }' })).message).toBe(
      `configs/x.yaml: initial.file = "nope.csv" is not allowed: file not found (looked for ${join(work, 'nope.csv')})`,
    );
    expect(errorOf(variant({ initial: 'initial: { depth: 6 }' })).message).toContain('initial.kind is missing');
  });

  it('name pattern', () => {
    // name must match /^[A-Za-z0-9][A-Za-z0-9._-]*$/ (the documented rule)
    for (const bad of ['.hidden', '-x', 'a/b', 'a b']) {
      expect(errorOf(variant({ name: `name: "${bad}"` })).message).toContain(`name = "${bad}" is not allowed`);
    }
    expect(parseConfig(variant({ name: 'name: 0a._-Z' }), SRC, work).name).toBe('0a._-Z');
  });

  it('YAML syntax errors give line and column', () => {
    // the second line is indented under a scalar: the yaml package reports it at line 1, column 7
    const e = errorOf('name: a\n grid: 3\n');
    expect(e.message).toMatch(/^configs\/x\.yaml:1:7: YAML syntax error: /);
    // duplicate key at line 2, column 1 (YAML 1.2 §3.2.1.1: mapping keys are unique)
    expect(errorOf('name: a\nname: b\n').message).toMatch(/^configs\/x\.yaml:2:1: YAML syntax error: Map keys must be unique/);
  });

  it('empty or non-mapping documents and missing files', () => {
    expect(errorOf('').message).toMatch(/configs\/x\.yaml: the config is empty/);
    expect(errorOf('- 1\n- 2\n').message).toMatch(/configs\/x\.yaml: the config must be a mapping .*a list/);
    const missing = join(work, 'none.yaml');
    expect(() => loadConfig(missing)).toThrow(`config file ${missing} does not exist`);
  });

  it('hostile documents: alias bombs, dangling aliases, oversized files, thousands of unknown keys', () => {
    // nested aliases expanding 9⁵ times (the "billion laughs" pattern); the yaml package counts alias expansion
    const bomb = ['a: &a [x, x, x, x, x, x, x, x, x]', 'b: &b [*a, *a, *a, *a, *a, *a, *a, *a, *a]', 'c: &c [*b, *b, *b, *b, *b, *b, *b, *b, *b]',
      'd: &d [*c, *c, *c, *c, *c, *c, *c, *c, *c]', 'e: [*d, *d, *d, *d, *d, *d, *d, *d, *d]'].join('\n');
    expect(errorOf(bomb).message).toMatch(/^configs\/x\.yaml: YAML aliases are not allowed here: Excessive alias count/);
    expect(errorOf('name: *nothing\n').message).toMatch(/^configs\/x\.yaml: YAML aliases are not allowed here: Unresolved alias/);
    const big = join(work, 'big.yaml');
    writeFileSync(big, `name: a\n# ${'x'.repeat(2 ** 20)}\n`);
    expect(() => loadConfig(big)).toThrow(/config file .*big\.yaml has 1\.00 MiB; at most 1\.00 MiB are read/);
    const many = variant({}) + Array.from({ length: 20000 }, (_, i) => `k${i}: 1`).join('\n') + '\n';
    const lines = errorOf(many).message.split('\n');
    expect(lines).toHaveLength(21); // 20 listed problems and a count of the rest
    expect(lines[20]).toBe('configs/x.yaml: … and 19980 more problems');
  });

  it('values that would break the physics are refused by key', () => {
    expect(errorOf(variant({}, 'verify: { temperature: 0 }\n')).message).toContain(
      'verify.temperature = 0 is not allowed: a thermal ensemble needs a temperature > 0 (leave the key out for none)',
    );
    expect(errorOf(variant({ units: 'units: { system: lab, species: custom, mass_u: 1e30 }' })).message).toContain(
      'units.mass_u = 1e+30 is not allowed: must be a number from 1 to 300 (an atomic mass in u)',
    );
  });
});
