import { describe, expect, it } from 'vitest';
import { barChart, heatmap, lineChart } from '../src/report/index.ts';
import { escapeHtml, renderReport } from '../src/report/html.ts';
import { UserError } from '../src/core/errors.ts';
import { parseHtml } from './report-helpers.ts';

const x = Float64Array.from({ length: 50 }, (_, i) => i / 49);
const figs = [
  { id: 'fig-line', caption: 'Fidelity F < 1 − 10⁻⁶ & more', svg: lineChart({ xLabel: 'time t (ms)', yLabel: 'fidelity F', series: [{ name: 'a', x, y: x }], width: 'single' }) },
  {
    id: 'fig-heat',
    caption: 'density',
    svg: heatmap({ xLabel: 'position x (µm)', yLabel: 'time t (ms)', zLabel: 'density n (µm⁻¹)', x, y: x, z: Array.from(x, (v) => x.map((w) => v * w)), width: 'single' }),
  },
  { id: 'fig_bar', caption: 'excess energy', svg: barChart({ xLabel: 'ramp', yLabel: 'ΔE (E₀)', groups: [{ label: 'g', values: [{ name: 'v', value: 1 }] }] }) },
];
const configText = 'potential:\n  kind: "sech2" # <script>alert(1)</script>\n  depth: 6 & more\n';
const input = {
  title: 'Run <A> & "B"',
  summaryRows: [
    { key: 'final fidelity', value: 0.9999991, unit: '' },
    { key: 'excess energy <ΔE>', value: 1.25e-7, unit: 'E₀' },
    { key: 'species', value: '⁸⁷Rb' },
  ],
  figures: figs,
  configText,
  provenance: { toolVersion: '0.1.0', configHash: 'sha256:abc123', date: '2026-12-01T12:00:00Z', runSeconds: 12.345 },
  warnings: ['grid too coarse: dx > λ/4 <check>'],
};
const html = renderReport(input);
const doc = parseHtml(html);

describe('renderReport', () => {
  it('contains every figure, inline, with its caption', () => {
    // one <figure> with one inline <svg> per input figure (input count 3)
    expect(doc.querySelectorAll('figure').length).toBe(3);
    for (const f of figs) {
      const el = doc.getElementById(f.id);
      expect(el).not.toBeNull();
      expect(el!.querySelectorAll('svg').length).toBe(1);
      expect(el!.querySelector('figcaption')!.textContent).toContain(f.caption); // caption round-trips verbatim
    }
    // the heatmap's PNG survives inlining unchanged
    const png = /data:image\/png;base64,[A-Za-z0-9+/=]+/.exec(figs[1].svg)![0];
    expect(html).toContain(png);
  });

  it('escapes < in the config text and every other text field', () => {
    // HTML Living Standard §13.1.2.6: '<' in text must be written as &lt; — the raw tag must not appear
    expect(html).not.toContain('<script>alert(1)</script>');
    expect(html).toContain('&lt;script&gt;alert(1)&lt;/script&gt;');
    // parsing the page gives back the exact config text (round trip through an HTML parser, jsdom)
    expect(doc.querySelector('pre.config')!.textContent).toBe(configText);
    // every other text field round-trips to the input string (reference: the input itself)
    expect(doc.querySelector('h1')!.textContent).toBe('Run <A> & "B"');
    expect(doc.querySelector('title')!.textContent).toBe('Run <A> & "B"');
    expect(doc.querySelector('ul.warnings li')!.textContent).toBe('grid too coarse: dx > λ/4 <check>');
    const keys = Array.from(doc.querySelectorAll('table.summary th[scope="row"]')).map((t) => t.textContent);
    expect(keys).toEqual(['final fidelity', 'excess energy <ΔE>', 'species']);
    const values = Array.from(doc.querySelectorAll('table.summary td.value')).map((t) => t.textContent);
    expect(values).toEqual(['0.9999991', '1.25e-7', '⁸⁷Rb']); // input values at 7 significant digits
    // HTML Living Standard escaping of the five special characters
    expect(escapeHtml(`<>&"'`)).toBe('&lt;&gt;&amp;&quot;&#39;');
  });

  it('is self-contained: no scripts, no external resources', () => {
    // requirement of the report format: no scripts, no external loads (count 0 of each)
    expect(doc.querySelectorAll('script').length).toBe(0);
    expect(doc.querySelectorAll('link, iframe, object, embed').length).toBe(0);
    for (const el of Array.from(doc.querySelectorAll('*'))) {
      for (const a of Array.from(el.attributes)) {
        if (/^(src|href|xlink:href)$/.test(a.name)) expect(a.value.startsWith('data:') || a.value.startsWith('#')).toBe(true);
      }
    }
    expect(html).not.toMatch(/https?:\/\/(?!www\.w3\.org\/)/); // only namespace URIs
    expect(doc.querySelector('style')).not.toBeNull(); // CSS is inline
  });

  it('shows provenance', () => {
    const dd = Array.from(doc.querySelectorAll('dl.provenance dd')).map((d) => d.textContent);
    expect(dd).toEqual(['0.1.0', 'sha256:abc123', '2026-12-01T12:00:00Z', '12.3 s']); // the input values
  });

  it('rejects active SVG content and bad ids', () => {
    const bad = { ...input, figures: [{ id: 'x', caption: '', svg: '<svg><script>1</script></svg>' }] };
    // house rules: user mistakes raise UserError
    expect(() => renderReport(bad)).toThrow(UserError);
    const badId = { ...input, figures: [{ id: '1 bad"', caption: '', svg: figs[0].svg }] };
    expect(() => renderReport(badId)).toThrow(UserError);
    const dup = { ...input, figures: [figs[0], figs[0]] };
    expect(() => renderReport(dup)).toThrow(/twice/);
  });

  it('keeps clip-path ids unique across figures on one page', () => {
    // ids must be unique in an HTML document (HTML Living Standard §3.2.6.1)
    const twice = renderReport({ ...input, figures: [figs[0], { ...figs[0], id: 'again' }] });
    for (const d of [doc, parseHtml(twice)]) {
      const ids = Array.from(d.querySelectorAll('[id]')).map((e) => e.id);
      expect(ids.length).toBeGreaterThan(3);
      expect(new Set(ids).size).toBe(ids.length);
      // every url(#id) reference points at an element of the page
      for (const el of Array.from(d.querySelectorAll('[clip-path]'))) {
        const ref = /url\(#([^)]+)\)/.exec(el.getAttribute('clip-path')!)![1];
        expect(d.getElementById(ref)).not.toBeNull();
      }
    }
  });
});
