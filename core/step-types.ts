import type { Frame } from './frame.js';
import type { ColumnType } from './recipe-types.js';
import { generator, seedString, unitDraw } from './rng.js';
import { sha256 } from './hash.js';

/** How a step's output becomes bytes for the cache and back ('bytes': a Uint8Array kept as it is). */
export type OutputCodec = 'frame' | 'json' | 'bytes' | 'record';

/** A frame plus what the step has to say about it (rows in and out, reasons). */
export interface FrameOutput {
  frame: Frame;
  notes: StepNotes;
}

/** What a data step reports for the cleaning table of the report. */
export interface StepNotes {
  rowsIn: number;
  rowsOut: number;
  /** Why rows left or values changed, in plain words. */
  detail: string;
  /** Values changed in place (for example sentinels replaced), by column. */
  changed?: Record<string, number>;
  /** Extra facts for the report, such as per-column profiles of a source. */
  extra?: unknown;
}

/** A warning: data, merged by code and message, counted. */
export interface Warning {
  code: string;
  message: string;
  count: number;
}

/** What a step may use besides its inputs and params. Never module-level state. */
export interface StepContext {
  /** Key of the step instance being run. */
  key: string;
  /** A seeded generator for one purpose, independent of execution order: uniform in [0, 1). */
  rng(purpose: string, index?: number): () => number;
  /** A seed string for engines that derive their own generators. */
  seedFor(purpose: string, index?: number): string;
  /**
   * A uniform [0, 1) draw for one unit (a group, a row) from the master seed, the purpose and the
   * unit's identity alone, not the step's inputs: splits use it so that a unit stays on its side
   * when other values, other units or the file's layout change.
   */
  unitDraw(purpose: string, unit: string): number;
  warn(code: string, message: string): void;
  /** Threads a step may use (the forest engine grows trees on them). */
  workers: number;
  /** Things outside the key: absolute paths, positions for messages. */
  locator: Record<string, string>;
  /** Reports the fraction done of a long step, for the progress bar. */
  progress(fraction: number): void;
}

/**
 * A step kind: pure `(inputs, params, ctx) -> output`. Adding a kind is one file in steps/ and
 * one line in steps/index.ts.
 */
export interface StepDefinition<P = unknown, O = unknown> {
  kind: string;
  /** Bump when the step's behaviour changes, so cached outputs are not reused. */
  version: number;
  codec: OutputCodec;
  /** Whether the step draws random numbers: then the master seed is part of its key. */
  usesSeed?: boolean;
  /**
   * The inputs (by position) whose random draws this step's draws follow; default all. A step
   * whose other inputs only say what to compute (the final fit's chosen cell) names that in its own
   * draw purpose instead, so adding an unchosen grid value leaves its draws, and its output, alone.
   */
  seedInputs?: number[];
  /**
   * Parameters left out of the seed key because the step puts them in its own draw purpose (a fit's
   * `cell`, present only for a grid of one cell): a grid grown from one cell to two then leaves the
   * chosen cell's draws alone, as seedInputs does for the choice.
   */
  seedOmits?: string[];
  /** Whether neighbouring instances may run side by side on worker threads (heavy, independent steps). */
  parallel?: boolean;
  run(inputs: unknown[], params: P, ctx: StepContext): O | Promise<O>;
  /** For kinds a recipe names: where and how (schema, defaults, columns, checks, predict). */
  recipe?: RecipeContract<P>;
  /** A few words on the output for the progress line, such as "3,120 rows". */
  summary?(output: O): string;
  /**
   * For steps whose work divides into parts that can run apart (a forest's blocks of trees): the
   * Slurm executor may run ranges of parts as separate tasks and merge them. Locally, `run` does it
   * all; either way the output is the same, bit for bit.
   */
  parts?: StepParts<P, O>;
}

/** How a step's work divides into parts, given its inputs (see StepParts.divide). */
export interface PartDivision {
  /** Parts the instance's work has; 1 when it does not divide. */
  count: number;
  /** What a part is made of, in the plural (`trees`), and how many of them a part holds (the last may hold fewer). */
  unit: string;
  perPart: number;
  /** How many of them in all. */
  total: number;
  /** The work of one part in the engine's own measure (for a forest: rows drawn × trees), to size tasks by. */
  work: number;
}

/** A step whose work divides into parts run apart and merged: merge(all parts) equals run, bit for bit. */
export interface StepParts<P, O> {
  divide(inputs: unknown[], params: P): PartDivision;
  /** Runs parts first..end-1 of the work; the bytes are for `merge`. */
  run(inputs: unknown[], params: P, ctx: StepContext, first: number, end: number): Promise<Uint8Array>;
  /** The step's output from the bytes of every range of parts, in order. */
  merge(inputs: unknown[], params: P, ctx: StepContext, parts: Uint8Array[]): Promise<O>;
}

