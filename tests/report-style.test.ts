import { describe, expect, it } from 'vitest';
import { interpolateViridis } from 'd3-scale-chromatic';
import {
  DASH_PATTERNS,
  DOUBLE_COLUMN_MM,
  FONT_PT,
  MIN_FONT_PT,
  OKABE_ITO,
  SERIES_COLORS,
  SINGLE_COLUMN_MM,
  cieLightness,
  hexToRgb,
  mmToPx,
  ptToPx,
  quantityLabel,
  relativeLuminance,
  srgbToLinear,
  viridis,
  viridisLut,
  viridisRgb,
} from '../src/report/style.ts';

function parseCss(c: string): [number, number, number] {
  if (c.startsWith('#')) return hexToRgb(c) as [number, number, number];
  const m = /rgb\((\d+),\s*(\d+),\s*(\d+)\)/.exec(c);
  if (!m) throw new Error(c);
  return [Number(m[1]), Number(m[2]), Number(m[3])];
}

describe('print geometry', () => {
  it('converts mm and pt to px at 96 dpi', () => {
    // CSS Values and Units Level 3 (W3C): 1in = 96px = 25.4mm = 72pt
    expect(mmToPx(25.4)).toBeCloseTo(96, 12);
    expect(ptToPx(72)).toBeCloseTo(96, 12);
    expect(mmToPx(SINGLE_COLUMN_MM)).toBeCloseTo((86 / 25.4) * 96, 9); // 86 mm column (APS style, common practice)
    expect(mmToPx(DOUBLE_COLUMN_MM)).toBeCloseTo((178 / 25.4) * 96, 9);
  });
  it('uses fonts of at least 7 pt', () => {
    // 7 pt minimum: common practice of journal artwork guidelines
    for (const v of Object.values(FONT_PT)) expect(v).toBeGreaterThanOrEqual(MIN_FONT_PT);
  });
  it('builds quantity-with-unit labels', () => {
    // label convention "quantity symbol (unit)": common practice (e.g. "time t (ms)")
    expect(quantityLabel('time', 't', 'ms')).toBe('time t (ms)');
    expect(quantityLabel('fidelity', 'F')).toBe('fidelity F');
  });
});

describe('CIE lightness', () => {
  it('matches the closed forms of IEC 61966-2-1 and CIE 15', () => {
    // IEC 61966-2-1: linear segment below 0.04045, slope 1/12.92
    expect(srgbToLinear(10)).toBeCloseTo(10 / 255 / 12.92, 15);
    // power segment: ((c+0.055)/1.055)^2.4 at c = 0.5
    expect(srgbToLinear(127.5)).toBeCloseTo(Math.pow(0.555 / 1.055, 2.4), 15);
    // CIE 15: white L* = 100, black L* = 0
    expect(cieLightness([255, 255, 255])).toBeCloseTo(100, 10);
    expect(cieLightness([0, 0, 0])).toBeCloseTo(0, 10);
    // sRGB primaries' luminances are the Y row of the IEC 61966-2-1 matrix: 0.2126, 0.7152, 0.0722
    expect(relativeLuminance([255, 0, 0])).toBeCloseTo(0.2126, 12);
    expect(relativeLuminance([0, 255, 0])).toBeCloseTo(0.7152, 12);
    // grey with Y = 0.18 ("18 % grey") has L* = 116·0.18^(1/3) − 16 = 49.496 (CIE 15 formula evaluated by hand)
    // sRGB code for Y = 0.18: 255·(1.055·0.18^(1/2.4) − 0.055) = 117.6
    const c = 255 * (1.055 * Math.pow(0.18, 1 / 2.4) - 0.055);
    expect(cieLightness([c, c, c])).toBeCloseTo(116 * Math.cbrt(0.18) - 16, 9);
    expect(116 * Math.cbrt(0.18) - 16).toBeCloseTo(49.496, 3);
  });
});

