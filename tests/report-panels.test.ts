/**
 * The figures of src/report/panels read as the numbers they show: signed excess energies, space–time maps cropped
 * to the potential, the ħ-scaling study on log–log axes, the slide size, and the ensemble caption.
 */
import { existsSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it, vi } from 'vitest';
import { main } from '../src/cli/main.ts';
import type { CompareSummary } from '../src/io/formats/compare.ts';
import type { VerifyFile } from '../src/io/formats/verify.ts';
import { parseConfig } from '../src/io/config.ts';
import { runDesign, writeDesignOutputs } from '../src/jobs/design.ts';
import { readNpyFile } from '../src/io/formats/read.ts';
import { readSequenceFile } from '../src/io/formats/sequence.ts';
import { CROP_FRACTION, CROP_MARGIN, cropToPotential } from '../src/report/crop.ts';
import { scalingFigure } from '../src/report/panels/compare.ts';
import { designFigures } from '../src/report/panels/design.ts';
import { ensemblesFigure, excessFigure } from '../src/report/panels/verify.ts';
import { SMALL_SOLITON } from './fixtures.ts';
import { fitAxis, parseSvg, printedFontPt, readTicks } from './report-helpers.ts';

/** a verify.json of two states (invented, illustrative numbers); `over` replaces top-level keys */
function verifyFixture(over: Partial<VerifyFile> = {}): VerifyFile {
  const state = (index: number, excess_cd: number, excess_bare: number) => ({ index, energy: -1 + index, energy_start: -1 + index, energy_end: -1 + index, degeneracy: 1, fidelity_cd: 1, fidelity_bare: 0.9, excess_cd, excess_bare });
  return {
    format: 'isotrap-verify/1',
    units: { energy: 'h·kHz', time: 'ms', length: 'µm', temperature: 'nK' },
    protocol: { duration: 2, ramp: 'sin2', lambda_end: 0.2, duration_natural: 1 },
    eigen: { method: 'lanczos', detail: '', maxResidual: 1e-12, residualTol: 1e-10, wallMs: 1 },
    bound_states: 2,
    isospectral_drift: 1e-11,
    states: [state(0, 3e-9, -0.157), state(1, -2e-10, 0.02)],
    thermal: null,
    fermions: null,
    cd_strength: { unit: 'h·kHz', occupied: 1, definition: '', max_leakage: 0, max_leakage_cubic: 0, max_leakage_potential: 0, max_window: 0, at_time: 0, time: [], leakage: [], leakage_cubic: [], leakage_potential: [], window: [] },
    classical: null,
    propagation: {},
    traces: { file: 'traces.npy', times: [], rows: [] },
    painted: null,
    accepted: true,
    acceptance: '',
    seconds: 0,
    warnings: [],
    summary_rows: [],
    ...over,
  };
}

/** data value at pixel position along an axis whose ticks are a + b·T(value), from a least-squares fit of the ticks */
function fitTransformed(ticks: { pos: number; value: number }[], T: (v: number) => number, Tinv: (t: number) => number): { toValue: (pos: number) => number; maxResidualPx: number } {
  const fit = fitAxis(ticks.map((t) => ({ pos: t.pos, value: T(t.value) })));
  return { toValue: (pos) => Tinv(fit.toValue(pos)), maxResidualPx: fit.maxResidualPx };
}

describe('excess energies keep their sign (src/report/panels/verify.ts)', () => {
  it('draws each value of verify.json on a symmetric-log axis, negative bars below the zero line', () => {
    const v = verifyFixture();
    const fig = excessFigure(v);
    // threshold: the decade of the smallest |excess| 2e-10 (bar-chart.ts symlogConstant)
    expect(fig.caption).toContain('bars below the zero line are negative');
    expect(fig.caption).toContain('linear for |excess| < 1e-10 h·kHz');
    const doc = parseSvg(fig.svg);
    const bars = [...doc.querySelectorAll('rect.bar')];
    const value = (group: string, series: string): Element => bars.find((b) => b.getAttribute('data-group') === group && b.getAttribute('data-series') === series)!;
    // the values drawn are those of verify.json, in its unit, with their sign
    expect(Number(value('n=0', 'bare').getAttribute('data-value'))).toBe(-0.157);
    expect(Number(value('n=1', 'cd').getAttribute('data-value'))).toBe(-2e-10);
    // geometry read as a viewer would: tick labels against their positions follow the bi-symmetric log
    // transform T(v) = sign(v)·ln(1 + |v|/c) (Webber, Meas. Sci. Technol. 24, 027001 (2013))
    const c = 1e-10;
    const T = (x: number): number => Math.sign(x) * Math.log1p(Math.abs(x) / c);
    const Tinv = (t: number): number => Math.sign(t) * c * Math.expm1(Math.abs(t));
    const ticks = readTicks(doc, 'y');
    expect(ticks.some((t) => t.value < 0)).toBe(true);
    const axis = fitTransformed(ticks, T, Tinv);
    expect(axis.maxResidualPx).toBeLessThan(0.5);
    const zero = Number(doc.querySelector('path.zero-line')!.getAttribute('d')!.split(',')[1].split('H')[0]);
    const top = (b: Element): number => Number(b.getAttribute('y'));
    const bottom = (b: Element): number => top(b) + Number(b.getAttribute('height'));
    // a negative excess hangs below the zero line and its far end reads back as the value
    const bareN0 = value('n=0', 'bare');
    expect(top(bareN0)).toBeCloseTo(zero, 1);
    expect(axis.toValue(bottom(bareN0))).toBeCloseTo(-0.157, 2);
    const cdN0 = value('n=0', 'cd');
    expect(bottom(cdN0)).toBeCloseTo(zero, 1);
    expect(axis.toValue(top(cdN0)) / 3e-9).toBeCloseTo(1, 1);
    expect(axis.toValue(bottom(value('n=1', 'cd'))) / -2e-10).toBeCloseTo(1, 1);
  });
});

