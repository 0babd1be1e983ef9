/**
 * The analysis screens' charts, one concern per file: what they share (chart-common.ts), the line
 * charts of measured attributes (measured-chart.ts), the heat grids of graded and compared ones
 * (heat-grid.ts) and the color difference (delta-e-chart.ts); the variant styles, axis ranges and
 * limit wording shared with the PDF report (@shared/chart-style), the fitted lines (@shared/fit-curves).
 * Pure: no DOM, no I/O; the components only hand the options to ECharts.
 */
export * from './chart-common';
export * from './measured-chart';
export * from './heat-grid';
export * from './delta-e-chart';
export { fitCurves, fitEnd } from '@shared/fit-curves';
export { limitLines, limitShown, niceRange, stepDecimals, tickText, variantStyle, VARIANT_COLORS, VARIANT_MARKERS, type VariantStyle } from '@shared/chart-style';
