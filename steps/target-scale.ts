import type { TargetScale } from '../core/recipe-types.js';

/**
 * The inverse of each transform a target may be on, and how the report names the original scale.
 * A back-transformed prediction of a log target estimates the median (the geometric mean) of the
 * original quantity, not its mean, when the errors on the log scale are symmetric; the report says so.
 *
 * Example: `TARGET_SCALES.log10.inverse(2)` is 100.
 */
export const TARGET_SCALES: Record<TargetScale, { inverse(v: number): number; words(target: string): string }> = {
  log10: { inverse: (v) => 10 ** v, words: (t) => `10^${t}` },
  ln: { inverse: (v) => Math.exp(v), words: (t) => `e^${t}` },
  log1p: { inverse: (v) => Math.expm1(v), words: (t) => `e^${t} − 1` },
};

/**
 * How the report names the original scale of a target on `scale`.
 *
 * Example: `targetScaleWords('log10', 'log_chl')` is `10^log_chl`.
 */
export function targetScaleWords(scale: TargetScale, target: string): string {
  return TARGET_SCALES[scale].words(target);
}
