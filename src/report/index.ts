/** Public API of the report layer: print style, figure primitives (SVG strings) and the HTML report. */
export * from './style.ts';
export { lineChart, heatmap, barChart, blockAverage, DEFAULT_MAX_CELLS, MAX_MARKERS } from './figures.ts';
export type { LineSeries, LineChartOptions, HeatmapOptions, HeatmapOverlay, BarChartOptions, BarGroup, BarValue, BlockAverage } from './figures.ts';
export { renderReport, escapeHtml } from './html.ts';
export type { ReportInput, ReportFigure, SummaryRow, Provenance } from './html.ts';
export { encodePngRgba, crc32, pngDataUri } from './png.ts';
