/**
 * Prediction intervals by CV+ (Barber, Candès, Ramdas & Tibshirani 2021, Ann. Statist. 49(1),
 * "Predictive inference with the jackknife+", §3 K-fold CV+): each training row i, left out by
 * fold k(i), has its out-of-fold residual R_i = |y_i − μ_{−k(i)}(x_i)|; a new point x gets
 *
 *   low  = the ⌊α(n+1)⌋-th smallest of μ_{−k(i)}(x) − R_i,
 *   high = the ⌈(1−α)(n+1)⌉-th smallest of μ_{−k(i)}(x) + R_i,
 *
 * with α = 1 − level, μ_{−k} the model fitted without fold k. Group-aware: when the folds hold out
 * whole groups, each row weighs 1 / (its group's rows), so every group counts once, and n becomes
 * the number of groups G: the interval is for a row of a new group. Too few units for the level
 * (level × (G + 1) > G) leave the interval unbounded, which is returned as null.
 *
 * Example: `cvPlus(conformalTable([{residuals: [0.1, 0.4], groups: null}, …]), [2.1, 2.3], 0.9)` is `{low, high}` or null.
 */

/** The out-of-fold residuals of one fold, and the group of each (null without groups). */
export interface FoldResiduals {
  residuals: number[];
  groups: string[] | null;
}

/** Per fold, residuals sorted ascending with the cumulative weight up to each; the units they count as. */
export interface ConformalTable {
  folds: { residuals: number[]; cumulative: number[] }[];
  /** Number of units: groups when weighted by group, else rows. */
  units: number;
}

/**
 * Sorts each fold's residuals and weighs them: by 1 / rows of the group over all folds when groups
 * are given, else 1 each.
 *
 * Example: `conformalTable([{residuals: [3, 1], groups: null}]).folds[0].residuals` is `[1, 3]`.
 */
export function conformalTable(folds: FoldResiduals[]): ConformalTable {
  const grouped = folds.some((f) => f.groups !== null);
  const rowsOf = new Map<string, number>();
  if (grouped) for (const f of folds) for (const g of f.groups ?? []) rowsOf.set(g, (rowsOf.get(g) ?? 0) + 1);
  let rows = 0;
  const out = folds.map((f) => {
    const order = f.residuals.map((_, i) => i).sort((a, b) => f.residuals[a] - f.residuals[b] || a - b);
    let sum = 0;
    const cumulative = order.map((i) => (sum += grouped ? 1 / rowsOf.get(f.groups![i])! : 1));
    rows += order.length;
    return { residuals: order.map((i) => f.residuals[i]), cumulative };
  });
  return { folds: out, units: grouped ? rowsOf.size : rows };
}

/** The least number of units for which an interval at this level is bounded: level × (G + 1) ≤ G. */
export function unitsNeeded(level: number): number {
  return Math.ceil(level / (1 - level) - 1e-9);
}

/**
 * The CV+ interval at one point, given each fold model's prediction there (`mu[k]` for fold k);
 * null when the table has too few units for the level.
 */
export function cvPlus(table: ConformalTable, mu: ArrayLike<number>, level: number): { low: number; high: number } | null {
  if (table.units < unitsNeeded(level)) return null;
  // the weight that must lie at or below the bound, with room for rounding in summed 1/rows weights
  const need = level * (table.units + 1) - 1e-9 * table.units;
  const high = smallestReaching(table, mu, 1, need);
  const low = -smallestReaching(table, mu, -1, need);
  return { low, high };
}

/**
 * The smallest value v among sign·μ_k + R_kj at which the weight of all sign·μ_k' + R ≤ v reaches
 * `need`. Each fold's values ascend with j, so a binary search per fold finds its first value that
 * reaches, and the least of those is the answer. Negating the predictions gives the lower bound
 * (−(μ − R) = −μ + R exactly in floating point).
 */
function smallestReaching(table: ConformalTable, mu: ArrayLike<number>, sign: 1 | -1, need: number): number {
  const weightAtOrBelow = (v: number) => {
    let w = 0;
    table.folds.forEach((f, k) => {
      const m = sign * mu[k];
      let lo = 0;
      let hi = f.residuals.length;
      while (lo < hi) {
        const mid = (lo + hi) >> 1;
        if (m + f.residuals[mid] <= v) lo = mid + 1;
        else hi = mid;
      }
      if (lo > 0) w += f.cumulative[lo - 1];
    });
    return w;
  };
  let best = Infinity;
  table.folds.forEach((f, k) => {
    const n = f.residuals.length;
    if (n === 0) return;
    const m = sign * mu[k];
    // every value of this fold is at or above the best so far, or even its largest does not reach
    if (m + f.residuals[0] >= best || weightAtOrBelow(m + f.residuals[n - 1]) < need) return;
    let lo = 0;
    let hi = n - 1;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (weightAtOrBelow(m + f.residuals[mid]) >= need) hi = mid;
      else lo = mid + 1;
    }
    best = Math.min(best, m + f.residuals[lo]);
  });
  return best;
}
