import { integerAtLeast, ShoalError } from '../core/index.js';

/** The two parameters of the prequential views (Gama, Sebastião & Rodrigues, Machine Learning 90, 2013). */
export interface ViewOptions {
  /** Records in the sliding window, w ≥ 1. */
  readonly window?: number;
  /** Fading factor α ∈ (0, 1]; 1 weighs every record alike (the cumulative view). */
  readonly fading?: number;
}

/**
 * Defaults, common practice: a window of 1,000 records and α = 0.999, whose effective memory
 * Σ αᵏ = 1/(1 − α) is the same 1,000 records, so the two recent views tell a similar story.
 */
export const VIEW_DEFAULTS = { window: 1000, fading: 0.999 } as const;

/** Fill in defaults and check both parameters; the error names the owner and the parameter. */
export function resolveViewOptions(
  owner: string,
  options: ViewOptions,
): { readonly window: number; readonly fading: number } {
  const window = integerAtLeast(owner, 'window', options.window ?? VIEW_DEFAULTS.window);
  const fading = options.fading ?? VIEW_DEFAULTS.fading;
  if (!(fading > 0 && fading <= 1)) {
    throw new ShoalError('invalid-parameter', `${owner}: fading must be in (0, 1], got ${String(fading)}`);
  }
  return { window, fading };
}
