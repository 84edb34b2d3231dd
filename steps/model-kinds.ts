import { deserializeLinear, fitLinear, LinearModelError, predictLinear, serializeLinear } from '../models/linear.js';
import { EngineInputError } from '../models/engine-errors.js';
import { DendrologError, messages } from '../core/messages.js';
import { deserializeMean, fitMean, predictMean, serializeMean } from '../models/mean.js';
import { DEFAULT_MIN_LEAF, DEFAULT_REPLACE, DEFAULT_SAMPLE_FRACTION, DEFAULT_TREES, TREE_BLOCK } from '../models/defaults.js';
import type { Forest, ForestOptions } from '../models/forest.js';
import { dictOf } from '../core/dict.js';
import { BytesWriter, bytesOf, type Bytes } from '../core/codec.js';
import type { Matrix } from './design.js';

/** One grid cell: a value for each hyperparameter of the model kind. */
export type Cell = Record<string, number | boolean | null>;

export interface FittedModel {
  /** A forest's are a writer (see BytesWriter): written straight into the fit's entry, never held twice. */
  bytes: Bytes;
  /** Hyperparameters as the engine used them, defaults resolved (for example mtry as a count). */
  used: Record<string, unknown>;
  /** Out-of-bag R² where the model has one (training-data based, never a headline). */
  oobR2?: number | null;
  /**
   * The model's predictions of its training rows where the fit has them at hand (a forest gathers
   * them as its trees grow); equal, bit for bit, to predicting those rows with the model.
   */
  trainingPredictions?: Float64Array;
}

/** A value a grid may hold for one hyperparameter. */
export type GridValue = number | boolean | null;

/** One hyperparameter of a kind: the value used when the recipe gives none, and the schema of what a recipe may give. */
export interface GridParam {
  default: GridValue;
  /**
   * JSON schema of the recipe's value: one value or a list; `#/definitions/...` refers to the recipe schema's.
   * Its `description` (meaning, range, default) is what editors show for the key.
   */
  schema: Record<string, unknown>;
  /**
   * Values no grid can go beyond (one row per leaf, the whole sample): a choice there is not a sign
   * that the grid should be widened, so the grid-edge warning leaves it alone.
   */
  limits?: { low?: number; high?: number };
}

/** How the runner fits and applies one model kind. Adding a kind is one entry here. */
export interface ModelKindAdapter {
  /** Its hyperparameters, in the order cells are labelled; none for kinds without any. */
  grid: Record<string, GridParam>;
  /**
   * The yardstick the kind is, if any: skill is measured against every baseline in the recipe, and
   * a chosen model that does not beat the `linear` one is warned about. null for the kinds judged.
   */
  baseline: 'constant' | 'linear' | null;
  /** Whether permutation importance and partial dependence can say anything about the kind (a constant cannot). */
  explained: boolean;
  fit(x: Matrix, y: Float64Array, cell: Cell, opts: FitOptions): Promise<FittedModel>;
  /**
   * For kinds whose bytes are large (a forest): the fit kept in memory, predicting without being
   * read back from bytes, and its bytes as a writer, made only if an output keeps them (an interval
   * fold's do, a cross-validation fold's do not). Its predictions equal those of the model read
   * from fit()'s bytes; what only a final model reports may be left out (a forest's out-of-bag
   * predictions: see ForestOptions.outOfBag).
   */
  fitLoaded?(x: Matrix, y: Float64Array, cell: Cell, opts: FitOptions): Promise<{ used: Record<string, unknown>; model: LoadedModel; bytes: Bytes }>;
  /** The model from its bytes, read once, to predict as often as needed (permutation importance predicts many times). */
  load(bytes: Uint8Array): Promise<LoadedModel>;
  /** For kinds whose fit divides into blocks grown apart (a forest's trees); see ModelBlocks. */
  blocks?: ModelBlocks;
}

