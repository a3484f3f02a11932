import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { decodeNpy } from '../src/io/npy.ts';
import { parseSvg } from './report-helpers.ts';

const BIN = resolve('bin/isotrap.js');

// One soliton u = −2κ² sech²(κ(ξ − 4κ²τ)) (exact KdV solution, physics.md §4): its single bound state at
// E = −κ² (Pöschl–Teller N = 1) must be carried with the correction; the bare drive must lose it visibly.
const CONFIG = `name: e2e
units: { system: natural }
grid: { length: 40, points: 256 }
initial: { kind: sech2, depth: 2, width: 1, center: -2 }
flow: { lambda_end: 0.3, frames: 7 }
protocol: { duration: 0.6, ramp: sin2 }
verify: { states: 3, temperature: 0.3, fermions: 1 }
`;

describe('isotrap run end to end (small grid)', () => {
  it('designs, verifies and writes a report whose figures carry the data', () => {
    const dir = mkdtempSync(join(tmpdir(), 'isotrap-run-'));
    writeFileSync(join(dir, 'c.yaml'), CONFIG);
    const r = spawnSync(process.execPath, [BIN, 'run', 'c.yaml', '--json', '--quiet'], { cwd: dir, encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    const out = JSON.parse(r.stdout);
    expect(out.states[0].energy).toBeCloseTo(-1, 8); // E = −κ², κ = 1
    expect(out.states[0].fidelity_cd).toBeGreaterThan(1 - 1e-6);
    expect(out.states[0].fidelity_bare).toBeLessThan(0.99);
    // N = 1 fermion: the many-body fidelity is the single-state fidelity (a 1×1 determinant)
    expect(out.fermions.fidelity_cd).toBeCloseTo(out.states[0].fidelity_cd, 12);
    const folder = join(dir, 'outputs/e2e');
    const html = readFileSync(join(folder, 'report.html'), 'utf8');
    for (const id of ['spacetime', 'spectrum', 'fidelity', 'excess', 'ensembles', 'correction']) expect(html).toContain(`id="${id}`);
    expect(html).not.toMatch(/NaN|Infinity/);
    // the spectrum figure plots the bound level: its data range must hold E = −1 (E₀)
    const doc = parseSvg(readFileSync(join(folder, 'spectrum.svg'), 'utf8'));
    const text = [...doc.querySelectorAll('text')].map((t) => t.textContent ?? '');
    expect(text.some((t) => t.includes('energy E (E₀)'))).toBe(true);
    expect(text.some((t) => t.includes('flow parameter λ'))).toBe(true);
    const ymax = [...doc.querySelectorAll('[data-ymax]')].map((p) => Number(p.getAttribute('data-ymax')));
    expect(ymax.some((y) => Math.abs(y + 1) < 1e-6)).toBe(true);
    // the figures show the summary's numbers: the correction curve peaks at cd_strength.max_leakage, and each
    // fidelity trace runs from t = 0 to t = T and ends at the reported final fidelity (verify.json, traces.npy)
    const v = JSON.parse(readFileSync(join(folder, 'verify.json'), 'utf8'));
    const corr = parseSvg(readFileSync(join(folder, 'correction.svg'), 'utf8'));
    const total = corr.querySelector('path.series-line[data-series="out of occupied states"]');
    expect(Number(total?.getAttribute('data-ymax'))).toBeCloseTo(v.cd_strength.max_leakage, 10);
    expect(v.traces.times[0]).toBe(0);
    expect(v.traces.times[v.traces.times.length - 1]).toBeCloseTo(v.protocol.duration, 12);
    const tr = decodeNpy(readFileSync(join(folder, v.traces.file)), 'traces.npy');
    const cols = tr.shape[1];
    v.traces.rows.forEach((row: { drive: string; state: number }, i: number) => {
      const reported = v.states[row.state][row.drive === 'cd' ? 'fidelity_cd' : 'fidelity_bare'];
      expect(tr.data[i * cols + cols - 1]).toBeCloseTo(reported, 12);
      expect(tr.data[i * cols]).toBeCloseTo(1, 12); // an eigenstate at t = 0
    });
    // re-rendering needs --force and reproduces the page
    const again = spawnSync(process.execPath, [BIN, 'report', folder], { encoding: 'utf8' });
    expect(again.status).toBe(2);
    const forced = spawnSync(process.execPath, [BIN, 'report', folder, '--force'], { encoding: 'utf8' });
    expect(forced.status, forced.stderr).toBe(0);
  });
});

describe('exit codes keep their promise', () => {
  // u₀ = −2 sech²ξ under the dispersionless flow breaks at τ_b = 1/max(6∂ξu₀) ≈ 0.108 (physics.md §4), before 0.3
  const BREAKS = CONFIG.replace('flow: { lambda_end: 0.3, frames: 7 }', 'flow: { dispersion: classical, lambda_end: 0.3, frames: 7 }');
  it('a flow that breaks exits 1 and keeps its complete design, recorded in the manifest', () => {
    const dir = mkdtempSync(join(tmpdir(), 'isotrap-run-'));
    writeFileSync(join(dir, 'c.yaml'), BREAKS);
    const r = spawnSync(process.execPath, [BIN, 'run', 'c.yaml', '--quiet'], { cwd: dir, encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(1);
    expect(r.stderr).toMatch(/flow stops at λ = .* nothing to verify \(the design it reached is in outputs\/e2e\)/);
    const manifest = JSON.parse(readFileSync(join(dir, 'outputs/e2e/isotrap-run.json'), 'utf8'));
    expect(Object.keys(manifest.files).sort()).toEqual(['potential.csv', 'potential.npy', 'sequence.json']);
    // a second run without --force is refused at once (exit 2) and leaves the folder as it was
    const again = spawnSync(process.execPath, [BIN, 'run', 'c.yaml', '--quiet'], { cwd: dir, encoding: 'utf8' });
    expect(again.status).toBe(2);
    expect(again.stderr).toMatch(/already exist: pass --force/);
    expect(readFileSync(join(dir, 'outputs/e2e/isotrap-run.json'), 'utf8')).toBe(JSON.stringify(manifest, null, 1) + '\n');
  });
});
