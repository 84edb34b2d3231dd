import { deserializeLinear, fitLinear, predictLinear, serializeLinear } from '../models/linear.js';
import { deserializeMean, fitMean, predictMean, serializeMean } from '../models/mean.js';
import type { ModelKind } from '../core/recipe-types.js';
import type { Matrix } from './design.js';

/** One grid cell: a value for each hyperparameter of the model kind. */
export type Cell = Record<string, number | boolean | null>;

export interface FittedModel {
  bytes: Uint8Array;
  /** Hyperparameters as the engine used them, defaults resolved (for example mtry as a count). */
  used: Record<string, unknown>;
  /** Out-of-bag R² where the model has one (training-data based, never a headline). */
  oobR2?: number | null;
}

/** How the runner fits and applies one model kind. Adding a kind is one entry here. */
export interface ModelKindAdapter {
  /**
   * The yardstick the kind is, if any: skill is measured against every baseline in the recipe, and
   * a chosen model that does not beat the `linear` one is warned about. null for the kinds judged.
   */
  baseline: 'constant' | 'linear' | null;
  /** Whether permutation importance and partial dependence can say anything about the kind (a constant cannot). */
  explained: boolean;
  fit(x: Matrix, y: Float64Array, cell: Cell, opts: { seed: string; workers: number }): Promise<FittedModel>;
  predict(bytes: Uint8Array, x: Matrix): Promise<Float64Array>;
}

// The forest engine loads on first use, so runs without tree models never start its worker pool.
const forestEngine = () => import('../models/forest.js');

export const modelKinds: Record<ModelKind, ModelKindAdapter> = {
  random_forest: {
    baseline: null,
    explained: true,
    async fit(x, y, cell, opts) {
      const { fitForest, oob, serializeForest } = await forestEngine();
      const forest = await fitForest(x, y, {
        trees: cell.trees as number,
        maxDepth: cell.max_depth as number | null,
        minLeaf: cell.min_leaf as number,
        // the engine alone resolves null and fractions, so the count recorded is the count used
        mtry: cell.mtry as number | null,
        sampleFraction: cell.sample_fraction as number,
        replace: cell.replace as boolean,
        seed: opts.seed,
        workers: opts.workers,
      });
      return { bytes: serializeForest(forest), used: { ...cell, mtry: forest.options.mtry }, oobR2: oob(forest).r2 };
    },
    async predict(bytes, x) {
      const { deserializeForest, predictForest } = await forestEngine();
      return predictForest(deserializeForest(bytes), x);
    },
  },
  decision_tree: {
    baseline: null,
    explained: true,
    async fit(x, y, cell, opts) {
      const { fitDecisionTree, serializeForest } = await forestEngine();
      const tree = await fitDecisionTree(x, y, {
        maxDepth: cell.max_depth as number | null,
        minLeaf: cell.min_leaf as number,
        seed: opts.seed,
      });
      return { bytes: serializeForest(tree), used: { ...cell } };
    },
    async predict(bytes, x) {
      const { deserializeForest, predictForest } = await forestEngine();
      return predictForest(deserializeForest(bytes), x);
    },
  },
  linear: {
    baseline: 'linear',
    explained: true,
    async fit(x, y) {
      const kept = linearColumns(x);
      // an exactly redundant predictor changes no fitted value, so the baseline leaves it out and says so
      const model = fitLinear(selectColumns(x, kept), y, { dropCollinear: true });
      const dropped = x.names.filter((n) => !model.names.includes(n));
      const collinear = (model.collinear ?? []).map((c) => (c.with.length ? `${c.name} (a linear combination of ${c.with.join(', ')})` : `${c.name} (nearly constant)`));
      return { bytes: serializeLinear(model), used: { ...(dropped.length ? { dropped } : {}), ...(collinear.length ? { collinear } : {}) } };
    },
    async predict(bytes, x) {
      const model = deserializeLinear(bytes);
      return predictLinear(model, selectColumns(x, model.names));
    },
  },
  mean: {
    baseline: 'constant',
    explained: false,
    async fit(_x, y) {
      return { bytes: serializeMean(fitMean(y)), used: {} };
    },
    predict: async (bytes, x) => predictMean(deserializeMean(bytes), x.rows),
  },
};

/**
 * Every cell of a grid, the Cartesian product of its value lists, in a stable order.
 *
 * Example: `gridCells({a: [1, 2], b: [null]})` is `[{a: 1, b: null}, {a: 2, b: null}]`.
 */
export function gridCells(grid: Record<string, (number | boolean | null)[]>): Cell[] {
  let cells: Cell[] = [{}];
  for (const [param, values] of Object.entries(grid)) {
    cells = cells.flatMap((c) => values.map((v) => ({ ...c, [param]: v })));
  }
  return cells;
}

/**
 * A short readable label for a cell, such as "max_depth=12 mtry=0.33". With `only`, just those
 * hyperparameters are named (the ones the grid varies).
 */
export function cellLabel(cell: Cell, only?: string[]): string {
  const parts = Object.entries(cell)
    .filter(([k]) => !only || only.includes(k))
    .map(([k, v]) => `${k}=${v === null ? 'none' : v}`);
  return parts.length ? parts.join(' ') : Object.keys(cell).length ? 'one setting' : 'no hyperparameters';
}

/** The hyperparameters a grid gives more than one value. */
export function varyingParams(grid: Record<string, unknown[]>): string[] {
  return Object.entries(grid)
    .filter(([, v]) => v.length > 1)
    .map(([k]) => k);
}

/**
 * Columns a least-squares fit can use: constant columns (no information beside the intercept) are
 * left out, and so is the first indicator of each one-hot block, whose indicators sum to the intercept.
 */
export function linearColumns(x: Matrix): string[] {
  const blocks = new Set<string>();
  const kept: string[] = [];
  x.names.forEach((name, j) => {
    const col = x.columns[j];
    let constant = true;
    for (let i = 1; i < x.rows && constant; i++) if (col[i] !== col[0]) constant = false;
    if (constant) return;
    const eq = name.indexOf('=');
    if (eq > 0) {
      const block = name.slice(0, eq);
      if (!blocks.has(block)) {
        blocks.add(block);
        return;
      }
    }
    kept.push(name);
  });
  return kept;
}

/** The named columns of a matrix, in the order given. */
export function selectColumns(x: Matrix, names: string[]): Matrix {
  return { columns: names.map((n) => x.columns[x.names.indexOf(n)]), names: [...names], rows: x.rows };
}
