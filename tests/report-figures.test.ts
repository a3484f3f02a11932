import { describe, expect, it } from 'vitest';
import { crc32 as zlibCrc32, inflateSync } from 'node:zlib';
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { barChart, heatmap, lineChart } from '../src/report/index.ts';
import { crc32, encodePngRgba } from '../src/report/png.ts';
import { renderReport } from '../src/report/html.ts';
import { hexToRgb, viridisRgb } from '../src/report/style.ts';
import {
  allAttributeValues,
  fitAxis,
  lcg,
  parsePath,
  parseSvg,
  printedFontPt,
  readTicks,
} from './report-helpers.ts';

function linspace(a: number, b: number, n: number): Float64Array {
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) out[i] = a + ((b - a) * i) / (n - 1);
  return out;
}

const sech2 = (x: number): number => 1 / Math.cosh(x) ** 2;

/** Decode an 8-bit RGBA non-interlaced PNG with filter 0 rows (what png.ts writes), checking every chunk CRC. */
function decodePng(bytes: Uint8Array): { width: number; height: number; rgba: Uint8Array; chunks: string[] } {
  // PNG spec §5.2 signature
  expect(Array.from(bytes.subarray(0, 8))).toEqual([137, 80, 78, 71, 13, 10, 26, 10]);
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  let o = 8;
  let width = 0;
  let height = 0;
  const idat: Uint8Array[] = [];
  const chunks: string[] = [];
  while (o < bytes.length) {
    const len = view.getUint32(o);
    const type = String.fromCharCode(...bytes.subarray(o + 4, o + 8));
    const data = bytes.subarray(o + 8, o + 8 + len);
    const crc = view.getUint32(o + 8 + len);
    // chunk CRC over type+data, checked against node's zlib.crc32 (independent implementation)
    expect(crc).toBe(zlibCrc32(bytes.subarray(o + 4, o + 8 + len)));
    chunks.push(type);
    if (type === 'IHDR') {
      width = view.getUint32(o + 8);
      height = view.getUint32(o + 12);
      expect(Array.from(data.subarray(8, 13))).toEqual([8, 6, 0, 0, 0]); // 8-bit RGBA, PNG spec §11.2.2
    }
    if (type === 'IDAT') idat.push(data);
    o += 12 + len;
  }
  const raw = inflateSync(Buffer.concat(idat));
  const rgba = new Uint8Array(width * height * 4);
  for (let r = 0; r < height; r++) {
    expect(raw[r * (width * 4 + 1)]).toBe(0); // filter type 0
    rgba.set(raw.subarray(r * (width * 4 + 1) + 1, (r + 1) * (width * 4 + 1)), r * width * 4);
  }
  return { width, height, rgba, chunks };
}

function imageBytes(img: Element): Uint8Array {
  const href = img.getAttributeNS('http://www.w3.org/1999/xlink', 'href') ?? img.getAttribute('href') ?? '';
  const prefix = 'data:image/png;base64,';
  expect(href.startsWith(prefix)).toBe(true);
  return new Uint8Array(Buffer.from(href.slice(prefix.length), 'base64'));
}

describe('PNG encoder', () => {
  it('computes CRC-32 per the PNG spec', () => {
    // CRC-32 check value of "123456789" is 0xCBF43926 (Williams, "A Painless Guide to CRC", 1993; the catalogue
    // check value of CRC-32/ISO-HDLC)
    expect(crc32(new TextEncoder().encode('123456789'))).toBe(0xcbf43926);
    // IEND chunk CRC is AE 42 60 82 (PNG spec example; from memory) and equals zlib.crc32("IEND")
    expect(crc32(new TextEncoder().encode('IEND'))).toBe(0xae426082);
    expect(zlibCrc32('IEND')).toBe(0xae426082);
  });
  it('round-trips pixels through inflate', () => {
    const next = lcg(12345);
    const w = 7;
    const h = 5;
    const px = new Uint8Array(w * h * 4);
    for (let i = 0; i < px.length; i++) px[i] = Math.floor(next() * 256);
    const dec = decodePng(encodePngRgba(w, h, px));
    expect(dec.chunks).toEqual(['IHDR', 'IDAT', 'IEND']); // PNG spec §5.6 chunk order
    expect(dec.width).toBe(w);
    expect(dec.height).toBe(h);
    expect(Array.from(dec.rgba)).toEqual(Array.from(px)); // lossless: decoded bytes equal the input
  });
});

