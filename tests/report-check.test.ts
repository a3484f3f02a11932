/**
 * `isotrap report DIR` on a check folder (src/report/panels/check.ts through src/jobs/report.ts): rendered from
 * check.json, input.npy and repaired.npy only.
 */
import { existsSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { basename, join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { encodeNpy } from '../src/io/npy.ts';
import { twoSolitonFromSech2 } from '../src/flow/solitons.ts';
import { makeGrid } from '../src/spectral/grid.ts';
import { runCheck, writeCheckOutputs } from '../src/jobs/check.ts';
import { renderFolder } from '../src/jobs/report.ts';
import { parseHtml, parseSvg } from './report-helpers.ts';

describe('report of a check folder', () => {
  it('residual per interval, spectrum track, input and repaired maps, distance; the page names the failing intervals', () => {
    // Drazin & Johnson 1989 two-soliton frames with frame 3 deepened by 1 %: intervals 2 and 3 fail
    const grid = makeGrid(40, 256);
    const taus = Array.from({ length: 6 }, (_, i) => 0.02 * i);
    const frames = taus.map((t) => grid.x.map((x) => twoSolitonFromSech2(x, t)));
    frames[3] = frames[3].map((v) => 1.01 * v);
    const dir = mkdtempSync(join(tmpdir(), 'isotrap-report-check-'));
    const flat = new Float64Array(frames.length * grid.n);
    frames.forEach((f, k) => flat.set(f, k * grid.n));
    writeFileSync(join(dir, 'seq.npy'), encodeNpy(flat, [frames.length, grid.n]));
    writeFileSync(join(dir, 'seq.json'), JSON.stringify({ x: Array.from(grid.x), lambda: taus, length_unit: 'ℓ', energy_unit: 'E₀' }));
    const out = join(dir, 'seq-check');
    writeCheckOutputs(runCheck({ input: join(dir, 'seq.npy') }), out, false);
    const files = renderFolder(out, { force: false, toolVersion: 'test' });
    const names = files.map((f) => basename(f));
    expect(names).toEqual(['check-residual.svg', 'check-spectrum.svg', 'check-input.svg', 'check-repaired.svg', 'check-distance.svg', 'report.html']);
    for (const f of files) expect(existsSync(f)).toBe(true);
    for (const f of files.slice(0, -1)) parseSvg(readFileSync(f, 'utf8')); // well-formed SVG (common practice)
    const html = parseHtml(readFileSync(files[files.length - 1], 'utf8'));
    const text = html.body.textContent ?? '';
    expect(text).toContain('NOT admissible');
    expect(text).toMatch(/intervals 2–3 \(frames 2–4\)/);
    // both maps share one x window around the solitons, inside the box of 40 ℓ (src/report/crop.ts)
    expect(text).toMatch(/same colour scale and x window in both maps\)\. x cropped to .*; the box is -20 … 20 ℓ\./);
    // re-rendering refuses to overwrite without force (the folder's own rule for every output)
    expect(() => renderFolder(out, { force: false, toolVersion: 'test' })).toThrow(/already exist/);
    // a check file changed after its run (here repaired.npy from another tool) is refused, not rendered
    writeFileSync(join(out, 'repaired.npy'), readFileSync(join(dir, 'seq.npy')));
    expect(() => renderFolder(out, { force: true, toolVersion: 'test' })).toThrow(/repaired\.npy differs from the run that isotrap-run\.json records/);
  });
});