/** A fitted model read from its bytes. */
export interface LoadedModel {
  predict(x: Matrix): Float64Array;
  /** For kinds that can: the same predictions, with the rows spread over up to `threads` threads. */
  predictOnThreads?(x: Matrix, threads: number): Promise<Float64Array>;
  /**
   * For each job, predictions with the job's matrix columns read through each of its orders (row i
   * takes row order[i]'s values), one array per order; equal to predicting each permuted matrix,
   * on up to `threads` threads. Kinds without their own way get the plain one (permutedByCopy).
   */
  permuted?(x: Matrix, jobs: { columns: number[] }[], orders: ArrayLike<number>[][], threads: number): Promise<Float64Array[][]>;
  /**
   * For kinds that can: the average prediction over the rows the model was fitted on, with the
   * given matrix columns set to each point's values (points[g][m] is point g's value of columns[m]),
   * found without predicting rows. Kinds without it get the average over sampled training rows.
   */
  partialDependence?(columns: number[], points: ArrayLike<number>[]): Float64Array;
}

/** Where the engine's randomness starts, and the threads a fit may use. */
export interface FitOptions {
  seed: string;
  workers: number;
}

/**
 * A fit that divides into blocks grown apart (in separate cluster tasks) and assembled into exactly
 * the model `fit` gives, bit for bit.
 */
export interface ModelBlocks {
  /** The blocks a cell's fit on `rows` training rows has, what they hold, and the work of one. */
  divide(cell: Cell, rows: number): { count: number; unit: string; perBlock: number; total: number; work: number };
  /** Blocks first..end-1, as bytes for `assemble`. */
  grow(x: Matrix, y: Float64Array, cell: Cell, opts: FitOptions, first: number, end: number): Promise<Uint8Array>;
  /** The fitted model from the bytes of every range of blocks, in order. */
  assemble(x: Matrix, y: Float64Array, cell: Cell, opts: FitOptions, parts: Uint8Array[]): Promise<FittedModel>;
}

// The forest engine loads on first use, so runs without tree models never start its worker pool.
const forestEngine = () => import('../models/forest.js');

/** A boolean hyperparameter written as one value or a list, with what it means for a recipe's reader. */
const booleanGrid = (description: string) => ({ anyOf: [{ type: 'boolean' }, { type: 'array', minItems: 1, items: { type: 'boolean' } }], description });
/** A hyperparameter whose values the recipe schema's definition `name` describes, with what it means for a recipe's reader. */
const ref = (name: string, description: string) => ({ $ref: `#/definitions/${name}`, description });

// What editors show for each hyperparameter (one value or a list, as the grid's own text says).
const MAX_DEPTH = 'Deepest level a tree may grow to, from 1 to 64, or null for no limit; default null.';
const leafText = (rows: string) => `Fewest ${rows} a leaf may hold, at least 1; default ${DEFAULT_MIN_LEAF}.`;