describe('lineChart', () => {
  const x = linspace(-8, 8, 401);
  const y1 = x.map((v) => -2 * sech2(v)); // one soliton, depth 2κ² with κ = 1 (physics.md §4)
  const y2 = x.map((v) => -6 * sech2(v)); // −N(N+1) sech², N = 2 (Landau & Lifshitz §23)
  const svg = lineChart({
    title: 'wells',
    xLabel: 'position ξ (ℓ)',
    yLabel: 'potential u (E₀)',
    series: [
      { name: 'κ = 1', x, y: y1 },
      { name: 'N = 2 <Pöschl–Teller> & co', x, y: y2, markers: true },
    ],
    width: 'single',
    annotations: ['depths 2 and 6'],
  });
  const doc = parseSvg(svg); // must be well-formed XML even with '<' and '&' in a series name

  it('has axes with tick labels and the given quantity/unit labels', () => {
    for (const [axis, label] of [
      ['x', 'position ξ (ℓ)'],
      ['y', 'potential u (E₀)'],
    ] as const) {
      const g = doc.querySelector(`g.axis[data-axis="${axis}"]`);
      expect(g).not.toBeNull();
      expect(g!.querySelector('text.axis-label')!.textContent).toBe(label); // the input label, verbatim
      const ticks = readTicks(doc, axis);
      expect(ticks.length).toBeGreaterThanOrEqual(3); // at least 3 labelled ticks (common practice)
      for (const t of ticks) expect(Number.isFinite(t.value)).toBe(true);
    }
  });

  it('plots one path per series, in order', () => {
    const paths = doc.querySelectorAll('path.series-line');
    expect(paths.length).toBe(2); // two input series
    expect(paths[0].getAttribute('data-series')).toBe('κ = 1');
    expect(paths[1].getAttribute('data-series')).toBe('N = 2 <Pöschl–Teller> & co');
    expect(doc.querySelectorAll('g.legend-entry').length).toBe(2);
  });

  it('maps the plotted extreme back to the data extremum through the axis scale', () => {
    const fit = fitAxis(readTicks(doc, 'y'));
    expect(fit.maxResidualPx).toBeLessThan(0.05); // ticks are linear in the labels (sanity of the read-out)
    for (const [i, data] of [y1, y2].entries()) {
      const p = doc.querySelectorAll('path.series-line')[i];
      const pts = parsePath(p.getAttribute('d')!).flat();
      const yMaxPx = Math.max(...pts.map((q) => q[1])); // screen y grows downwards → data minimum
      const yMinPx = Math.min(...pts.map((q) => q[1]));
      const dmin = Math.min(...data);
      const dmax = Math.max(...data);
      // closed form: minimum of −c sech² is −c at ξ = 0 (grid contains 0); within one pixel of the axis scale
      expect(Math.abs(fit.toValue(yMaxPx) - dmin)).toBeLessThan(fit.unitsPerPx);
      expect(Math.abs(fit.toValue(yMinPx) - dmax)).toBeLessThan(fit.unitsPerPx);
      expect(dmin).toBeCloseTo(i === 0 ? -2 : -6, 12);
      // data attributes equal the extremes of the input (Math.min/Math.max as reference)
      expect(Number(p.getAttribute('data-ymin'))).toBe(dmin);
      expect(Number(p.getAttribute('data-ymax'))).toBe(dmax);
      expect(Number(p.getAttribute('data-points'))).toBe(401);
    }
    const xfit = fitAxis(readTicks(doc, 'x'));
    const pts = parsePath(doc.querySelector('path.series-line')!.getAttribute('d')!).flat();
    expect(Math.abs(xfit.toValue(pts[0][0]) - -8)).toBeLessThan(xfit.unitsPerPx); // first x = −8 (input)
    expect(Math.abs(xfit.toValue(pts[pts.length - 1][0]) - 8)).toBeLessThan(xfit.unitsPerPx); // last x = 8
  });

  it('places the legend where no data segment crosses it', () => {
    const lg = doc.querySelector('g.legend')!;
    const r = {
      x: Number(lg.getAttribute('data-x')),
      y: Number(lg.getAttribute('data-y')),
      w: Number(lg.getAttribute('data-width')),
      h: Number(lg.getAttribute('data-height')),
    };
    // an in-plot legend's drawn frame has exactly this box
    if (lg.getAttribute('data-placement') !== 'below') {
      const frame = lg.querySelector('rect')!;
      expect(Number(frame.getAttribute('width'))).toBeCloseTo(r.w, 2);
    }
    // sample every data segment at 0.25 px steps (independent of the library's clipping test)
    let hits = 0;
    for (const p of Array.from(doc.querySelectorAll('path.series-line'))) {
      for (const sub of parsePath(p.getAttribute('d')!)) {
        for (let k = 0; k + 1 < sub.length; k++) {
          const [x0, y0] = sub[k];
          const [x1, y1] = sub[k + 1];
          const steps = Math.max(1, Math.ceil(Math.hypot(x1 - x0, y1 - y0) / 0.25));
          for (let s = 0; s <= steps; s++) {
            const X = x0 + ((x1 - x0) * s) / steps;
            const Y = y0 + ((y1 - y0) * s) / steps;
            if (X >= r.x && X <= r.x + r.w && Y >= r.y && Y <= r.y + r.h) hits++;
          }
        }
      }
    }
    for (const c of Array.from(doc.querySelectorAll('g.markers circle'))) {
      const X = Number(c.getAttribute('cx'));
      const Y = Number(c.getAttribute('cy'));
      if (X >= r.x - 2 && X <= r.x + r.w + 2 && Y >= r.y - 2 && Y <= r.y + r.h + 2) hits++;
    }
    expect(hits).toBe(0);
  });

  it('puts the legend into an empty plot corner when there is one', () => {
    const t = linspace(0, 5, 200);
    const doc2 = parseSvg(
      lineChart({
        xLabel: 'time t (ms)',
        yLabel: 'population P',
        series: [
          { name: 'e^{−t}', x: t, y: t.map((v) => Math.exp(-v)) },
          { name: 'e^{−2t}', x: t, y: t.map((v) => Math.exp(-2 * v)) },
        ],
        width: 'single',
      }),
    );
    const lg = doc2.querySelector('g.legend')!;
    // decaying curves leave the top-right corner empty (by construction of the data)
    expect(lg.getAttribute('data-placement')).toBe('top-right');
    const r = { x: Number(lg.getAttribute('data-x')), y: Number(lg.getAttribute('data-y')), w: Number(lg.getAttribute('data-width')), h: Number(lg.getAttribute('data-height')) };
    const plot = doc2.querySelector('rect.plot-area')!;
    // inside the plot frame
    expect(r.x).toBeGreaterThan(Number(plot.getAttribute('x')));
    expect(r.x + r.w).toBeLessThan(Number(plot.getAttribute('x')) + Number(plot.getAttribute('width')));
    // no path vertex inside the box (dense data: 200 points over the plot width)
    for (const p of Array.from(doc2.querySelectorAll('path.series-line'))) {
      for (const [X, Y] of parsePath(p.getAttribute('d')!).flat()) {
        expect(X >= r.x && X <= r.x + r.w && Y >= r.y && Y <= r.y + r.h).toBe(false);
      }
    }
  });

  it('sizes the figure for one journal column with text ≥ 7 pt', () => {
    const root = doc.documentElement;
    expect(root.getAttribute('width')).toBe('86mm'); // one column, 86 mm (common practice, APS)
    const vb = root.getAttribute('viewBox')!.split(' ').map(Number);
    expect(vb[2]).toBeCloseTo((86 / 25.4) * 96, 1); // 96 px per inch (CSS Values and Units)
    expect(parseFloat(root.getAttribute('height')!)).toBeCloseTo((vb[3] * 25.4) / 96, 1);
    const texts = Array.from(doc.getElementsByTagName('text'));
    expect(texts.length).toBeGreaterThan(10);
    for (const t of texts) expect(printedFontPt(doc, t)).toBeGreaterThanOrEqual(7 - 1e-6); // journal minimum 7 pt
    expect(doc.getElementsByTagName('text').length).toBeGreaterThan(0); // vector text, not outlines
    expect(doc.querySelector('text.annotation')!.textContent).toBe('depths 2 and 6');
  });
});

