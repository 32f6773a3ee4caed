/** A linear map from a data interval onto a pixel interval. */
export interface LinearScale {
  readonly domain: readonly [number, number];
  readonly range: readonly [number, number];
  (value: number): number;
}

/**
 * The linear map taking `domain` onto `range` (a degenerate domain maps everything to the range's start).
 *
 * @example
 * const x = linearScale([0, 9000], [88, 1036]);
 * x(4500); // 562
 */
export function linearScale(
  domain: readonly [number, number],
  range: readonly [number, number],
): LinearScale {
  const [d0, d1] = domain;
  const [r0, r1] = range;
  const k = d1 === d0 ? 0 : (r1 - r0) / (d1 - d0);
  const scale = (value: number): number => r0 + (value - d0) * k;
  return Object.assign(scale, { domain, range });
}

/**
 * Round tick values for an axis over [lo, hi]: multiples of a step of 1, 2 or 5 × 10ᵏ, at most
 * `most` of them, all inside the interval (the "nice numbers" of Heckbert, "Nice numbers for graph
 * labels", Graphics Gems, 1990, from memory).
 *
 * @example
 * niceTicks(0, 9000, 6); // [0, 2000, 4000, 6000, 8000]
 */
export function niceTicks(lo: number, hi: number, most: number): number[] {
  if (!(hi > lo) || most < 1) return [lo];
  const raw = (hi - lo) / most;
  const power = 10 ** Math.floor(Math.log10(raw));
  const step = ([1, 2, 5, 10].find((m) => m * power >= raw) ?? 10) * power;
  // Decimals of the step, so that 0.1 + 0.2 prints as 0.3.
  const decimals = Math.max(0, -Math.floor(Math.log10(step)) + 1);
  const ticks: number[] = [];
  for (let i = Math.ceil(lo / step); i * step <= hi + step * 1e-9; i++) {
    ticks.push(Number((i * step).toFixed(decimals)));
  }
  return ticks;
}
