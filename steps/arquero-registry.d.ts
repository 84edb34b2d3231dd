// arquero ships no types for its function registry; these are the parts the expression checks read.
declare module 'arquero/src/op/index.js' {
  /** Aggregate functions by name (mean, count, quantile, ...): they see every row of a table. */
  export const aggregateFunctions: Record<string, unknown>;
  /** Window functions by name (row_number, lag, rank, ...): they see the rows around each row. */
  export const windowFunctions: Record<string, unknown>;
  export function hasAggregate(name: string): boolean;
  export function hasWindow(name: string): boolean;
}