describe('lineChart with non-finite data', () => {
  const x = linspace(0, 10, 50);
  const y = x.map((v) => Math.sin(v));
  y[5] = NaN;
  y[6] = NaN;
  y[20] = Infinity;
  y[35] = -Infinity;
  const x2 = Float64Array.from(x);
  x2[40] = NaN;
  it('never writes NaN or Infinity and splits the path at the gaps', () => {
    const svg = lineChart({ xLabel: 'time t (ms)', yLabel: 'signal s (arb. u.)', series: [{ name: 'a', x, y }, { name: 'b', x: x2, y: x.map(Math.cos) }], width: 'double' });
    const doc = parseSvg(svg);
    for (const v of allAttributeValues(doc)) {
      expect(v).not.toMatch(/NaN|Infinity/);
    }
    expect(svg).not.toMatch(/NaN|Infinity/);
    const [pa, pb] = Array.from(doc.querySelectorAll('path.series-line'));
    // runs of finite values: [0..4], [7..19], [21..34], [36..49] → 4 subpaths (counted by hand)
    expect(parsePath(pa.getAttribute('d')!).length).toBe(4);
    expect(pa.getAttribute('data-segments')).toBe('4');
    expect(pa.getAttribute('data-nonfinite')).toBe('4');
    expect(parsePath(pb.getAttribute('d')!).length).toBe(2); // one NaN in x → 2 runs
    expect(doc.documentElement.getAttribute('width')).toBe('178mm'); // two columns, 178 mm (common practice)
  });
  it('breaks a log-y path at non-positive values and labels decades', () => {
    const t = linspace(0, 5, 200);
    const e = t.map((v) => Math.exp(-3 * v)); // spans 10^0 … 10^-6.5
    e[100] = 0;
    e[101] = -1;
    const svg = lineChart({ xLabel: 'time t (ms)', yLabel: 'excitation P', series: [{ name: 'P', x: t, y: e }], logY: true, width: 'single' });
    const doc = parseSvg(svg);
    const ticks = readTicks(doc, 'y');
    // major tick labels on a log axis are integer powers of ten (common practice)
    for (const tk of ticks) expect(Math.log10(tk.value)).toBeCloseTo(Math.round(Math.log10(tk.value)), 9);
    const p = doc.querySelector('path.series-line')!;
    expect(parsePath(p.getAttribute('d')!).length).toBe(2);
    const fit = fitAxis(ticks, true);
    const pts = parsePath(p.getAttribute('d')!).flat();
    const bottom = Math.max(...pts.map((q) => q[1]));
    // last point e(5) = exp(−15) (closed form): within one pixel in log10 units
    expect(Math.abs(Math.log10(fit.toValue(bottom)) - Math.log10(Math.exp(-15)))).toBeLessThan(fit.unitsPerPx);
  });
  it('rejects mismatched lengths with a RangeError naming the series', () => {
    expect(() => lineChart({ xLabel: 'a', yLabel: 'b', series: [{ name: 'bad', x: [1, 2], y: [1] }], width: 'single' })).toThrow(RangeError);
    expect(() => lineChart({ xLabel: 'a', yLabel: 'b', series: [{ name: 'bad', x: [1, 2], y: [1] }], width: 'single' })).toThrow(/"bad"/);
  });
  it('decimates long monotone series but keeps the exact extremes', () => {
    const n = 200_000;
    const xx = linspace(0, 1, n);
    const next = lcg(7);
    const yy = new Float64Array(n);
    for (let i = 0; i < n; i++) yy[i] = next() - 0.5;
    yy[123_457] = 3; // a single spike must survive decimation
    const svg = lineChart({ xLabel: 'x', yLabel: 'y', series: [{ name: 'noise', x: xx, y: yy }], width: 'single' });
    expect(svg.length).toBeLessThan(400_000); // 4 points per pixel column × ~290 columns ≪ 200 000 input points
    const doc = parseSvg(svg);
    const p = doc.querySelector('path.series-line')!;
    expect(p.getAttribute('data-decimated')).toBe('true'); // 200 000 points > 4 per pixel column
    const fit = fitAxis(readTicks(doc, 'y'));
    const top = Math.min(...parsePath(p.getAttribute('d')!).flat().map((q) => q[1]));
    expect(Math.abs(fit.toValue(top) - 3)).toBeLessThan(fit.unitsPerPx); // the spike value, 3 (input)
  });
});

