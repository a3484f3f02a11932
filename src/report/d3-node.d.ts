// Minimal typings for the parts of d3-node 4.0.2 (and the d3 7 module it carries) that src/report uses.
// d3-node ships no typings and @types/d3 is not installed. Note: d3-node is ESM with a *named* export only
// (`export function D3Node`), so `import D3Node from 'd3-node'` yields undefined; use `import { D3Node }`.

declare module 'd3-node' {
  /** A d3 selection reduced to the calls used here (append, attr, text, node). */
  export interface D3Selection {
    append(name: string): D3Selection;
    attr(name: string, value: string | number): D3Selection;
    text(value: string): D3Selection;
    node(): Element | null;
  }

  /** d3-scale continuous scale (scaleLinear / scaleLog). */
  export interface ContinuousScale {
    (value: number): number;
    domain(): number[];
    domain(d: [number, number]): ContinuousScale;
    range(): number[];
    range(r: [number, number]): ContinuousScale;
    nice(count?: number): ContinuousScale;
    ticks(count?: number): number[];
    tickFormat(count?: number, specifier?: string): (value: number) => string;
    invert(pixel: number): number;
  }

  export interface D3Module {
    scaleLinear(): ContinuousScale;
    scaleLog(): ContinuousScale;
    /** d3-scale's symmetric log: sign(v)·log1p(|v|/c) with linear threshold c = constant(c) */
    scaleSymlog(): ContinuousScale & { constant(c: number): ContinuousScale };
    format(specifier: string): (value: number) => string;
    select(node: Element): D3Selection;
  }

  export interface D3NodeOptions {
    selector?: string;
    container?: string;
    styles?: string;
  }

  export class D3Node {
    constructor(options?: D3NodeOptions);
    readonly d3: D3Module;
    readonly document: Document;
    readonly window: Window & typeof globalThis;
    readonly d3Element: D3Selection;
    createSVG(width?: number | string, height?: number | string, attrs?: Record<string, string | number>): D3Selection;
    svgString(): string;
  }
}

// d3-scale-chromatic 3.1.1 (a dependency of d3, hence of d3-node) is used by the tests as the reference copy of
// matplotlib's viridis table.
declare module 'd3-scale-chromatic' {
  export function interpolateViridis(t: number): string;
}
