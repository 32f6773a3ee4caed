export type { ClassScore } from './confusion.js';
export { classScores } from './confusion.js';
export { escapeHtml } from './escape.js';
export type { ReportOptions } from './render.js';
export { CAUTION, renderReport } from './render.js';
export type { SeriesPoint } from './thin.js';
export { MOST_POINTS, thinSeries } from './thin.js';