describe('heatmap', () => {
  it('keeps a 2000×4000 array under 2 MB and block-averages correctly', () => {
    const ny = 2000;
    const nx = 4000;
    const x = linspace(-20, 20, nx);
    const y = linspace(0, 1, ny);
    const next = lcg(99);
    const z: Float64Array[] = [];
    for (let j = 0; j < ny; j++) {
      const row = new Float64Array(nx);
      for (let i = 0; i < nx; i++) row[i] = next(); // white noise: worst case for compression
      z.push(row);
    }
    z[0][0] = NaN; // a NaN inside a block is skipped by the average
    const t0 = performance.now();
    const svg = heatmap({ xLabel: 'position ξ (ℓ)', yLabel: 'time τ (t₀)', zLabel: 'density n (ℓ⁻¹)', x, y, z, width: 'double' });
    const ms = performance.now() - t0;
    const bytes = Buffer.byteLength(svg, 'utf8');
    expect(bytes).toBeLessThan(2 * 1024 * 1024); // requirement: < 2 MB
    expect(ms).toBeLessThan(10_000); // speed budget for a 2-core machine (house rules: fast tests)
    expect(svg).not.toMatch(/NaN|Infinity/); // requirement: no non-finite numbers written
    const doc = parseSvg(svg);
    const img = doc.querySelector('image.cells')!;
    // default cap 300 × 200 cells: block 10 (rows) × 14 (cols) → 200 × 286 cells (⌈2000/200⌉, ⌈4000/300⌉)
    expect(img.getAttribute('data-cells')).toBe('200x286');
    expect(img.getAttribute('data-block')).toBe('10x14');
    const png = decodePng(imageBytes(img));
    expect([png.height, png.width]).toEqual([200, 286]);
    // independent block mean of cell (row 5, col 7) (rows 50–59, cols 98–111), then coloured with viridis:
    const zmin = Number(img.getAttribute('data-zmin'));
    const zmax = Number(img.getAttribute('data-zmax'));
    let s = 0;
    for (let j = 50; j < 60; j++) for (let i = 98; i < 112; i++) s += z[j][i];
    const mean = s / 140;
    const want = viridisRgb((mean - zmin) / (zmax - zmin));
    const o = ((199 - 5) * 286 + 7) * 4; // PNG row 0 is the top, i.e. the highest y
    for (let k = 0; k < 3; k++) expect(Math.abs(png.rgba[o + k] - want[k])).toBeLessThanOrEqual(2); // 8-bit LUT quantisation
    // cell (0,0) holds one NaN: mean of the other 139 values
    let s0 = 0;
    for (let j = 0; j < 10; j++) for (let i = 0; i < 14; i++) if (!(j === 0 && i === 0)) s0 += z[j][i];
    const want0 = viridisRgb((s0 / 139 - zmin) / (zmax - zmin));
    const o0 = (199 * 286 + 0) * 4;
    for (let k = 0; k < 3; k++) expect(Math.abs(png.rgba[o0 + k] - want0[k])).toBeLessThanOrEqual(2);
    expect(png.rgba[o0 + 3]).toBe(255); // opaque: the block holds finite values (PNG spec alpha 255 = opaque)
  });

  it('has a colour bar with ticks and units, overlays, and correct placement', () => {
    const nx = 128;
    const ny = 64;
    const x = linspace(-10, 10, nx);
    const y = linspace(0, 1, ny);
    const z: Float64Array[] = [];
    for (let j = 0; j < ny; j++) z.push(x.map((v) => -2 * sech2(v - 4 * y[j]))); // one soliton, speed 4κ² = 4
    const ox = y.map((t) => 4 * t);
    const ox2 = Float64Array.from(ox);
    ox2[10] = NaN;
    const svg = heatmap({
      xLabel: 'position ξ (ℓ)',
      yLabel: 'time τ (t₀)',
      zLabel: 'potential u (E₀)',
      x,
      y,
      z,
      overlays: [
        { name: 'predicted ξ = 4τ', x: ox, y },
        { name: 'with gap', x: ox2, y },
      ],
      width: 'single',
    });
    const doc = parseSvg(svg);
    for (const v of allAttributeValues(doc)) expect(v).not.toMatch(/NaN|Infinity/);
    const cb = doc.querySelector('g.colorbar')!;
    expect(cb.querySelector('g.axis[data-axis="z"] text.axis-label')!.textContent).toBe('potential u (E₀)');
    const zt = readTicks(doc, 'z');
    expect(zt.length).toBeGreaterThanOrEqual(3);
    // colour bar ticks lie within the data range [−2, 0] (closed form of the soliton: min −2, max → 0)
    for (const t of zt) {
      expect(t.value).toBeGreaterThanOrEqual(-2 - 1e-3);
      expect(t.value).toBeLessThanOrEqual(0);
    }
    // colour bar PNG: top pixel is viridis(1), bottom viridis(0) (published endpoints #fde725, #440154)
    const bar = decodePng(imageBytes(cb.querySelector('image')!));
    expect(Array.from(bar.rgba.subarray(0, 3))).toEqual(Array.from(hexToRgb('#fde725')));
    expect(Array.from(bar.rgba.subarray(bar.rgba.length - 4, bar.rgba.length - 1))).toEqual(Array.from(hexToRgb('#440154')));
    // overlays: 2 paths, one with a gap
    const ovs = doc.querySelectorAll('path.overlay-line');
    expect(ovs.length).toBe(2);
    expect(parsePath(ovs[1].getAttribute('d')!).length).toBe(2);
    // image spans the cell edges [x0 − dx/2, x_end + dx/2] when no blocking is needed (cell-centred grid)
    const img = doc.querySelector('image.cells')!;
    const xf = fitAxis(readTicks(doc, 'x'));
    const dx = 20 / (nx - 1);
    const left = Number(img.getAttribute('x'));
    const right = left + Number(img.getAttribute('width'));
    expect(Math.abs(xf.toValue(left) - (-10 - dx / 2))).toBeLessThan(xf.unitsPerPx);
    expect(Math.abs(xf.toValue(right) - (10 + dx / 2))).toBeLessThan(xf.unitsPerPx);
    // overlay end point maps back to ξ = 4 at τ = 1 (soliton position 4κ²τ, physics.md §4)
    const pts = parsePath(ovs[0].getAttribute('d')!).flat();
    const yf = fitAxis(readTicks(doc, 'y'));
    const last = pts[pts.length - 1];
    expect(Math.abs(xf.toValue(last[0]) - 4)).toBeLessThan(xf.unitsPerPx);
    expect(Math.abs(yf.toValue(last[1]) - 1)).toBeLessThan(yf.unitsPerPx);
  });

  it('rejects rows of the wrong length', () => {
    const x = linspace(0, 1, 4);
    const y = linspace(0, 1, 3);
    expect(() => heatmap({ xLabel: 'a', yLabel: 'b', zLabel: 'c', x, y, z: [x, x, new Float64Array(3)], width: 'single' })).toThrow(RangeError);
  });
});

