import { formatMetric, formatSetting } from './format.js';
import { mix, readableInk } from './contrast.js';
import type { Results } from './results.js';

/** The heat map's colours: the worst score of the scale in the light one, the best in the dark. */
export const HEAT_LIGHT = '#eef5f1';
export const HEAT_DARK = '#1f5c4c';

/** The colour scale is at least this many standard errors of the chosen cell wide. */
const MIN_SPAN_SE = 4;

/** One square of the heat map, with everything the spec draws from it. */
export interface HeatCell {
  a: string;
  b: string;
  score: number;
  label: string;
  /** The square's colour, as the scale gives it, and the label colour that reads on it. */
  fill: string;
  ink: string;
  chosen: boolean;
  /** Within one standard error of the chosen cell's score. */
  near: boolean;
}

export interface Heatmap {
  cells: HeatCell[];
  /** The colour scale's ends: `worst` is drawn in HEAT_LIGHT, `best` in HEAT_DARK. */
  worst: number;
  best: number;
  /** One standard error of the chosen cell (sd of its per-fold scores ÷ √k); null when unknown. */
  se: number | null;
  /** The grid's other varying hyperparameters, over which each square takes its best cell. */
  rest: string[];
}

/**
 * A model's grid over its first two varying hyperparameters as heat-map squares: each square the
 * best cell over the others (by the pooled cross-validated score), coloured on a scale from the
 * worst to the best square but at least four standard errors of the chosen cell wide, so scores
 * within fold-to-fold noise of each other look alike. Squares within one standard error of the
 * chosen cell are marked (the one-standard-error rule of Breiman, Friedman, Olshen and Stone,
 * Classification and Regression Trees, 1984; from memory). Labels are black or white by the
 * square's luminance. Null when fewer than two hyperparameters vary or no cell has a score.
 *
 * Example: `gridHeatmap(model, ['max_depth', 'min_leaf'], 'rmse', 5)?.cells.length`
 */
export function gridHeatmap(m: Results['models'][number], varying: string[], by: 'rmse' | 'mae' | 'r2', k: number): Heatmap | null {
  if (varying.length < 2) return null;
  const [a, b] = varying;
  const higherBetter = by === 'r2';
  const better = (x: number, y: number) => (higherBetter ? x > y : x < y);
  const squares = new Map<string, { a: string; b: string; score: number; index: number }>();
  m.cells.forEach((c, index) => {
    const v = c.pooled[by].value;
    if (v === null || !Number.isFinite(v)) return;
    const key = JSON.stringify([formatSetting(c.cell[a]), formatSetting(c.cell[b])]);
    const prev = squares.get(key);
    if (!prev || better(v, prev.score)) squares.set(key, { a: formatSetting(c.cell[a]), b: formatSetting(c.cell[b]), score: v, index });
  });
  if (squares.size === 0) return null;
  const chosen = m.cells[m.chosen];
  const chosenScore = chosen.pooled[by].value;
  const sd = chosen.perFold[by].sd;
  const se = sd === null || !Number.isFinite(sd) || k < 2 ? null : sd / Math.sqrt(k);
  const scores = [...squares.values()].map((s) => s.score);
  let best = higherBetter ? Math.max(...scores) : Math.min(...scores);
  let worst = higherBetter ? Math.min(...scores) : Math.max(...scores);
  if (se !== null && Math.abs(best - worst) < MIN_SPAN_SE * se) worst = best + (higherBetter ? -1 : 1) * MIN_SPAN_SE * se;
  // one square only (or all equal, without a standard error): a scale of its own value, drawn dark
  if (best === worst) best = worst + (higherBetter ? 1 : -1) * Math.max(Math.abs(worst) * 1e-6, 1e-12);
  const cells = [...squares.values()].map((s): HeatCell => {
    const fill = mix(HEAT_LIGHT, HEAT_DARK, (s.score - worst) / (best - worst));
    return {
      a: s.a,
      b: s.b,
      score: s.score,
      label: formatMetric(by, s.score),
      fill,
      ink: readableInk(fill),
      chosen: s.index === m.chosen,
      near: se !== null && chosenScore !== null && s.index !== m.chosen && Math.abs(s.score - chosenScore) <= se,
    };
  });
  return { cells, worst, best, se, rest: varying.slice(2) };
}
