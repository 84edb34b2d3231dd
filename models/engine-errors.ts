/**
 * The forest engine's input errors and their messages, one function per failure, so tests and
 * callers can compare against the function rather than a copied string.
 *
 * Example: `throw new EngineInputError(engineMessages.nonFinite('x3', 17, NaN))`
 */

/** Thrown for any input the engine refuses; the message says what is wrong, where, and the fix. */
export class EngineInputError extends Error {
  override name = 'EngineInputError';
}

function describeValue(v: number): string {
  if (Number.isNaN(v)) return 'NaN (a missing value)';
  return v > 0 ? 'Infinity' : '-Infinity';
}

export const engineMessages = {
  nonFinite: (name: string, row: number, value: number): string =>
    `${name === 'target' ? 'the target' : `feature "${name}"`} has ${describeValue(value)} at row index ${row} ` +
    `(0-based; the first such row); the forest needs finite numbers: remove or impute these rows first`,
  noRows: (): string => 'there are no rows to fit on',
  columnCount: (columns: number, names: number): string =>
    `the matrix has ${columns} columns but ${names} names; give exactly one name per column`,
  columnLength: (name: string, length: number, rows: number): string =>
    `feature "${name}" has ${length} values but the matrix says ${rows} rows`,
  targetLength: (length: number, rows: number): string =>
    `the target has ${length} values but the predictors have ${rows} rows; they must be the same rows`,
  noPredictors: (): string => 'there are no predictors; give at least one feature column',
  tooFewRows: (rows: number, minLeaf: number): string =>
    `only ${rows} rows, but min_leaf is ${minLeaf}, so even one split needs ${2 * minLeaf} rows; ` +
    `lower min_leaf to at most ${Math.max(1, Math.floor(rows / 2))} or supply at least ${2 * minLeaf} rows`,
  mtryTooLarge: (mtry: number, p: number): string =>
    `mtry ${mtry} is larger than the number of predictors (${p}); use an integer from 1 to ${p}, ` +
    `or a fraction between 0 and 1 (exclusive) of the predictors`,
  mtryInvalid: (mtry: number, p: number): string =>
    `mtry ${mtry} is not valid; use an integer from 1 to ${p}, or a fraction between 0 and 1 (exclusive) of the predictors`,
  notInteger: (what: string, value: unknown, min: number, max?: number): string =>
    `${what} must be an integer ${max === undefined ? `of at least ${min}` : `from ${min} to ${max}`}, got ${String(value)}`,
  maxDepth: (value: unknown): string =>
    `max_depth must be null (unlimited) or an integer of at least 1, got ${String(value)}`,
  sampleFraction: (value: unknown): string =>
    `sample_fraction must be a number greater than 0 and at most 1, got ${String(value)}`,
  replace: (value: unknown): string => `replace must be true or false, got ${String(value)}`,
  fitted: (value: unknown): string => `fitted must be true or false, got ${String(value)}`,
  outOfBag: (value: unknown): string => `outOfBag must be true or false, got ${String(value)}`,
  seed: (value: unknown): string => `seed must be a string, got ${typeof value}`,
  namesDiffer: (expected: string[], got: string[]): string =>
    `the prediction matrix has columns [${got.join(', ')}] but the forest was fitted on [${expected.join(', ')}]; ` +
    `give the same columns in the same order`,
  notAForest: (why: string): string => `these bytes are not a dendrolog forest: ${why}`,
  notBlocks: (why: string): string => `these bytes are not blocks of dendrolog forest trees: ${why}`,
  blockRange: (first: number, end: number, blocks: number): string =>
    `blocks ${first} to ${end - 1} are not a range of this forest's ${blocks} blocks of trees; ask for 0 <= first < end <= ${blocks}`,
  blockOrder: (got: number, expected: number): string =>
    `block ${got} of trees came where block ${expected} belongs; give every block once, in order`,
  blockShape: (index: number, trees: number, expectedTrees: number, rows: number, expectedRows: number): string =>
    `block ${index} holds ${trees} trees over ${rows} rows, but this forest's block ${index} has ${expectedTrees} trees over ${expectedRows} rows; ` +
    `the blocks must be grown with the same data and settings`,
  blocksMissing: (trees: number, expected: number): string =>
    `the blocks given hold ${trees} of the forest's ${expected} trees; give every block`,
};