describe('barChart', () => {
  const groups = [
    { label: 'fast ramp', values: [{ name: 'no CD', value: 0.5 }, { name: 'cubic CD', value: 2e-6 }] },
    { label: 'slow ramp', values: [{ name: 'no CD', value: 0.01 }, { name: 'cubic CD', value: 0 }] },
  ];
  it('draws one bar per finite value whose top maps back to the value (log axis)', () => {
    const svg = barChart({ xLabel: 'ramp', yLabel: 'excess energy ΔE (E₀)', groups, logY: true });
    const doc = parseSvg(svg);
    for (const v of allAttributeValues(doc)) expect(v).not.toMatch(/NaN|Infinity/);
    const bars = Array.from(doc.querySelectorAll('rect.bar'));
    expect(bars.length).toBe(3); // 4 values, one is 0 and cannot be shown on a log axis
    const missing = doc.querySelectorAll('g.bar-missing');
    expect(missing.length).toBe(1);
    expect(missing[0].getAttribute('data-series')).toBe('cubic CD');
    const fit = fitAxis(readTicks(doc, 'y'), true);
    const want = [0.5, 2e-6, 0.01]; // input values in drawing order
    bars.forEach((b, i) => {
      const top = Number(b.getAttribute('y'));
      expect(Math.abs(Math.log10(fit.toValue(top)) - Math.log10(want[i]))).toBeLessThan(fit.unitsPerPx);
      expect(Number(b.getAttribute('data-value'))).toBe(want[i]);
    });
    expect(doc.querySelector('g.axis[data-axis="y"] text.axis-label')!.textContent).toBe('excess energy ΔE (E₀)');
    const groupsShown = Array.from(doc.querySelectorAll('g.axis[data-axis="x"] g.tick text')).map((t) => t.textContent);
    expect(groupsShown).toEqual(['fast ramp', 'slow ramp']);
  });
  it('includes zero on a linear axis and handles negative values', () => {
    const svg = barChart({ xLabel: 'case', yLabel: 'shift δ (ℓ)', groups: [{ label: 'a', values: [{ name: 'v', value: -1.5 }] }, { label: 'b', values: [{ name: 'v', value: 2.5 }] }] });
    const doc = parseSvg(svg);
    const fit = fitAxis(readTicks(doc, 'y'));
    const [b0, b1] = Array.from(doc.querySelectorAll('rect.bar'));
    // negative bar: top edge at 0, bottom at −1.5; positive bar: bottom at 0, top at 2.5 (input values)
    const y0 = Number(b0.getAttribute('y'));
    expect(Math.abs(fit.toValue(y0) - 0)).toBeLessThan(fit.unitsPerPx);
    expect(Math.abs(fit.toValue(y0 + Number(b0.getAttribute('height'))) - -1.5)).toBeLessThan(fit.unitsPerPx);
    expect(Math.abs(fit.toValue(Number(b1.getAttribute('y'))) - 2.5)).toBeLessThan(fit.unitsPerPx);
  });
});

