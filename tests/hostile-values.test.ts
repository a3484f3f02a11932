/**
 * Extreme values of every numeric config key: each run ends as a result (exit 0), a failed budget or acceptance
 * (exit 1) or a named refusal (exit 2), never as an internal error (exit 3), and quickly (the cost is estimated
 * before computing). Values × 10^±300 are the edge of IEEE-754 double precision (IEEE 754-2008, §3.6: largest
 * finite 1.8e308, smallest normal 2.2e-308).
 */
import { mkdtempSync, readdirSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it, vi } from 'vitest';
import { main } from '../src/cli/main.ts';

/** a small invented lab scenario (illustrative) that sets every numeric key a user can set */
const SCENARIO = `name: hostile
units: { system: lab, species: custom, mass_u: 87, length_unit_um: 1, energy: h*kHz }
grid: { length: 40, points: 256 }
initial: { kind: sech2, depth: 0.1, width: 1, center: -2 }
flow: { lambda_end: 0.2, frames: 5, tolerance: 1e-10, drift: 0.5 }
protocol: { duration: 1, ramp: sin2 }
verify: { states: 2, temperature: 0.5, fermions: 1, tolerance: 1e-8 }
`;

/** the scenario with a condensate of one ⁸⁷Rb-like atom (verify.interaction), for the interaction's keys only (the
 *  condensate adds three drives to every run) */
const SCENARIO_INTERACTION = SCENARIO.replace('tolerance: 1e-8 }', 'tolerance: 1e-8, interaction: { atoms: 1, scattering_length_bohr: 100, transverse_hz: 1000 } }');

/** every numeric key of the scenario with its value, as [section, key, value] */
const KEYS: [string, string, number][] = [
  ['units', 'mass_u', 87],
  ['units', 'length_unit_um', 1],
  ['grid', 'length', 40],
  ['initial', 'depth', 0.1],
  ['initial', 'width', 1],
  ['initial', 'center', -2],
  ['flow', 'lambda_end', 0.2],
  ['flow', 'frames', 5],
  ['flow', 'tolerance', 1e-10],
  ['flow', 'drift', 0.5],
  ['protocol', 'duration', 1],
  ['verify', 'states', 2],
  ['verify', 'temperature', 0.5],
  ['verify', 'fermions', 1],
  ['verify', 'tolerance', 1e-8],
  ['interaction', 'atoms', 1],
  ['interaction', 'scattering_length_bohr', 100],
  ['interaction', 'transverse_hz', 1000],
];

/** the scenario with one key's value replaced */
function withValue(section: string, key: string, value: number): string {
  const text = section === 'interaction' ? SCENARIO_INTERACTION : SCENARIO;
  const line = new RegExp(`\\b(${section}: \\{.*?\\b${key}: )[^,}]+`, 'm');
  expect(text).toMatch(line);
  return text.replace(line, `$1${value}`);
}

async function runCli(args: string[]): Promise<{ code: number; stderr: string; seconds: number }> {
  let stderr = '';
  const spy = vi.spyOn(process.stderr, 'write').mockImplementation((s: string | Uint8Array) => {
    stderr += String(s);
    return true;
  });
  const out = vi.spyOn(process.stdout, 'write').mockImplementation(() => true);
  const started = performance.now();
  try {
    const code = await main(['node', 'isotrap', ...args]);
    return { code, stderr, seconds: (performance.now() - started) / 1000 };
  } finally {
    spy.mockRestore();
    out.mockRestore();
  }
}

describe('extreme values end as a result, a failure or a refusal, never an internal error', () => {
  for (const [section, key, value] of KEYS) {
    for (const factor of [1e300, 1e-300]) {
      it(`${section}.${key} × ${factor}`, async () => {
        const dir = mkdtempSync(join(tmpdir(), 'isotrap-hostile-'));
        writeFileSync(join(dir, 'c.yaml'), withValue(section, key, value * factor));
        const out = join(dir, 'out');
        const r = await runCli(['verify', join(dir, 'c.yaml'), '--out', out, '--quiet']);
        expect([0, 1, 2], r.stderr).toContain(r.code);
        expect(r.stderr).not.toMatch(/internal error|\n\s+at /);
        if (r.code === 2) {
          expect(r.stderr).toContain(key); // the refusal names the key
          expect(() => readdirSync(out)).toThrow(); // and writes nothing
        }
        expect(r.seconds).toBeLessThan(30);
      }, 60_000);
    }
  }
});

describe('state counts beyond what the grid holds', () => {
  it('verify.fermions above the grid points is refused naming the key (a grid of N points has N states)', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'isotrap-hostile-'));
    writeFileSync(join(dir, 'c.yaml'), SCENARIO.replace('points: 256', 'points: 32').replace('length: 40', 'length: 8').replace('center: -2', 'center: 0').replace('fermions: 1', 'fermions: 50'));
    const r = await runCli(['verify', join(dir, 'c.yaml'), '--out', join(dir, 'out'), '--quiet']);
    expect(r.code, r.stderr).toBe(2);
    expect(r.stderr).toMatch(/verify\.fermions = 50 is not allowed/);
    expect(() => readdirSync(join(dir, 'out'))).toThrow();
  });
});