/** One planned run of a step: pure data, so another process could run it from this alone. */
export interface StepInstance {
  /** Readable, unique label, such as "clean[1] drop_missing". */
  id: string;
  kind: string;
  params: unknown;
  /** Ids of the instances whose outputs are this one's inputs, in order. */
  inputs: string[];
  /** Not part of the key: absolute file paths, recipe positions. */
  locator: Record<string, string>;
  /** SHA-256 of kind, version, params, seed, software fingerprint and the inputs' keys: the cache address. */
  key: string;
  /**
   * What random generators are seeded from: in the plan, a hash of kind, version, params and seed;
   * the executor then adds the output hashes of the inputs the draws follow (see seededBy), so draws
   * follow the parsed data, not file bytes, and not the software.
   */
  seedKey: string;
  /** The recipe's master seed, which the generators start from together with seedKey. */
  seed: number;
}

/**
 * The instance as it runs: its seedKey joined with the output hashes (SHA-256 of the encoded
 * outputs) of the inputs its draws follow (the step's seedInputs, else all), so that equal data
 * give equal draws however the files holding them were written.
 *
 * Example: `seededBy(step, seedInputs, (id) => records.get(id).output)`
 */
export function seededBy<T extends Pick<StepInstance, 'seedKey' | 'inputs'>>(step: T, seedInputs: number[] | undefined, outputHash: (id: string) => string): T {
  const inputs = seedInputs ? seedInputs.map((k) => step.inputs[k]) : step.inputs;
  return { ...step, seedKey: sha256(`${step.seedKey}|${inputs.map(outputHash).join('|')}`) };
}

/** A place in a step's value in the recipe, relative to it (e.g. `['columns', 0]`); `[]` is the value. */
export type StepPath = (string | number)[];

/** A column a step reads, and where the recipe names it. */
export interface ColumnRead {
  column: string;
  at: StepPath;
}

/** A column a step adds, where the recipe names it, and the columns its value is computed from. */
export interface ColumnWrite {
  column: string;
  type: ColumnType;
  at: StepPath;
  from: string[];
}

/**
 * The reads of a step that lists its columns under `columns`, each at its place in the list.
 *
 * Example: `listedColumns(['tp', 'tn'])` is `[{column: 'tp', at: ['columns', 0]}, {column: 'tn', at: ['columns', 1]}]`.
 */
export function listedColumns(columns: string[]): ColumnRead[] {
  return columns.map((column, k) => ({ column, at: ['columns', k] }));
}

/**
 * How a step kind appears in a recipe, so that the schema, normalization, meaning checks, planning
 * and predict all follow from its definition. Adding a kind is its file and a registry line.
 */
export interface RecipeContract<P> {
  /** The recipe list it is written in. */
  section: 'clean' | 'features';
  /** JSON schema of the value under the step's key; `#/definitions/...` refers to the recipe schema's. */
  schema: Record<string, unknown>;
  /** Parameters from the schema-valid value, with every default written out. */
  normalize(value: unknown): P;
  /** The value a recipe would write for these parameters (a stored recipe is read back from it). */
  shape(params: P): unknown;
  /** Columns it reads, each where the recipe names it; they must exist at that point of the pipeline. */
  reads(params: P): ColumnRead[];
  /** Columns it adds to the table (all later steps may read them), each with the columns it is computed from. */
  writes?(params: P): ColumnWrite[];
  /** Text or category columns it turns into numbers for the models, so they may be predictors. */
  encodes?(params: P): string[];
  /** The step in a few words for the report, such as `tp, srp by median`. */
  describe?(params: P): string;
  /** Expressions it evaluates, where the recipe holds each; they are checked as row-wise expressions. */
  expressions?(params: P): { expr: string; at: StepPath; column?: string }[];
  /** What the schema cannot see: value ranges, column types at that point (`label` names the step). */
  check?(params: P, types: ReadonlyMap<string, ColumnType>, label: string): { at: StepPath; message: string }[];
  /**
   * For predict on a file without some columns (the target): the step without them, or null when
   * nothing of it is left to apply. Kinds without it apply unchanged.
   */
  without?(params: P, absent: ReadonlySet<string>): P | null;
  /** Why the step removed one row, in words about that row, for predict's per-row reasons (kinds that remove rows). */
  rowReason?(params: P, frame: Frame, row: number): string;
}

/**
 * The one way a step's context is made, by the executor, a worker thread, predict and the tests
 * alike: its generators follow from the instance's own seed and seedKey, so the same instance draws
 * the same numbers wherever it runs.
 *
 * Example: `makeContext({key, seed: 7, seedKey, locator: {}}, {warn: log.add.bind(log), workers: 1})`
 */
export function makeContext(
  instance: Pick<StepInstance, 'key' | 'seed' | 'seedKey' | 'locator'>,
  hooks: { warn(code: string, message: string): void; workers: number; progress?(fraction: number): void },
): StepContext {
  return {
    key: instance.key,
    rng: (purpose, index) => generator(instance.seed, instance.seedKey, purpose, index),
    seedFor: (purpose, index) => seedString(instance.seed, instance.seedKey, purpose, index),
    unitDraw: (purpose, unit) => unitDraw(instance.seed, purpose, unit),
    warn: hooks.warn,
    workers: hooks.workers,
    locator: instance.locator,
    progress: hooks.progress ?? (() => {}),
  };
}