// Defaults are the engine's own (models/defaults.ts says why each). `mtry: null` means one third of
// the predictors (after one-hot expansion), rounded down, at least 1; the value used is recorded per fit.
export const modelKinds: Record<string, ModelKindAdapter> = dictOf<ModelKindAdapter>({
  random_forest: {
    grid: {
      trees: { default: DEFAULT_TREES, schema: ref('gridOfTrees', `Number of trees in the forest, from 1 to 100000; default ${DEFAULT_TREES}.`) },
      max_depth: { default: null, schema: ref('gridOfDepth', MAX_DEPTH), limits: { low: 1 } },
      min_leaf: { default: DEFAULT_MIN_LEAF, schema: ref('gridOfLeaf', leafText('training rows (bootstrap draws)')), limits: { low: 1 } },
      mtry: {
        default: null,
        schema: ref(
          'gridOfMtry',
          'Predictors drawn as candidates at each split, counted after one-hot expansion: below 1 a fraction of them, 1 or more a whole count no larger than their number. Left out: a third of them, rounded down, at least 1.',
        ),
        limits: { low: 1 },
      },
      sample_fraction: {
        default: DEFAULT_SAMPLE_FRACTION,
        schema: ref('gridOfFraction', `Rows drawn for each tree as a fraction of the training rows, above 0 and at most 1; default ${DEFAULT_SAMPLE_FRACTION}.`),
        limits: { high: 1 },
      },
      replace: { default: DEFAULT_REPLACE, schema: booleanGrid(`Whether each tree draws its rows with replacement (a bootstrap); default ${DEFAULT_REPLACE}.`) },
    },
    baseline: null,
    explained: true,
    async fit(x, y, cell, opts) {
      const { fitForest } = await forestEngine();
      return forestFitted(await fitForest(x, y, { ...forestOptions(cell, opts), fitted: true }), cell, x);
    },
    async fitLoaded(x, y, cell, opts) {
      const { fitForest } = await forestEngine();
      // a fold's forest predicts other rows, so its out-of-bag rows need not be followed
      const forest = await fitForest(x, y, { ...forestOptions(cell, opts), outOfBag: false });
      const w = (await forestEngine()).forestWriter(forest);
      return { used: forestUsed(forest, cell), model: await loadedForest(forest, null), bytes: new BytesWriter(w.length, w.write) };
    },
    load: loadForest,
    blocks: {
      divide(cell, rows) {
        const trees = cell.trees as number;
        const perBlock = TREE_BLOCK;
        // rows drawn per tree, as the engine counts them
        const drawn = Math.max(1, Math.round((cell.sample_fraction as number) * rows));
        return { count: Math.ceil(trees / perBlock), unit: 'trees', perBlock, total: trees, work: drawn * perBlock };
      },
      async grow(x, y, cell, opts, first, end) {
        const { growForestBlocks, serializeBlocks } = await forestEngine();
        return serializeBlocks(await growForestBlocks(x, y, forestOptions(cell, opts), first, end), x.rows, x.columns.length);
      },
      async assemble(x, y, cell, opts, parts) {
        const { assembleForest, deserializeBlocks } = await forestEngine();
        return forestFitted(assembleForest(x, y, forestOptions(cell, opts), parts.flatMap(deserializeBlocks)), cell, x);
      },
    },
  },
  decision_tree: {
    grid: {
      max_depth: { default: null, schema: ref('gridOfDepth', MAX_DEPTH), limits: { low: 1 } },
      min_leaf: { default: DEFAULT_MIN_LEAF, schema: ref('gridOfLeaf', leafText('training rows')), limits: { low: 1 } },
    },
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
    load: loadForest,
  },
  linear: {
    grid: {},
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
    async load(bytes) {
      const model = deserializeLinear(bytes);
      return { predict: (x) => predictLinear(model, selectColumns(x, model.names)) };
    },
  },
  mean: {
    grid: {},
    baseline: 'constant',
    explained: false,
    async fit(_x, y) {
      return { bytes: serializeMean(fitMean(y)), used: {} };
    },
    async load(bytes) {
      const model = deserializeMean(bytes);
      return { predict: (x) => predictMean(model, x.rows) };
    },
  },
});

/** A forest or tree read from its bytes. */
async function loadForest(bytes: Uint8Array): Promise<LoadedModel> {
  const known = loadedForests.get(bytes);
  if (known) return known;
  const { deserializeForest } = await forestEngine();
  const loaded = loadedForest(deserializeForest(bytes), bytes);
  loadedForests.set(bytes, loaded);
  return loaded;
}

/**
 * Forests read from bytes, by those bytes: the score and explain steps read the same fit output, so
 * they share one reading (a forest's rebuilt right children are 4 bytes a node, 200 MB at a million
 * rows). Bytes are read-only step outputs, so equal bytes give an equal forest; the entry goes with them.
 */
const loadedForests = new WeakMap<Uint8Array, Promise<LoadedModel>>();

/**
 * A forest or tree as a loaded model; with its bytes, which the helper threads of prediction and
 * permutation importance read it from, else on this thread alone.
 */
async function loadedForest(forest: Forest, bytes: Uint8Array | null): Promise<LoadedModel> {
  const { predictForest } = await forestEngine();
  const { permutedOnThreads } = await import('../models/permute-pool.js');
  const { predictOnThreads } = await import('../models/predict-pool.js');
  const { forestPartialDependence } = await import('../models/partial-dependence.js');
  return {
    predict: (x) => predictForest(forest, x),
    ...(bytes && {
      predictOnThreads: (x: Matrix, threads: number) => predictOnThreads(forest, bytes, x, threads),
      permuted: (x: Matrix, jobs: { columns: number[] }[], orders: ArrayLike<number>[][], threads: number) => permutedOnThreads(forest, bytes, x, jobs, orders, threads),
    }),
    partialDependence: (columns, points) => forestPartialDependence(forest, columns, points),
  };
}