describe('print size of every figure kind', () => {
  it('keeps all text ≥ 7 pt and the nominal column widths', () => {
    const x = linspace(0, 1, 20);
    const z = Array.from(x, (v) => x.map((w) => v - w));
    const cases: Array<[string, string]> = [
      [heatmap({ title: 'T', xLabel: 'position x (µm)', yLabel: 'time t (ms)', zLabel: 'density n (µm⁻¹)', x, y: x, z, width: 'single', overlays: [{ name: 'o', x, y: x }] }), '86mm'],
      [heatmap({ xLabel: 'position x (µm)', yLabel: 'time t (ms)', zLabel: 'density n (µm⁻¹)', x, y: x, z, width: 'double' }), '178mm'],
      [barChart({ title: 'T', xLabel: 'ramp', yLabel: 'ΔE (E₀)', groups: [{ label: 'a rather long group label', values: [{ name: 'u', value: 1 }, { name: 'w', value: 2 }] }, { label: 'b', values: [{ name: 'u', value: 3 }] }] }), '86mm'],
    ];
    for (const [svg, w] of cases) {
      const doc = parseSvg(svg);
      expect(doc.documentElement.getAttribute('width')).toBe(w); // 86 / 178 mm columns (common practice)
      const texts = Array.from(doc.getElementsByTagName('text'));
      expect(texts.length).toBeGreaterThan(5);
      for (const t of texts) expect(printedFontPt(doc, t)).toBeGreaterThanOrEqual(7 - 1e-6); // journal minimum 7 pt
    }
  });
});