describe('space–time maps show where the potential lives (src/report/crop.ts)', () => {
  it('crops a sech² well to |x| < acosh(1/fraction) plus the margin', () => {
    // sech² x > f ⇔ |x| < acosh(1/√f) (closed form); grid of 801 points on [−40, 40)
    const n = 800;
    const dx = 80 / n;
    const x = Float64Array.from({ length: n }, (_, j) => -40 + j * dx);
    const row = x.map((xi) => -2 / Math.cosh(xi) ** 2);
    const crop = cropToPotential(x, [row]);
    const edge = Math.acosh(1 / Math.sqrt(CROP_FRACTION));
    const pad = CROP_MARGIN * 2 * edge;
    expect(crop.cropped).toBe(true);
    expect(Math.abs(crop.lo - (-edge - pad))).toBeLessThan(2 * dx);
    expect(Math.abs(crop.hi - (edge + pad))).toBeLessThan(2 * dx);
    expect(crop.box).toEqual([-40, 40]);
    expect(crop.rows[0].length).toBe(crop.x.length);
  });

  it('the design map spans the wells inside the box and says so in its caption', () => {
    const dir = mkdtempSync(join(tmpdir(), 'isotrap-crop-'));
    writeDesignOutputs(runDesign(parseConfig(SMALL_SOLITON('crop'), 'crop.yaml', dir)), dir, false);
    const fig = designFigures(readSequenceFile(join(dir, 'sequence.json')), readNpyFile(join(dir, 'potential.npy')))[0];
    expect(fig.id).toBe('spacetime');
    expect(fig.caption).toMatch(/x cropped to .* where \|V\| > 1 % of its largest value over all frames .*; the box is -20 … 20 ℓ\./);
    const doc = parseSvg(fig.svg);
    const axis = fitAxis(readTicks(doc, 'x'));
    const area = doc.querySelector('rect.plot-area')!;
    const left = axis.toValue(Number(area.getAttribute('x')));
    const right = axis.toValue(Number(area.getAttribute('x')) + Number(area.getAttribute('width')));
    // inside the box of 40 ℓ, at most half of it, and covering the soliton −2 sech²(x + 2) moving at 4κ² = 4 to
    // x = −1.2 at λ = 0.2 (physics.md §4), out to two widths on either side
    expect(left).toBeGreaterThan(-20);
    expect(right).toBeLessThan(20);
    expect(right - left).toBeLessThan(20);
    expect(left).toBeLessThan(-4);
    expect(right).toBeGreaterThan(0.8);
  });
});

describe('ħ-scaling on log–log axes (src/report/panels/compare.ts)', () => {
  it('puts δ itself on a logarithmic x axis beside a logarithmic y axis; the legend reads as a fit', () => {
    const delta = [0.05, 0.1, 0.2, 0.4];
    const scaling: CompareSummary['scaling'] = {
      exponent: 1.9712,
      uncertainty: 0.0031,
      exponent_l2: 2,
      uncertainty_l2: 0.01,
      prefactor: 0.3,
      lambda_scaled: 0.1,
      lambda_fraction: 0.5,
      breaking_scaled: 0.2,
      lambda_natural: 0.1,
      points: delta.map((d) => ({ delta: d, delta2: d * d, distance_max: 0.3 * d ** 2, distance_l2: 0.2 * d ** 2, lambda_1pct_scaled: null })),
      tails: { classical: 0, quantum: 0 },
      phase_space: null,
    };
    const fig = scalingFigure({ scaling })!;
    const doc = parseSvg(fig.svg);
    const legend = [...doc.querySelectorAll('.legend-entry text')].map((t) => t.textContent);
    expect(legend).toContain('fit: distance ∝ δ^p, p = 1.971 ± 0.003');
    const labels = [...doc.querySelectorAll('text.axis-label')].map((t) => t.textContent ?? '');
    expect(labels.some((l) => l.startsWith('dispersion number δ'))).toBe(true);
    expect(labels.some((l) => l.includes('log'))).toBe(false);
    // both axes: tick labels are decades whose positions are linear in log10 of the value
    for (const name of ['x', 'y']) {
      const ticks = readTicks(doc, name);
      expect(ticks.length).toBeGreaterThanOrEqual(2);
      for (const t of ticks) expect(Math.log10(t.value) % 1).toBeCloseTo(0, 12);
      expect(fitAxis(ticks, true).maxResidualPx).toBeLessThan(0.5);
    }
    // the markers sit at δ and at the computed distance
    const xs = fitAxis(readTicks(doc, 'x'), true);
    const ys = fitAxis(readTicks(doc, 'y'), true);
    const marks = [...doc.querySelectorAll('g.markers[data-series="computed"] circle')];
    expect(marks.map((m) => xs.toValue(Number(m.getAttribute('cx')))).map((d, i) => d / delta[i])).toEqual(delta.map(() => expect.closeTo(1, 2)));
    expect(marks.map((m, i) => ys.toValue(Number(m.getAttribute('cy'))) / (0.3 * delta[i] ** 2))).toEqual(delta.map(() => expect.closeTo(1, 2)));
  });
});