/** The forest engine's options for a random_forest grid cell. */
function forestOptions(cell: Cell, opts: FitOptions): ForestOptions {
  return {
    trees: cell.trees as number,
    maxDepth: cell.max_depth as number | null,
    minLeaf: cell.min_leaf as number,
    // the engine alone resolves null and fractions, so the count recorded is the count used
    mtry: cell.mtry as number | null,
    sampleFraction: cell.sample_fraction as number,
    replace: cell.replace as boolean,
    seed: opts.seed,
    workers: opts.workers,
  };
}

/**
 * A fitted forest as the runner keeps it: its bytes (as a writer), the hyperparameters used, its
 * OOB R² and its predictions of the training rows `x` (gathered by the engine, or else predicted:
 * a forest assembled from blocks grown apart).
 */
async function forestFitted(forest: Forest, cell: Cell, x: Matrix): Promise<FittedModel> {
  const { oob, forestWriter, predictForest } = await forestEngine();
  const w = forestWriter(forest);
  return {
    bytes: new BytesWriter(w.length, w.write),
    used: forestUsed(forest, cell),
    oobR2: oob(forest).r2,
    trainingPredictions: forest.fitted ?? predictForest(forest, x),
  };
}

/** The hyperparameters a forest was fitted with: the cell, with mtry as the count the engine resolved. */
function forestUsed(forest: Forest, cell: Cell): Record<string, unknown> {
  return { ...cell, mtry: forest.options.mtry };
}

/** A model of the recipe, fitted and applied through its kind's adapter, with engine errors as messages. */
export interface ModelEngine {
  fit(x: Matrix, y: Float64Array, cell: Cell, opts: FitOptions, where: string): Promise<FittedModel>;
  /**
   * A fit that predicts at once (a fold): kept in memory where the kind can
   * (ModelKindAdapter.fitLoaded), else fitted and read back from its bytes; with its bytes, as a
   * writer where the kind has one, for an output that keeps them.
   */
  fitToPredict(
    x: Matrix,
    y: Float64Array,
    cell: Cell,
    opts: FitOptions,
    where: string,
  ): Promise<{ used: Record<string, unknown>; bytes: Bytes; predict(x: Matrix, where: string): Promise<Float64Array> }>;
  predict(bytes: Uint8Array, x: Matrix, where: string): Promise<Float64Array>;
  /** The model read once; its predictions go through the same boundary, with `where`. */
  load(
    bytes: Uint8Array,
    where: string,
  ): Promise<{
    /** Predictions, on up to `threads` threads (default 1) where the kind can spread them. */
    predict(x: Matrix, where: string, threads?: number): Promise<Float64Array>;
    permuted(x: Matrix, jobs: { columns: number[] }[], orders: ArrayLike<number>[][], threads: number, where: string): Promise<Float64Array[][]>;
    /** Present when the kind has its own (see LoadedModel.partialDependence). */
    partialDependence?(columns: number[], points: ArrayLike<number>[], where: string): Promise<Float64Array>;
  }>;
  /** Present for kinds whose fit divides into blocks (see ModelBlocks), with the same `where`. */
  blocks?: {
    divide: ModelBlocks['divide'];
    grow(x: Matrix, y: Float64Array, cell: Cell, opts: FitOptions, first: number, end: number, where: string): Promise<Uint8Array>;
    assemble(x: Matrix, y: Float64Array, cell: Cell, opts: FitOptions, parts: Uint8Array[], where: string): Promise<FittedModel>;
  };
}

/**
 * The one boundary between steps and engines: the engines' own input errors (which know nothing of
 * recipes) become a message naming the recipe's model and where it was being fitted or applied;
 * anything else is a real bug and passes through.
 *
 * Example: `await engineFor('random_forest', 'forest').fit(x, y, cell, opts, 'final fit on all training rows')`
 */
