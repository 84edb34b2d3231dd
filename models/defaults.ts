/**
 * Default settings of the regression forest, each with the reason for its value.
 *
 * Example: `defaultMtry(10) === 3`
 */

/**
 * Features tried at each split, as a fraction of the predictors (rounded down, at least 1): one third
 * for regression, as recommended by Breiman (2001) and used by R's randomForest (Liaw & Wiener 2002).
 * (ranger's default, floor(sqrt(p)), is the classification default carried over to regression.)
 */
export const DEFAULT_MTRY_FRACTION = 1 / 3;

/** Default mtry for `p` predictors: floor(p / 3), at least 1. */
export function defaultMtry(p: number): number {
  return Math.max(1, Math.floor(p / 3));
}

/**
 * Minimum rows (bootstrap draws) in a leaf: 3. randomForest's and ranger's regression default of 5 is
 * a node size (nodes of 5 or fewer samples are not split), not a leaf size, and leaves under that
 * rule average about 3 draws; a minimum leaf of 3 gives the nearest average (about 3.8 draws on
 * Friedman #1), where 5 would give leaves about twice theirs (6.3 draws) and a visibly smoother forest
 * (test R² 0.006 lower than ranger's at 20,000 rows, against 0.002 for 3). A leaf of at least three
 * targets still averages out some noise, which leaves of one or two do not.
 */
export const DEFAULT_MIN_LEAF = 3;

/**
 * Trees: 500, randomForest's and ranger's default. Test error of a forest usually flattens well
 * before 500 trees, and OOB and permutation-importance estimates keep settling a little after that.
 */
export const DEFAULT_TREES = 500;

/** Rows drawn per tree as a fraction of the training rows: 1, Breiman's bootstrap of size n. */
export const DEFAULT_SAMPLE_FRACTION = 1;

/** Draw with replacement (the bootstrap), as Breiman's bagging does. */
export const DEFAULT_REPLACE = true;

/** Quantile bins per feature: 256, the most a Uint8Array code can hold. */
export const DEFAULT_MAX_BINS = 256;

/** Worker threads: 1, i.e. grow trees in the calling thread. Results do not depend on this number. */
export const DEFAULT_WORKERS = 1;

/**
 * Trees are combined in blocks of this many: a forest's out-of-bag sums and importances are summed
 * tree by tree within a block, then block by block, so a forest grown in pieces along block edges
 * (growForestBlocks, in separate processes or on separate machines) and put together with
 * assembleForest is bit-identical to the same forest grown whole. Fifty: fine enough to spread a
 * 500-tree forest over ten tasks, coarse enough that a block's sums (a number and a count per
 * training row) stay a small share of its bytes beside its trees.
 */
export const TREE_BLOCK = 50;
