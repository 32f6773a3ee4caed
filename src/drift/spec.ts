import { type OptionTable, optionsOf, ShoalError } from '../core/index.js';
import { ADWIN_OPTIONS, Adwin, type AdwinOptions } from './adwin.js';
import { DDM_OPTIONS, Ddm, type DdmOptions } from './ddm.js';
import type { DetectorSnapshot, DriftDetector } from './detector.js';
import { EDDM_OPTIONS, Eddm, type EddmOptions } from './eddm.js';
import { HDDM_A_OPTIONS, HddmA, type HddmAOptions } from './hddm-a.js';
import { PAGE_HINKLEY_OPTIONS, PageHinkley, type PageHinkleyOptions } from './page-hinkley.js';

/** Every detector kind, as written in configuration. */
export const DETECTOR_KINDS = ['adwin', 'ddm', 'eddm', 'page-hinkley', 'hddm-a'] as const;

export type DetectorKind = (typeof DETECTOR_KINDS)[number];

/** Each detector's option table, by kind (what the configuration check reads). */
export const DETECTOR_OPTIONS: Readonly<Record<DetectorKind, OptionTable>> = {
  adwin: ADWIN_OPTIONS,
  ddm: DDM_OPTIONS,
  eddm: EDDM_OPTIONS,
  'page-hinkley': PAGE_HINKLEY_OPTIONS,
  'hddm-a': HDDM_A_OPTIONS,
};

/**
 * A detector as configuration describes it: its kind and any options (missing ones take the defaults
 * documented beside each detector). Ensembles build one detector per member from one spec.
 */
export type DetectorSpec =
  | ({ readonly kind: 'adwin' } & Partial<AdwinOptions>)
  | ({ readonly kind: 'ddm' } & Partial<DdmOptions>)
  | ({ readonly kind: 'eddm' } & Partial<EddmOptions>)
  | ({ readonly kind: 'page-hinkley' } & Partial<PageHinkleyOptions>)
  | ({ readonly kind: 'hddm-a' } & Partial<HddmAOptions>);

/**
 * Build a detector from its spec; parameters are validated (a bad one throws a `ShoalError` with code
 * `invalid-parameter` naming it).
 *
 * @example
 * const monitor = createDetector({ kind: 'adwin', delta: 0.002 });
 */
export function createDetector(spec: DetectorSpec): DriftDetector {
  switch (spec?.kind) {
    case 'adwin':
      return new Adwin(optionsOf(spec));
    case 'ddm':
      return new Ddm(optionsOf(spec));
    case 'eddm':
      return new Eddm(optionsOf(spec));
    case 'page-hinkley':
      return new PageHinkley(optionsOf(spec));
    case 'hddm-a':
      return new HddmA(optionsOf(spec));
    default:
      throw new ShoalError(
        'invalid-parameter',
        `detector: kind must be one of ${DETECTOR_KINDS.join(', ')}, got ${String((spec as { kind?: unknown })?.kind)}`,
      );
  }
}

const RESTORERS: Readonly<Record<DetectorKind, (snapshot: DetectorSnapshot) => DriftDetector>> = {
  adwin: Adwin.restore,
  ddm: Ddm.restore,
  eddm: Eddm.restore,
  'page-hinkley': PageHinkley.restore,
  'hddm-a': HddmA.restore,
};

/**
 * Rebuild a detector from a snapshot taken with `snapshot()`; it then behaves bit-identically to the
 * detector the snapshot was taken from.
 *
 * @example
 * const copy = restoreDetector(JSON.parse(JSON.stringify(detector.snapshot())));
 */
export function restoreDetector(snapshot: DetectorSnapshot): DriftDetector {
  const kind = snapshot?.kind;
  if (!(DETECTOR_KINDS as readonly string[]).includes(kind)) {
    throw new ShoalError('invalid-snapshot', `detector snapshot: unknown kind ${String(kind)}`);
  }
  return RESTORERS[kind as DetectorKind](snapshot);
}
