/**
 * Public API of the report layer: print style, figure primitives (SVG strings) and the HTML report.
 *
 * Figure conventions: viewBox in px at 96 dpi, width/height in mm (see style.ts); text is <text>; every plotted
 * element carries data-* attributes describing what it shows (series name, point counts, data extremes,
 * value), so that tests and tools can check a figure without rendering it. Non-finite data are never written:
 * paths are split into subpaths at unplottable points and the counts are reported in data attributes.
 */
export * from './style.ts';
export { lineChart, MAX_MARKERS } from './line-chart.ts';
export type { LineSeries, LineChartOptions } from './line-chart.ts';
export { heatmap, blockAverage, DEFAULT_MAX_CELLS, MAX_TOTAL_CELLS } from './heatmap.ts';
export type { HeatmapOptions, HeatmapOverlay, BlockAverage } from './heatmap.ts';
export { barChart } from './bar-chart.ts';
export type { BarChartOptions, BarGroup, BarValue } from './bar-chart.ts';
export { renderReport, escapeHtml } from './html.ts';
export type { ReportInput, ReportFigure, SummaryRow, Provenance } from './html.ts';
export { encodePngRgba, crc32, pngDataUri } from './png.ts';