export function engineFor(kind: string, model: string): ModelEngine {
  const adapter = modelKinds[kind];
  const guarded = async <T>(where: string, call: () => Promise<T>): Promise<T> => {
    try {
      return await call();
    } catch (e) {
      if (e instanceof EngineInputError || e instanceof LinearModelError) throw new DendrologError(messages.modelEngineFailed(model, where, e.message), 1);
      throw e;
    }
  };
  const blocks = adapter.blocks;
  return {
    fit: (x, y, cell, opts, where) => guarded(where, () => adapter.fit(x, y, cell, opts)),
    async fitToPredict(x, y, cell, opts, where) {
      const { used, model, bytes } = await guarded(where, async () => {
        if (adapter.fitLoaded) return adapter.fitLoaded(x, y, cell, opts);
        const fitted = await adapter.fit(x, y, cell, opts);
        const made = bytesOf(fitted.bytes);
        return { used: fitted.used, model: await adapter.load(made), bytes: made };
      });
      return { used, bytes, predict: (rows, at) => guarded(at, async () => model.predict(rows)) };
    },
    predict: (bytes, x, where) => guarded(where, async () => (await adapter.load(bytes)).predict(x)),
    async load(bytes, where) {
      const model = await guarded(where, () => adapter.load(bytes));
      return {
        predict: (x, at, threads = 1) => guarded(at, async () => (threads > 1 && model.predictOnThreads ? model.predictOnThreads(x, threads) : model.predict(x))),
        permuted: (x, jobs, orders, threads, at) => guarded(at, async () => (model.permuted ?? permutedByCopy(model))(x, jobs, orders, threads)),
        ...(model.partialDependence && {
          partialDependence: (columns: number[], points: ArrayLike<number>[], at: string) =>
            guarded(at, async () => (model.partialDependence as NonNullable<LoadedModel['partialDependence']>)(columns, points)),
        }),
      };
    },
    ...(blocks && {
      blocks: {
        divide: (cell, rows) => blocks.divide(cell, rows),
        grow: (x, y, cell, opts, first, end, where) => guarded(where, () => blocks.grow(x, y, cell, opts, first, end)),
        assemble: (x, y, cell, opts, parts, where) => guarded(where, () => blocks.assemble(x, y, cell, opts, parts)),
      },
    }),
  };
}

/**
 * A kind's grid with every hyperparameter the recipe leaves out at its default, as a one-value list.
 *
 * Example: `gridWithDefaults('decision_tree', {max_depth: [4, 8]})` is `{max_depth: [4, 8], min_leaf: [3]}`.
 */
export function gridWithDefaults(kind: string, given: Record<string, GridValue | GridValue[]>): Record<string, GridValue[]> {
  const grid: Record<string, GridValue[]> = {};
  for (const [param, spec] of Object.entries(modelKinds[kind].grid)) {
    const v = Object.hasOwn(given, param) ? given[param] : undefined;
    grid[param] = v === undefined ? [spec.default] : Array.isArray(v) ? [...v] : [v];
  }
  return grid;
}

/**
 * The recipe schema's `model` definition: one branch per kind, allowing exactly its hyperparameters.
 *
 * Example: `modelSchema().properties.kind.enum` lists every kind of the registry.
 */
export function modelSchema(): Record<string, unknown> {
  const kindText =
    'The kind of model to fit. linear (least squares with an intercept) and mean (the mean of the training rows) are baselines: the report gives each model\'s skill against them.';
  const gridText =
    'Values to try for each hyperparameter, as one value or a list; every combination is cross-validated and the best by evaluation.choose_by is kept. A hyperparameter left out takes its default.';
  return {
    type: 'object',
    required: ['kind'],
    properties: { kind: { enum: Object.keys(modelKinds), description: kindText } },
    allOf: Object.entries(modelKinds).map(([kind, adapter]) => {
      const params = Object.entries(adapter.grid);
      const grid = {
        type: 'object',
        additionalProperties: false,
        description: gridText,
        properties: Object.fromEntries(params.map(([name, p]) => [name, p.schema])),
      };
      // kind is checked above; here it is only allowed, with the same text for editors
      const kindAllowed = { description: kindText };
      return {
        if: { properties: { kind: { const: kind } } },
        then: { additionalProperties: false, properties: params.length ? { kind: kindAllowed, grid } : { kind: kindAllowed } },
      };
    }),
  };
}

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

/** Permuted predictions the plain way, on this thread: each order's columns copied, then predicted. */
export function permutedByCopy(model: LoadedModel): NonNullable<LoadedModel['permuted']> {
  return async (x, jobs, orders) =>
    jobs.map(({ columns }, j) =>
      orders[j].map((order) => {
        const moved = x.columns.slice();
        for (const c of columns) {
          const src = x.columns[c];
          const out = new Float64Array(x.rows);
          for (let i = 0; i < x.rows; i++) out[i] = src[order[i]];
          moved[c] = out;
        }
        return model.predict({ ...x, columns: moved });
      }),
    );
}
