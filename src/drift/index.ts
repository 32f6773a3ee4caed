export type { AdwinBound, AdwinOptions } from './adwin.js';
export { ADWIN_DEFAULTS, Adwin, adwinHoeffdingCut, adwinVarianceCut } from './adwin.js';
export type { CategoryShiftOptions, ChiSquareResult } from './category-shift.js';
export { CATEGORY_SHIFT_DEFAULTS, chiSquareHomogeneity } from './category-shift.js';
export type { DdmOptions } from './ddm.js';
export { DDM_DEFAULTS, Ddm } from './ddm.js';
export type { DetectorSnapshot, DriftDetector, DriftLevel, DriftShift } from './detector.js';
export type { EddmOptions } from './eddm.js';
export { EDDM_DEFAULTS, Eddm } from './eddm.js';
export type { HddmAOptions } from './hddm-a.js';
export { HDDM_A_DEFAULTS, HddmA } from './hddm-a.js';
export type {
  InputMonitor,
  InputMonitorOptions,
  InputMonitorSnapshot,
  InputMonitorSpec,
} from './input-monitor.js';
export { createInputMonitor, restoreInputMonitor } from './input-monitor.js';
export type { NumericShiftOptions } from './numeric-shift.js';
export { NUMERIC_SHIFT_DEFAULTS } from './numeric-shift.js';
export type { PageHinkleyDirection, PageHinkleyOptions } from './page-hinkley.js';
export { PAGE_HINKLEY_DEFAULTS, PageHinkley } from './page-hinkley.js';
export type { DetectorKind, DetectorSpec } from './spec.js';
export { createDetector, DETECTOR_KINDS, DETECTOR_OPTIONS, restoreDetector } from './spec.js';