describe('viridis colour map', () => {
  it('has the published matplotlib endpoints', () => {
    // van der Walt & Smith, matplotlib viridis table (2015): first entry #440154, last #fde725
    expect(viridis(0)).toBe('#440154');
    expect(viridis(1)).toBe('#fde725');
    // mid entry 128 of the table is #21918c (matplotlib _viridis_data[128], as in d3-scale-chromatic)
    expect(viridis(128 / 255)).toBe('#21918c');
  });
  it('reproduces all 256 entries of the published table within 2/255', () => {
    // Reference: d3-scale-chromatic 3.1.1 interpolateViridis, which embeds matplotlib's 256-entry table
    let maxDiff = 0;
    for (let i = 0; i < 256; i++) {
      const ref = parseCss(interpolateViridis(i / 255));
      const got = viridisRgb(i / 255);
      for (let k = 0; k < 3; k++) maxDiff = Math.max(maxDiff, Math.abs(Math.round(got[k]) - ref[k]));
    }
    expect(maxDiff).toBeLessThanOrEqual(2);
  });
  it('has strictly increasing CIE L* (survives greyscale printing)', () => {
    // van der Walt & Smith 2015 design goal: lightness monotonic; checked with CIE 15 L* on 1001 samples
    let prev = -Infinity;
    let minStep = Infinity;
    for (let i = 0; i <= 1000; i++) {
      const L = cieLightness(viridisRgb(i / 1000));
      minStep = Math.min(minStep, L - prev);
      prev = L;
    }
    expect(minStep).toBeGreaterThan(0);
    // total lightness range: L*(#440154) ≈ 15, L*(#fde725) ≈ 91 (CIE 15 formula on the published endpoints,
    // evaluated separately with a one-line script)
    expect(cieLightness(hexToRgb('#440154'))).toBeGreaterThan(14);
    expect(cieLightness(hexToRgb('#440154'))).toBeLessThan(18);
    expect(cieLightness(hexToRgb('#fde725'))).toBeGreaterThan(88);
    expect(cieLightness(hexToRgb('#fde725'))).toBeLessThan(92);
  });
  it('builds an 8-bit lookup table consistent with viridis()', () => {
    const lut = viridisLut(256);
    // endpoints: published matplotlib values (see above)
    expect([lut[0], lut[1], lut[2]]).toEqual([0x44, 0x01, 0x54]);
    expect([lut[765], lut[766], lut[767]]).toEqual([0xfd, 0xe7, 0x25]);
  });
  it('rejects non-finite input', () => {
    expect(() => viridis(Number.NaN)).toThrow();
  });
});

describe('categorical palette and dashes', () => {
  it('is the Okabe–Ito set', () => {
    // Okabe & Ito 2008, "Color Universal Design", RGB table (from memory): orange 230,159,0; sky blue 86,180,233;
    // bluish green 0,158,115; yellow 240,228,66; blue 0,114,178; vermillion 213,94,0; reddish purple 204,121,167
    expect(hexToRgb(OKABE_ITO.orange)).toEqual([230, 159, 0]);
    expect(hexToRgb(OKABE_ITO.skyBlue)).toEqual([86, 180, 233]);
    expect(hexToRgb(OKABE_ITO.bluishGreen)).toEqual([0, 158, 115]);
    expect(hexToRgb(OKABE_ITO.yellow)).toEqual([240, 228, 66]);
    expect(hexToRgb(OKABE_ITO.blue)).toEqual([0, 114, 178]);
    expect(hexToRgb(OKABE_ITO.vermillion)).toEqual([213, 94, 0]);
    expect(hexToRgb(OKABE_ITO.reddishPurple)).toEqual([204, 121, 167]);
    expect(new Set(SERIES_COLORS).size).toBe(8); // eight distinct colours (Okabe & Ito 2008)
  });
  it('has distinct dash patterns so series differ in greyscale', () => {
    // distinctness is the requirement (common practice); the first series is solid
    expect(new Set(DASH_PATTERNS).size).toBe(DASH_PATTERNS.length);
    expect(DASH_PATTERNS[0]).toBe('');
  });
});