describe('demo: sech² potential figure written to a temporary folder', () => {
  it('renders the N = 2 Pöschl–Teller well with its bound-state energies', () => {
    // u(ξ) = −N(N+1) sech² ξ with N = 2 has bound states E_n = −(N − n)² = −4, −1 (Landau & Lifshitz §23)
    const xi = linspace(-6, 6, 601);
    const u = xi.map((v) => -6 * sech2(v));
    const series = [{ name: 'u(ξ) = −6 sech² ξ', x: xi, y: u }];
    for (const e of [-4, -1]) series.push({ name: `E = ${e}`.replace('-', '\u2212'), x: Float64Array.from([-6, 6]), y: Float64Array.from([e, e]) });
    const svg = lineChart({
      title: 'Pöschl–Teller well, N = 2',
      xLabel: 'position ξ (ℓ)',
      yLabel: 'energy (E₀)',
      series,
      width: 'single',
      annotations: ['bound states at −4 and −1 E₀ (Landau & Lifshitz §23)'],
    });
    // fixed folder under the OS temp dir, overwritten on every run (nothing accumulates, nothing in the repo)
    const dir = join(tmpdir(), 'isotrap-report-demo');
    mkdirSync(dir, { recursive: true });
    const svgPath = join(dir, 'sech2.svg');
    writeFileSync(svgPath, svg);
    const html = renderReport({
      title: 'sech² demo',
      summaryRows: [{ key: 'depth', value: 6, unit: 'E₀' }],
      figures: [{ id: 'sech2', caption: 'N = 2 well', svg }],
      configText: 'N: 2',
      provenance: { toolVersion: '0.1.0', configHash: 'none', date: '2026-01-01', runSeconds: 0 },
      warnings: [],
    });
    writeFileSync(join(dir, 'report.html'), html);
    const doc = parseSvg(readFileSync(svgPath, 'utf8'));
    const paths = Array.from(doc.querySelectorAll('path.series-line'));
    expect(paths.length).toBe(3);
    expect(Number(paths[0].getAttribute('data-ymin'))).toBeCloseTo(-6, 12); // well depth N(N+1) = 6 at ξ = 0
    const fit = fitAxis(readTicks(doc, 'y'));
    for (const [k, e] of [[1, -4], [2, -1]] as const) {
      const py = parsePath(paths[k].getAttribute('d')!)[0][0][1];
      expect(Math.abs(fit.toValue(py) - e)).toBeLessThan(fit.unitsPerPx); // E_n = −(N − n)², Landau & Lifshitz §23
    }
  });
});