describe('figure size: paper or slides (src/report/style.ts)', () => {
  /** printed width and height in mm and the smallest printed text in pt */
  function measure(svg: string): { w: number; h: number; minPt: number } {
    const doc = parseSvg(svg);
    const root = doc.documentElement;
    const minPt = Math.min(...[...doc.querySelectorAll('text')].map((t) => printedFontPt(doc, t)));
    return { w: parseFloat(root.getAttribute('width')!), h: parseFloat(root.getAttribute('height')!), minPt };
  }
  it('slides are 254 mm panels of 16:9 with text of at least 14 pt; paper stays one column at 7 pt', () => {
    const v = verifyFixture();
    const paper = measure(excessFigure(v, 'paper').svg);
    const slides = measure(excessFigure(v, 'slides').svg);
    expect(paper.w).toBeCloseTo(86, 1); // one journal column (common practice)
    expect(paper.minPt).toBeGreaterThanOrEqual(7 - 1e-9);
    expect(paper.minPt).toBeLessThan(8);
    expect(slides.w).toBeCloseTo(254, 1); // 10 in, the width chosen in style.ts
    expect(slides.minPt).toBeGreaterThanOrEqual(14); // projector minimum (common practice)
    // the plot block is 16:9; the legend below adds to the height
    const doc = parseSvg(excessFigure(v, 'slides').svg);
    const vbH = Number(doc.documentElement.getAttribute('viewBox')!.split(' ')[3]);
    const legend = doc.querySelector('g.legend')!;
    const blockMm = (Number(legend.getAttribute('data-y')) / vbH) * slides.h;
    expect(blockMm).toBeCloseTo(254 / (16 / 9), 0);
  });
  it('--figures is an option of report, run, compare and lattice; an unknown size is refused naming the option and the sizes', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'isotrap-figures-'));
    const errors: string[] = [];
    const spy = vi.spyOn(process.stderr, 'write').mockImplementation((s: string | Uint8Array) => errors.push(String(s)) > 0);
    try {
      const out = ['--out', join(dir, 'out')];
      for (const args of [['report', dir], ['run', 'missing.yaml', ...out], ['compare', 'missing.yaml', ...out], ['lattice', 'missing.yaml', ...out]]) {
        errors.length = 0;
        expect(await main(['node', 'isotrap', ...args, '--figures', 'poster'])).toBe(2);
        expect(errors.join('')).toContain('option --figures = "poster" is not allowed: must be one of paper, slides');
      }
    } finally {
      spy.mockRestore();
    }
    expect(existsSync(join(dir, 'out'))).toBe(false);
  });
});

describe('the ensembles caption names what was computed', () => {
  const thermal = { temperature: 20, unit: 'nK', fidelity_cd: 1, fidelity_bare: 0.9, uhlmann_cd: 1, uhlmann_bare: 0.8, mean_excess_cd: 0, mean_excess_bare: 0.1, tail_weight: 0, definition: '' };
  const fermions = { count: 3, fidelity_cd: 1, fidelity_bare: 0.7, fermi_level_cuts_group: false };
  it('mentions a Fermi sea only when fermions were requested', () => {
    const noFermions = ensemblesFigure(verifyFixture({ thermal }))!;
    expect(noFermions.caption).toContain('thermal ensemble at 20 nK');
    expect(noFermions.caption).not.toMatch(/Fermi/);
    expect(noFermions.svg).not.toMatch(/Fermi/);
    const both = ensemblesFigure(verifyFixture({ thermal, fermions }))!;
    expect(both.caption).toContain('the filled Fermi sea of 3 fermions');
    expect(both.svg).toContain('Fermi sea N=3');
    expect(ensemblesFigure(verifyFixture({ fermions }))!.caption).not.toMatch(/thermal/);
    expect(ensemblesFigure(verifyFixture())).toBeNull();
  });
});
