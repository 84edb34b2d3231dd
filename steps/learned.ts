import { dict } from '../core/dict.js';
import type { LearnedFeature } from './design.js';
import { impute } from './impute.js';
import { oneHot } from './one-hot.js';
import { standardize } from './standardize.js';

/**
 * Feature kinds whose values are learned from training rows (inside each fold and in the final
 * fit) rather than computed row by row: they are not steps of the plan but part of every fit.
 * Adding one: its file, one line here, and how its values enter the matrix in design.ts.
 */
export const learnedFeatures: Record<string, LearnedFeature<never>> = dict(
  [impute, oneHot, standardize].map((f) => [f.kind, f as LearnedFeature<never>]),
);
